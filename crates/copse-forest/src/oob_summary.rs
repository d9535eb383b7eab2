//! What the out-of-bag pass yields: the accuracy summary kept in the model and the
//! per-row predictions returned beside it (computed in [`crate::oob`]).
use crate::metrics::Metrics;
use ndarray::Array2;
use serde::{Deserialize, Serialize};

/// Out-of-bag accuracy, kept in the model.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct OobSummary {
    /// Measures over the rows with a known outcome that were out of bag for at least
    /// one tree; `None` when there is no such row (for example with no resampling).
    pub metrics: Option<Metrics>,
    /// Rows with a known outcome.
    pub rows_labelled: usize,
    /// Rows with a known outcome that every tree drew: they have no out-of-bag
    /// prediction and are left out of `metrics`.
    pub rows_never_oob: usize,
    /// Rows whose outcome was missing (never drawn, never measured).
    pub rows_missing_outcome: usize,
    /// Entry `k` is the out-of-bag error (misclassification rate, or mean squared
    /// error) using only trees `0..=k`, over the rows out of bag for at least one of
    /// them; `None` while there is no such row.
    pub error_curve: Vec<Option<f64>>,
}

/// Per-row out-of-bag results of one training run (not stored in the model).
#[derive(Debug, Clone)]
pub struct OobReport {
    /// Rows by outputs: mean of the class distributions (or values) of the leaves the
    /// row reached in the trees where it was out of bag. NaN for a row that no tree
    /// left out.
    pub predictions: Array2<f64>,
    /// Number of trees for which each row was out of bag.
    pub trees_out: Vec<u32>,
}
