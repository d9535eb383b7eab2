//! Parts of a forest from Python, with the words of the command (`copse train
//! --tree-range`, `copse merge`): trees a..b grown into a part (`NativePart`: the
//! part file's bytes, so a part is saved, pickled and shipped between processes like
//! a model), and parts merged with the training data into the model one run makes,
//! byte for byte.
use crate::columns::{frame, PyColumn};
use crate::errors::{self, Kind};
use crate::model::NativeModel;
use crate::pool;
use copse_data::{Missing, Roles, TrainingTable};
use copse_forest::{Forest, ForestPart};
use pyo3::prelude::*;
use pyo3::types::PyBytes;
use std::path::PathBuf;
use std::sync::Arc;

/// Trees a..b of a forest (the Python class `copse_forest.Part` wraps it).
#[pyclass(frozen, module = "copse_forest._native")]
pub struct NativePart {
    pub(crate) part: Arc<ForestPart>,
}

impl NativePart {
    /// Wraps `part`.
    pub fn new(part: ForestPart) -> Self {
        NativePart {
            part: Arc::new(part),
        }
    }
}

/// Reads the part file at `path`.
///
/// # Errors
/// `DamagedModelError` for a file that is not a readable part; `BadInputError` for one
/// that cannot be opened.
#[pyfunction]
pub fn load_part(py: Python<'_>, path: PathBuf) -> PyResult<NativePart> {
    let part = py
        .detach(|| ForestPart::load(&path))
        .map_err(|e| errors::forest(&e))?;
    Ok(NativePart::new(part))
}

/// Reads a part from the bytes of a part file; `name` names it in messages.
///
/// # Errors
/// `DamagedModelError` for bytes that are not a readable part.
#[pyfunction]
pub fn part_from_bytes(py: Python<'_>, data: &[u8], name: &str) -> PyResult<NativePart> {
    let part = py
        .detach(|| ForestPart::from_bytes(data, name))
        .map_err(|e| errors::forest(&e))?;
    Ok(NativePart::new(part))
}

/// A model taken as the first trees of a larger forest, to grow it by a merge.
#[pyfunction]
pub fn part_of_model(model: &NativeModel, name: &str) -> PyResult<NativePart> {
    if model.forest.pool_record().is_some() {
        return Err(errors::raise(
            Kind::Usage,
            format!(
                "{name} is a pooled model, whose trees are not the first trees of one forest; \
                 merge parts of one partition's forest, then pool again"
            ),
        ));
    }
    Ok(NativePart::new(ForestPart::from_model(
        Forest::clone(&model.forest),
        name.to_string(),
    )))
}

#[pymethods]
impl NativePart {
    /// The part file's bytes.
    fn to_bytes<'py>(&self, py: Python<'py>) -> PyResult<Bound<'py, PyBytes>> {
        let p = self.part.clone();
        let bytes = py
            .detach(move || p.to_bytes())
            .map_err(|e| errors::forest(&e))?;
        Ok(PyBytes::new(py, &bytes))
    }

    /// Writes the part file at `path` (whole or not at all).
    fn save(&self, py: Python<'_>, path: PathBuf) -> PyResult<()> {
        let p = self.part.clone();
        py.detach(move || p.save(&path))
            .map_err(|e| errors::forest(&e))
    }

    /// The first tree and one past the last.
    #[getter]
    fn tree_range(&self) -> (usize, usize) {
        let r = self.part.tree_range();
        (r.start, r.end)
    }

    /// Trees in the whole forest.
    #[getter]
    fn forest_trees(&self) -> usize {
        self.part.forest_trees()
    }

    /// What messages call the part.
    #[getter]
    fn name(&self) -> String {
        self.part.name().to_string()
    }

    /// Whether the part is a whole model taken as the first trees of a larger forest.
    #[getter]
    fn is_model(&self) -> bool {
        self.part.is_model()
    }
}

/// Merges `parts` with their training data, the columns `columns` named `names` (read
/// the way the parts read theirs: the same target, task, inputs and their kinds, the
/// same columns left out), on `threads` of copse's threads. Returns the model.
///
/// # Errors
/// `UsageError` for parts of different forests or ranges that overlap or leave gaps;
/// `BadInputError` for data that is not the parts' training data.
#[pyfunction]
#[pyo3(signature = (parts, source, names, columns, threads=None))]
pub fn merge(
    py: Python<'_>,
    parts: Vec<PyRef<'_, NativePart>>,
    source: String,
    names: Vec<String>,
    columns: Vec<PyColumn<'_>>,
    threads: Option<usize>,
) -> PyResult<NativeModel> {
    let parts: Vec<ForestPart> = parts.iter().map(|p| ForestPart::clone(&p.part)).collect();
    let Some(first) = parts.first() else {
        return Err(errors::raise(
            Kind::Usage,
            "no parts to merge; give one or more",
        ));
    };
    if parts.iter().filter(|p| p.is_model()).count() > 1 {
        return Err(errors::raise(
            Kind::Usage,
            "a merge grows at most one model, with parts from train(..., tree_range=...)",
        ));
    }
    let roles = Roles::of_part(first);
    let missing = Missing::of_part(first);
    let frame = frame(&source, names, columns)?;
    let pool = pool::pool(threads)?;
    let merged = pool::run(py, &pool, || -> Result<_, PyErr> {
        let input = frame.into_input().map_err(|e| errors::data(&e))?;
        let table =
            TrainingTable::from_csv(input, &roles, missing).map_err(|e| errors::data(&e))?;
        table.merge(&parts, None).map_err(|e| errors::forest(&e))
    })?;
    Ok(NativeModel::new(merged.forest))
}
