//! What a forest models: classes or numbers. One enum for the engine, the data layer
//! and the command line, worded once here.
use serde::{Deserialize, Serialize};
use std::fmt;

/// What is being modelled.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
pub enum Task {
    /// Predict a class: one probability per class, in the model's class order.
    Classify,
    /// Predict a number.
    Regress,
}

impl Task {
    /// The word used on the command line and in JSON (`classify`, `regress`).
    pub fn name(self) -> &'static str {
        match self {
            Task::Classify => "classify",
            Task::Regress => "regress",
        }
    }
}

impl fmt::Display for Task {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.name())
    }
}
