//! `evaluate` and held-out `importance` on labelled named columns: read as the command
//! reads a labelled file for a model, measured by the same functions as
//! `copse evaluate` and `copse importance`, and reported with their JSON keys.
use crate::columns::{frame, PyColumn};
use crate::errors;
use crate::model::NativeModel;
use crate::pool;
use copse_cli::commands::evaluate::{measure, Measured};
use copse_cli::commands::importance::held_out_context;
use copse_cli::decision_args::DecisionArgs;
use copse_cli::report::evaluate::EvaluateView;
use copse_cli::report::importance::{HeldOutRows, ImportanceReport};
use copse_data::{read_labelled, Labelled, Missing};
use copse_forest::Forest;
use pyo3::prelude::*;
use std::path::Path;

/// The labelled rows of `frame` read for `forest`, and the warning about categories
/// it never saw.
fn labelled(forest: &Forest, frame: copse_data::frame::Frame) -> PyResult<Labelled> {
    let input = frame.into_input().map_err(|e| errors::data(&e))?;
    read_labelled(input, forest, Missing::of_model(forest)).map_err(|e| errors::data(&e))
}

/// The `copse evaluate --json` report on the labelled columns `columns` named
/// `names` (the whole called `source`; the model file called `model_file`), and
/// the warnings (categories never seen, rows that were training rows).
#[pyfunction]
#[pyo3(signature = (model, model_file, source, names, columns, threads=None))]
pub fn evaluate_json(
    model: &Bound<'_, NativeModel>,
    py: Python<'_>,
    model_file: String,
    source: String,
    names: Vec<String>,
    columns: Vec<PyColumn<'_>>,
    threads: Option<usize>,
) -> PyResult<(String, Vec<String>)> {
    let pool = pool::pool(threads)?;
    let frame = frame(&source, names, columns)?;
    let forest = &*model.get().forest;
    let data = py.detach(|| labelled(forest, frame))?;
    let decision = DecisionArgs::default();
    let measured = pool::run(py, &pool, || {
        measure(forest, &data, &source, None, &decision).map_err(|e| e.message().to_string())
    });
    let Measured {
        eval,
        judged,
        unseen,
    } = measured.map_err(|m| errors::raise(errors::Kind::BadInput, m))?;
    let mut warnings: Vec<String> = data.encoder.unseen_warning().into_iter().collect();
    if let Some(w) = judged
        .notices
        .training_rows
        .as_ref()
        .and_then(|t| t.warning.clone())
    {
        warnings.push(w);
    }
    let path = Path::new(&model_file);
    let view = EvaluateView::new(
        forest,
        path,
        &eval,
        &source,
        data.rows,
        unseen,
        Some(&judged),
    );
    let json = copse_cli::report::json_text(&view).map_err(|e| errors::command(&e))?;
    Ok((json, warnings))
}

/// The `copse importance --json` report on the labelled columns `columns` named
/// `names` (as for `evaluate_json`), with `repeats` shuffles per input drawn from
/// `seed`, and the warnings.
#[pyfunction]
#[pyo3(signature = (model, model_file, source, names, columns, repeats, seed, threads=None))]
#[allow(clippy::too_many_arguments)]
pub fn importance_json(
    model: &Bound<'_, NativeModel>,
    py: Python<'_>,
    model_file: String,
    source: String,
    names: Vec<String>,
    columns: Vec<PyColumn<'_>>,
    repeats: u32,
    seed: u64,
    threads: Option<usize>,
) -> PyResult<(String, Vec<String>)> {
    let pool = pool::pool(threads)?;
    let frame = frame(&source, names, columns)?;
    let forest = &*model.get().forest;
    let data = py.detach(|| labelled(forest, frame))?;
    let imp = pool::run(py, &pool, || {
        forest.permutation_importance(data.x.view(), &data.outcome, repeats as usize, seed)
    })
    .map_err(|e| errors::forest(&e))?;
    let (baseline, training_rows) = pool::run(py, &pool, || held_out_context(forest, &data));
    // Beside the permutation ranking, as the command shows it: how far each input moves
    // a prediction (a model trained with class balancing has none).
    let contributions = pool::run(py, &pool, || {
        match forest.contribution_ranking(data.x.view(), copse_forest::RANKING_ROWS) {
            Ok(c) => Ok(Some(c)),
            Err(e) if e.kind() == copse_forest::ErrorKind::InvalidSetting => Ok(None),
            Err(e) => Err(e),
        }
    })
    .map_err(|e| errors::forest(&e))?;
    let mut warnings: Vec<String> = data.encoder.unseen_warning().into_iter().collect();
    warnings.extend(training_rows.warning.clone());
    let view = ImportanceReport::new(
        forest,
        Path::new(&model_file),
        &imp,
        HeldOutRows {
            source: &source,
            rows_read: data.rows,
            repeats,
            baseline,
            contributions: contributions.as_ref(),
        },
        training_rows,
    );
    let json = copse_cli::report::json_text(&view).map_err(|e| errors::command(&e))?;
    Ok((json, warnings))
}
