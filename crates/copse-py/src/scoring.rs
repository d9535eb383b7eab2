//! Scores of new rows: from a matrix of numbers whose columns are the model's inputs
//! in order (read where it lies, without a copy, whatever its memory layout), or from
//! named columns read as the command reads a file to score (columns matched by name,
//! the model's missing tokens, categories turned into the model's codes, unseen ones
//! scored as missing and counted in a warning).
use crate::columns::{frame, PyColumn};
use crate::errors;
use crate::model::NativeModel;
use crate::pool;
use copse_cli::commands::score::unfamiliar;
use copse_data::{Missing, RowEncoder};
use copse_forest::{predicted_class, Forest, Task, Unfamiliar};
use ndarray::{Array1, Array2, ArrayView2};
use numpy::{IntoPyArray, PyArray1, PyArray2, PyReadonlyArray2};
use pyo3::prelude::*;

/// Scores as they go back to Python: the outputs (class probabilities, one column
/// per class, or one column of values); for classes, each row's predicted class (its
/// index in the model's classes); and whether each row holds a value outside what the
/// model was trained on.
type Scored<'py> = (
    Bound<'py, PyArray2<f64>>,
    Option<Bound<'py, PyArray1<i64>>>,
    Bound<'py, PyArray1<bool>>,
);

/// The scores of some rows, with the warning about rows outside the training data.
struct Scores {
    out: Array2<f64>,
    codes: Option<Array1<i64>>,
    unfamiliar: Array1<bool>,
    warning: Option<String>,
}

/// Scores the rows of `x`: outputs, predicted classes, and the rows that rest on no
/// training data (a value outside an input's training range, or a category the model
/// never saw: `unseen_rows`, of `unseen_cells` cells), with the command's warning.
fn score_view(
    forest: &Forest,
    x: ArrayView2<'_, f64>,
    unseen_rows: Option<&[bool]>,
    unseen_cells: u64,
) -> copse_forest::Result<Scores> {
    let out = forest.predict(x)?;
    let codes = (forest.task() == Task::Classify).then(|| {
        out.rows()
            .into_iter()
            .map(|r| r.as_slice().map_or(0, predicted_class) as i64)
            .collect::<Array1<i64>>()
    });
    let mut ranges = Unfamiliar::of(forest);
    let mut flags = vec![false; x.nrows()];
    ranges.check_block(x, &mut flags);
    if let Some(unseen) = unseen_rows {
        flags.iter_mut().zip(unseen).for_each(|(f, &u)| *f |= u);
    }
    let rows = flags.iter().filter(|&&f| f).count() as u64;
    let warning = unfamiliar::warning(forest, &ranges, unseen_cells, rows, x.nrows() as u64);
    Ok(Scores {
        out,
        codes,
        unfamiliar: Array1::from(flags),
        warning,
    })
}

fn to_python(py: Python<'_>, s: Scores) -> (Scored<'_>, Option<String>) {
    (
        (
            s.out.into_pyarray(py),
            s.codes.map(|c| c.into_pyarray(py)),
            s.unfamiliar.into_pyarray(py),
        ),
        s.warning,
    )
}

/// Scores the rows of `x`, whose columns are the model's inputs in order (numeric
/// inputs only; NaN is missing); returns the scores and the warnings. `None` when a
/// cell is infinite: the caller then scores the rows as named columns, which refuses
/// it with the command's message.
#[pyfunction]
#[pyo3(signature = (model, x, threads=None))]
pub fn score_matrix<'py>(
    model: &Bound<'py, NativeModel>,
    py: Python<'py>,
    x: PyReadonlyArray2<'py, f64>,
    threads: Option<usize>,
) -> PyResult<Option<(Scored<'py>, Vec<String>)>> {
    let pool = pool::pool(threads)?;
    let view = x.as_array();
    let forest = &*model.get().forest;
    let scored = pool::run(py, &pool, || {
        if view.iter().any(|v| v.is_infinite()) {
            return Ok(None);
        }
        score_view(forest, view, None, 0).map(Some)
    })
    .map_err(|e| errors::forest(&e))?;
    Ok(scored.map(|s| {
        let (scored, warning) = to_python(py, s);
        (scored, warning.into_iter().collect())
    }))
}

/// Scores the rows of the columns `columns` named `names` (the whole called
/// `source`). Returns the scores and the warnings (categories never seen, rows
/// outside the training data).
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
    let rows = py
        .detach(|| encode_rows(forest, frame))
        .map_err(|e| errors::data(&e))?;
    let scored = pool::run(py, &pool, || {
        score_view(forest, rows.x.view(), Some(&rows.unseen), rows.unseen_cells)
    })
    .map_err(|e| errors::forest(&e))?;
    let (scored, unfamiliar) = to_python(py, scored);
    let warnings = rows.warning.into_iter().chain(unfamiliar).collect();
    Ok((scored, warnings))
}

/// Rows read for a model from named columns.
struct Encoded {
    /// Rows by the model's inputs.
    x: Array2<f64>,
    /// Whether each row holds a category the model never saw.
    unseen: Vec<bool>,
    /// Cells holding such categories.
    unseen_cells: u64,
    /// The encoder's warning naming them.
    warning: Option<String>,
}

/// The rows of `frame` as the model's inputs, with the categories the model never saw.
fn encode_rows(forest: &Forest, frame: copse_data::frame::Frame) -> copse_data::Result<Encoded> {
    let rows = frame.rows();
    let mut input = frame.into_input()?;
    let mut enc = RowEncoder::new(&input, forest, Missing::of_model(forest), false)?;
    let p = forest.n_features();
    let mut x = Array2::<f64>::zeros((rows, p));
    let mut unseen = vec![false; rows];
    let mut record = csv::StringRecord::new();
    let mut i = 0;
    let mut cells = 0u64;
    while input.read(&mut record)? {
        let mut row = x.row_mut(i);
        let out = row
            .as_slice_mut()
            .expect("rows of a standard-layout array are contiguous");
        enc.encode(&record, out)?;
        let now: u64 = enc.unseen_counts().iter().sum();
        unseen[i] = now > cells;
        cells = now;
        i += 1;
    }
    Ok(Encoded {
        x,
        unseen,
        unseen_cells: cells,
        warning: enc.unseen_warning(),
    })
}

/// The outcome ranges of the rows of the columns `columns` named `names` (the whole
/// called `source`) that cover a share `coverage` of outcomes, as `copse score
/// --interval` gives them: one row per row, the low end then the high end. Needs a
/// model of numbers trained with its leaf rows kept.
///
/// # Errors
/// `UsageError` for a class model, a model without its leaf rows or a coverage outside
/// (0, 1); `BadInputError` for rows that cannot be read.
#[pyfunction]
#[pyo3(signature = (model, source, names, columns, coverage, threads=None))]
pub fn outcome_ranges<'py>(
    model: &Bound<'py, NativeModel>,
    py: Python<'py>,
    source: String,
    names: Vec<String>,
    columns: Vec<PyColumn<'py>>,
    coverage: f64,
    threads: Option<usize>,
) -> PyResult<Bound<'py, PyArray2<f64>>> {
    let forest = &*model.get().forest;
    if forest.task() == Task::Classify {
        return Err(errors::raise(
            errors::Kind::Usage,
            format!(
                "interval= gives ranges of a numeric target, but this model predicts classes of \
                 '{}'; its class probabilities already say how sure it is: drop interval=",
                forest.card().target
            ),
        ));
    }
    if forest.leaf_rows().is_none() {
        return Err(errors::raise(
            errors::Kind::Usage,
            "the model did not keep the rows of its leaves, which interval= needs; train it \
             again with keep_leaf_rows=True",
        ));
    }
    if !(coverage > 0.0 && coverage < 1.0) {
        return Err(errors::raise(
            errors::Kind::Usage,
            format!("interval={coverage} is not a coverage strictly between 0 and 1; give one such as 0.9"),
        ));
    }
    let pool = pool::pool(threads)?;
    let frame = frame(&source, names, columns)?;
    let rows = py
        .detach(|| encode_rows(forest, frame))
        .map_err(|e| errors::data(&e))?;
    let ranges = pool::run(py, &pool, || {
        forest.outcome_intervals(rows.x.view(), coverage)
    })
    .map_err(|e| errors::forest(&e))?;
    Ok(ranges.into_pyarray(py))
}
