//! The native half of the Python package `copse_forest`: the engine and the data layer
//! behind a few plain functions and one model class. The Python half
//! (`python/copse_forest/`) turns data frames, Arrow tables and arrays into named
//! columns, gives the public names and docstrings, and shapes the results into
//! DataFrames; everything that decides a result lives in the library crates, so the
//! package and the `copse` command give the same models, scores and reports.
//!
//! The pieces, one concept per file:
//! - `errors`: copse's typed errors raised as the package's Python exceptions;
//! - `columns`: named columns from Python, as a [`copse_data::frame::Frame`];
//! - `pool`: copse's own worker threads, with the interpreter let go while they run
//!   and Ctrl-C honoured during training;
//! - `model`: the trained model (`NativeModel`): file bytes, reports, properties;
//! - `training`: `train` on named columns, and `train_part` for trees a..b;
//! - `parts`: parts of a forest (`NativePart`: file bytes) and their merge;
//! - `scoring`: scores from a matrix (no copy when the layout allows) or from columns,
//!   and outcome ranges (`score(interval=...)`);
//! - `judging`: `evaluate` and held-out `importance` on labelled columns.
#![forbid(unsafe_code)]
#![deny(missing_docs)]

mod columns;
mod errors;
mod judging;
mod model;
mod parts;
mod pool;
mod pooling;
mod scoring;
mod training;

use pyo3::prelude::*;

/// The native module `copse_forest._native` (used through `copse_forest`).
#[pymodule]
fn _native(m: &Bound<'_, PyModule>) -> PyResult<()> {
    m.add_class::<model::NativeModel>()?;
    m.add_class::<parts::NativePart>()?;
    m.add_function(wrap_pyfunction!(training::train, m)?)?;
    m.add_function(wrap_pyfunction!(training::train_part, m)?)?;
    m.add_function(wrap_pyfunction!(parts::merge, m)?)?;
    m.add_function(wrap_pyfunction!(pooling::pool_models, m)?)?;
    m.add_function(wrap_pyfunction!(parts::load_part, m)?)?;
    m.add_function(wrap_pyfunction!(parts::part_from_bytes, m)?)?;
    m.add_function(wrap_pyfunction!(parts::part_of_model, m)?)?;
    m.add_function(wrap_pyfunction!(model::load, m)?)?;
    m.add_function(wrap_pyfunction!(model::from_bytes, m)?)?;
    m.add_function(wrap_pyfunction!(scoring::score_matrix, m)?)?;
    m.add_function(wrap_pyfunction!(scoring::score_columns, m)?)?;
    m.add_function(wrap_pyfunction!(scoring::outcome_ranges, m)?)?;
    m.add_function(wrap_pyfunction!(judging::evaluate_json, m)?)?;
    m.add_function(wrap_pyfunction!(judging::importance_json, m)?)?;
    m.add("COPSE_VERSION", env!("CARGO_PKG_VERSION"))?;
    Ok(())
}
