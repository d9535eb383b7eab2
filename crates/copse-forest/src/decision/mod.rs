//! From scores to decisions, for a two-class outcome: how many of the positive class
//! are caught in the top rows by score, what a chosen cut-off does, which cut-off a
//! stated cost ratio calls for, whether the probabilities mean what they say, how sure
//! each figure is, and what a model without skill would score. Every function takes
//! the positive class's scores and a flag per row saying whether the row is positive,
//! so out-of-bag and held-out scores are judged the same way.
//!
//! - [`interval`]: Wilson intervals for shares, DeLong standard error of ROC AUC, an
//!   interval for RMSE;
//! - [`rank`]: catch by rank (share of positives in the top rows);
//! - [`cutoff`]: the confusion table, precision, recall and false alarms at a cut-off,
//!   and the cut-off that minimises expected cost;
//! - [`calibration`]: the reliability table and the Brier score's decomposition;
//! - [`baseline`]: the no-skill figures beside every measure.
pub mod baseline;
pub mod calibration;
pub mod cutoff;
pub mod interval;
pub mod rank;

pub use baseline::{class_baseline, value_baseline, ClassBaseline, ValueBaseline};
pub use calibration::{reliability, Reliability, ReliabilityBin};
pub use cutoff::{at_cutoff, cost_cutoff, CutoffTable};
pub use interval::{auc_std_error, rmse_interval, wilson, Interval};
pub use rank::{catch_by_rank, CatchByRank, CatchPoint, STANDARD_TOP_SHARES};

/// Rows with a finite score, as (score, positive) pairs; rows whose score is NaN (no
/// prediction) are left out.
pub(crate) fn scored(scores: &[f64], positive: &[bool]) -> Vec<(f64, bool)> {
    scores
        .iter()
        .zip(positive)
        .filter(|(s, _)| s.is_finite())
        .map(|(&s, &p)| (s, p))
        .collect()
}
