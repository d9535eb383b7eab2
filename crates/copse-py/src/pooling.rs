//! Models each trained on one partition of the rows pooled from Python, with the
//! words of the command (`copse pool`): one model scoring by the mean over all their
//! trees, with each partition's own out-of-bag figures and no pooled one.
use crate::errors;
use crate::model::NativeModel;
use copse_forest::Forest;
use pyo3::prelude::*;

/// Pools `models`, named `names` in messages and in the pooled record (one name per
/// model, in the same order); trees come in that order.
///
/// # Errors
/// `UsageError` for models that cannot be pooled (naming what differs).
#[pyfunction]
pub fn pool_models(
    py: Python<'_>,
    models: Vec<PyRef<'_, NativeModel>>,
    names: Vec<String>,
) -> PyResult<NativeModel> {
    let forests: Vec<std::sync::Arc<Forest>> = models.iter().map(|m| m.forest.clone()).collect();
    let pooled = py.detach(move || {
        let named: Vec<(&str, &Forest)> = names
            .iter()
            .map(String::as_str)
            .zip(forests.iter().map(|f| f.as_ref()))
            .collect();
        Forest::pool(&named)
    });
    pooled.map(NativeModel::new).map_err(|e| errors::forest(&e))
}
