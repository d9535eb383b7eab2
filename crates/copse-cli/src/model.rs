//! What a model file holds: the schema for reading new files, the trained forest, and
//! a record of the training run, plus loading with every consistency check a file
//! from elsewhere must pass.
use crate::error::{CliError, CliResult};
use crate::model_file;
use crate::schema::{Schema, Task};
use copse_forest::Forest;
use serde::{Deserialize, Serialize};
use std::path::Path;

/// A record of how the model was made (no clock times, so the same run gives the
/// same file byte for byte).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct TrainingRecord {
    /// Version of copse that trained it.
    pub copse_version: String,
    /// The training file's name as given.
    pub source: String,
    /// Data rows read.
    pub rows_read: usize,
    /// Rows left out because the target was missing.
    pub rows_without_outcome: usize,
    /// Columns left out with `--ignore`.
    pub ignored: Vec<String>,
    /// Rows per class in the training data (classification; model order).
    pub class_counts: Vec<u64>,
    /// The rule for inputs per split as given (`sqrt`, `0.5`, ...).
    pub features_rule: String,
    /// Smallest, mean and largest target value (regression).
    pub value_range: Option<[f64; 3]>,
}

/// The content of a model file.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Model {
    /// How to read new files.
    pub schema: Schema,
    /// The trees and their summaries.
    pub forest: Forest,
    /// How it was made.
    pub training: TrainingRecord,
}

impl Model {
    /// Writes the model through a temporary file and a rename.
    ///
    /// # Errors
    /// A failure when encoding or writing fails.
    pub fn save(&self, path: &Path) -> CliResult<()> {
        model_file::write(path, self)
    }

    /// Reads a model file and checks it is internally consistent.
    ///
    /// # Errors
    /// An input error (exit 2) for a missing, damaged, foreign, newer or inconsistent
    /// file, naming it and saying what to do.
    pub fn load(path: &Path) -> CliResult<Model> {
        let model: Model = model_file::read(path).map_err(|e| CliError::input(e.to_string()))?;
        let name = path.display();
        let bad = |what: String| {
            CliError::input(format!(
                "{name} is not a usable model: {what}; retrain it with 'copse train'"
            ))
        };
        model
            .forest
            .check()
            .map_err(|e| bad(e.message().to_string()))?;
        if model.schema.features != model.forest.meta() {
            return Err(bad("its input list does not match its trees".into()));
        }
        let classes = model.forest.classes();
        match model.schema.target.task {
            Task::Classify
                if classes != model.schema.target.classes.as_slice() || classes.is_empty() =>
            {
                return Err(bad("its class list does not match its trees".into()));
            }
            Task::Regress if model.forest.n_outputs() != 1 || !classes.is_empty() => {
                return Err(bad("it is a regression model with class outputs".into()));
            }
            _ => {}
        }
        Ok(model)
    }
}
