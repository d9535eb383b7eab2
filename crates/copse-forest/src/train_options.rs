//! What a training run does beyond growing the trees: the extras that cost time or
//! memory, case weights and row groups, a stop request and a progress callback.
use crate::progress::Progress;
use std::sync::atomic::AtomicBool;

/// What a training run does beyond growing the trees, with what every model holds:
/// the extras that cost time or memory, and a progress callback.
#[derive(Clone, Copy)]
pub struct TrainOptions<'a> {
    /// Compute out-of-bag permutation importance while training (default true).
    pub oob_importance: bool,
    /// Keep in the model how many times each tree drew each training row (one byte per
    /// row and tree; see [`crate::Draws`]). Needed for standard errors of predictions
    /// ([`crate::Forest::prediction_uncertainty`]). Default false.
    pub keep_draws: bool,
    /// Keep in the model the training rows of every leaf with their draw counts and
    /// the training outcomes (see [`crate::LeafRows`] for the bytes), so that
    /// [`crate::Forest::outcome_quantiles`] and [`crate::Forest::outcome_intervals`] can give
    /// quantiles and ranges of the outcome; training also measures how often outcomes
    /// fall inside their out-of-bag 90% range ([`crate::LeafRows::oob_check`]). Regression
    /// only. Default false.
    pub keep_leaf_rows: bool,
    /// Told about progress (for a progress bar); reports may come from several threads
    /// at once. Default none.
    pub progress: Option<&'a (dyn Fn(Progress) + Sync)>,
    /// Case weights, one per row (finite, 0 or more on rows with a known outcome): a
    /// weight counts cases, each tree draws cases in proportion to the weights, and
    /// every out-of-bag figure and importance weighs rows by them (see
    /// [`crate::case_weights`]). Weights all 1 give the same model as none, byte for
    /// byte. Default none.
    pub case_weights: Option<&'a [f64]>,
    /// A group number per row: resampling draws whole groups, so a row is out of bag
    /// only for trees that drew no row of its group (see [`crate::case_weights`]).
    /// Default none.
    pub groups: Option<&'a [u32]>,
    /// Checked before each tree and between the stages: once it is set, training ends
    /// with a `Stopped` error, typically within the time of one tree per thread (so an
    /// interactive caller can honour an interruption). Default none.
    pub stop: Option<&'a AtomicBool>,
}

impl Default for TrainOptions<'_> {
    fn default() -> Self {
        TrainOptions {
            oob_importance: true,
            keep_draws: false,
            keep_leaf_rows: false,
            progress: None,
            case_weights: None,
            groups: None,
            stop: None,
        }
    }
}

impl std::fmt::Debug for TrainOptions<'_> {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("TrainOptions")
            .field("oob_importance", &self.oob_importance)
            .field("keep_draws", &self.keep_draws)
            .field("keep_leaf_rows", &self.keep_leaf_rows)
            .field("progress", &self.progress.map(|_| "callback"))
            .field("case_weights", &self.case_weights.map(<[f64]>::len))
            .field("groups", &self.groups.map(<[u32]>::len))
            .field("stop", &self.stop)
            .finish()
    }
}
