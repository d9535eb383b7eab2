//! The trained model as Python holds it: the forest (shared, never changed), read
//! from and written to the model file's bytes (so a model saved here loads in the
//! command and the reverse, and pickling sends those bytes), and the reports about it
//! as JSON text with the command's keys.
use crate::errors::{self, Kind};
use crate::pool;
use copse_cli::report::inspect::InspectView;
use copse_forest::{FeatureKind, Forest, Task};
use pyo3::prelude::*;
use pyo3::types::PyBytes;
use std::path::Path;
use std::sync::Arc;

/// A trained forest (the Python class `copse_forest.Model` wraps it).
#[pyclass(frozen, module = "copse_forest._native")]
pub struct NativeModel {
    pub(crate) forest: Arc<Forest>,
}

impl NativeModel {
    /// Wraps `forest`.
    pub fn new(forest: Forest) -> Self {
        NativeModel {
            forest: Arc::new(forest),
        }
    }
}

/// Reads the model file at `path`.
///
/// # Errors
/// `DamagedModelError` for a file that is not a readable copse model; `BadInputError`
/// for a file that cannot be opened.
#[pyfunction]
pub fn load(py: Python<'_>, path: std::path::PathBuf) -> PyResult<NativeModel> {
    let forest = py
        .detach(|| Forest::load(&path))
        .map_err(|e| errors::forest(&e))?;
    Ok(NativeModel::new(forest))
}

/// Reads a model from the bytes of a model file; `name` names them in messages.
///
/// # Errors
/// `DamagedModelError` for bytes that are not a readable copse model.
#[pyfunction]
pub fn from_bytes(py: Python<'_>, data: &[u8], name: &str) -> PyResult<NativeModel> {
    let forest = py
        .detach(|| Forest::from_bytes(data, name))
        .map_err(|e| errors::forest(&e))?;
    Ok(NativeModel::new(forest))
}

#[pymethods]
impl NativeModel {
    /// The model file's bytes.
    fn to_bytes<'py>(&self, py: Python<'py>) -> PyResult<Bound<'py, PyBytes>> {
        let f = self.forest.clone();
        let bytes = py
            .detach(move || f.to_bytes())
            .map_err(|e| errors::forest(&e))?;
        Ok(PyBytes::new(py, &bytes))
    }

    /// Writes the model file at `path` (whole or not at all).
    fn save(&self, py: Python<'_>, path: std::path::PathBuf) -> PyResult<()> {
        let f = self.forest.clone();
        py.detach(move || f.save(&path))
            .map_err(|e| errors::forest(&e))
    }

    /// The `copse inspect --json` report, with tree `tree`'s rules when given;
    /// `model_file` is the name shown for the file.
    #[pyo3(signature = (model_file, tree=None))]
    fn inspect_json(&self, model_file: &str, tree: Option<usize>) -> PyResult<String> {
        let f = &self.forest;
        if let Some(k) = tree {
            if k >= f.trees().len() {
                return Err(errors::raise(
                    Kind::Usage,
                    format!(
                        "tree {k} is not in the model; its trees are numbered 0 to {}",
                        f.trees().len() - 1
                    ),
                ));
            }
        }
        let bytes = f.to_bytes().map_err(|e| errors::forest(&e))?.len() as u64;
        let view = InspectView::new(f, Path::new(model_file), bytes, tree);
        copse_cli::report::json_text(&view).map_err(|e| errors::command(&e))
    }

    /// `classify` or `regress`.
    #[getter]
    fn task(&self) -> &'static str {
        self.forest.task().name()
    }

    /// The classes in the model's order (empty for numbers).
    #[getter]
    fn classes(&self) -> Vec<String> {
        self.forest.classes().to_vec()
    }

    /// The inputs in the model's order.
    #[getter]
    fn inputs(&self) -> Vec<String> {
        self.forest.meta().iter().map(|m| m.name.clone()).collect()
    }

    /// For each input, whether it is categorical.
    #[getter]
    fn categorical(&self) -> Vec<bool> {
        self.forest
            .meta()
            .iter()
            .map(|m| matches!(m.kind, FeatureKind::Categorical { .. }))
            .collect()
    }

    /// The target column's name.
    #[getter]
    fn target(&self) -> String {
        self.forest.card().target.clone()
    }

    /// Trees in the model.
    #[getter]
    fn trees(&self) -> usize {
        self.forest.trees().len()
    }

    /// Whether the model predicts classes.
    #[getter]
    fn is_classifier(&self) -> bool {
        self.forest.task() == Task::Classify
    }

    /// Threads a call would use for `threads` (`None`: one per core).
    #[staticmethod]
    #[pyo3(signature = (threads=None))]
    fn threads_for(threads: Option<usize>) -> PyResult<usize> {
        Ok(pool::pool(threads)?.current_num_threads())
    }
}
