//! Scores of new rows: from a matrix of numbers whose columns are the model's inputs
//! in order (read where it lies, without a copy, whatever its memory layout), or from
//! named columns read as the command reads a file to score (columns matched by name,
//! the model's missing tokens, categories turned into the model's codes, unseen ones
//! scored as missing and counted in a warning).
use crate::columns::{frame, PyColumn};
use crate::errors;
use crate::model::NativeModel;
use crate::pool;
use copse_data::{Missing, RowEncoder};
use copse_forest::{predicted_class, Forest, Task};
use ndarray::{Array1, Array2, ArrayView2};
use numpy::{IntoPyArray, PyArray1, PyArray2, PyReadonlyArray2};
use pyo3::prelude::*;

/// Scores as they go back to Python: the outputs (class probabilities, one column
/// per class, or one column of values) and, for classes, each row's predicted class
/// (its index in the model's classes).
type Scored<'py> = (Bound<'py, PyArray2<f64>>, Option<Bound<'py, PyArray1<i64>>>);

/// The outputs of `x` and, for classes, the predicted class of each row.
pub fn score_view(
    forest: &Forest,
    x: ArrayView2<'_, f64>,
) -> copse_forest::Result<(Array2<f64>, Option<Array1<i64>>)> {
    let out = forest.predict(x)?;
    let codes = (forest.task() == Task::Classify).then(|| {
        out.rows()
            .into_iter()
            .map(|r| predicted_class(r.as_slice().unwrap_or(&r.to_vec())) as i64)
            .collect::<Array1<i64>>()
    });
    Ok((out, codes))
}

fn to_python<'py>(py: Python<'py>, scored: (Array2<f64>, Option<Array1<i64>>)) -> Scored<'py> {
    let (out, codes) = scored;
    (out.into_pyarray(py), codes.map(|c| c.into_pyarray(py)))
}

/// Scores the rows of `x`, whose columns are the model's inputs in order (numeric
/// inputs only; NaN is missing). `None` when a cell is infinite: the caller then
/// scores the rows as named columns, which refuses it with the command's message.
#[pyfunction]
#[pyo3(signature = (model, x, threads=None))]
pub fn score_matrix<'py>(
    model: &Bound<'py, NativeModel>,
    py: Python<'py>,
    x: PyReadonlyArray2<'py, f64>,
    threads: Option<usize>,
) -> PyResult<Option<Scored<'py>>> {
    let pool = pool::pool(threads)?;
    let view = x.as_array();
    let forest = &*model.get().forest;
    let scored = pool::run(py, &pool, || {
        if view.iter().any(|v| v.is_infinite()) {
            return Ok(None);
        }
        score_view(forest, view).map(Some)
    })
    .map_err(|e| errors::forest(&e))?;
    Ok(scored.map(|s| to_python(py, s)))
}

/// Scores the rows of the columns `columns` named `names` (the whole called
/// `source`). Returns the scores and the warnings (categories never seen).
#[pyfunction]
#[pyo3(signature = (model, source, names, columns, threads=None))]
pub fn score_columns<'py>(
    model: &Bound<'py, NativeModel>,
    py: Python<'py>,
    source: String,
    names: Vec<String>,
    columns: Vec<PyColumn<'py>>,
    threads: Option<usize>,
) -> PyResult<(Scored<'py>, Vec<String>)> {
    let pool = pool::pool(threads)?;
    let frame = frame(&source, names, columns)?;
    let forest = &*model.get().forest;
    let (x, warning) = py
        .detach(|| encode_rows(forest, frame))
        .map_err(|e| errors::data(&e))?;
    let scored =
        pool::run(py, &pool, || score_view(forest, x.view())).map_err(|e| errors::forest(&e))?;
    Ok((to_python(py, scored), warning.into_iter().collect()))
}

/// The rows of `frame` as the model's inputs, and the warning about categories the
/// model never saw.
fn encode_rows(
    forest: &Forest,
    frame: copse_data::frame::Frame,
) -> copse_data::Result<(Array2<f64>, Option<String>)> {
    let rows = frame.rows();
    let mut input = frame.into_input()?;
    let mut enc = RowEncoder::new(&input, forest, Missing::of_model(forest), false)?;
    let p = forest.n_features();
    let mut x = Array2::<f64>::zeros((rows, p));
    let mut record = csv::StringRecord::new();
    let mut i = 0;
    while input.read(&mut record)? {
        let mut row = x.row_mut(i);
        let out = row
            .as_slice_mut()
            .expect("rows of a standard-layout array are contiguous");
        enc.encode(&record, out)?;
        i += 1;
    }
    Ok((x, enc.unseen_warning()))
}
