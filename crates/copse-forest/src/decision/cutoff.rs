//! A cut-off on the positive class's score: the confusion table it gives, its
//! precision, recall and false-alarm rate with intervals, and the cut-off that
//! minimises expected cost for a stated ratio of costs.
use super::interval::{wilson, Interval};
use serde::{Deserialize, Serialize};

/// What a cut-off does: rows with a score at or above it are called positive.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct CutoffTable {
    /// The cut-off.
    pub cutoff: f64,
    /// Positive rows called positive (caught).
    pub caught: usize,
    /// Negative rows called positive (false alarms).
    pub false_alarms: usize,
    /// Positive rows called negative (missed).
    pub missed: usize,
    /// Negative rows called negative (rightly passed).
    pub passed: usize,
    /// Of the rows called positive, the share that are: `caught / (caught +
    /// false_alarms)` (the precision); `None` when no row is called positive.
    pub precision: Option<f64>,
    /// 95% Wilson interval of `precision`.
    pub precision_interval: Option<Interval>,
    /// Of the positive rows, the share called positive (the recall).
    pub recall: Option<f64>,
    /// 95% Wilson interval of `recall`.
    pub recall_interval: Option<Interval>,
    /// Of the negative rows, the share called positive (the false-alarm rate).
    pub false_alarm_rate: Option<f64>,
    /// 95% Wilson interval of `false_alarm_rate`.
    pub false_alarm_interval: Option<Interval>,
}

/// The confusion table and rates at `cutoff` (a score at or above it is called
/// positive; rows without a score are left out).
///
/// # Example
/// ```
/// let t = copse_forest::decision::at_cutoff(&[0.9, 0.6, 0.4, 0.2], &[true, false, true, false], 0.5);
/// assert_eq!((t.caught, t.false_alarms, t.missed, t.passed), (1, 1, 1, 1));
/// assert_eq!(t.precision, Some(0.5));
/// ```
pub fn at_cutoff(scores: &[f64], positive: &[bool], cutoff: f64) -> CutoffTable {
    let (mut caught, mut false_alarms, mut missed, mut passed) = (0, 0, 0, 0);
    for (s, p) in super::scored(scores, positive) {
        match (s >= cutoff, p) {
            (true, true) => caught += 1,
            (true, false) => false_alarms += 1,
            (false, true) => missed += 1,
            (false, false) => passed += 1,
        }
    }
    let share = |k: usize, n: usize| (n > 0).then(|| k as f64 / n as f64);
    CutoffTable {
        cutoff,
        caught,
        false_alarms,
        missed,
        passed,
        precision: share(caught, caught + false_alarms),
        precision_interval: wilson(caught, caught + false_alarms),
        recall: share(caught, caught + missed),
        recall_interval: wilson(caught, caught + missed),
        false_alarm_rate: share(false_alarms, false_alarms + passed),
        false_alarm_interval: wilson(false_alarms, false_alarms + passed),
    }
}

/// The cut-off on a calibrated probability that minimises expected cost when a false
/// alarm costs `false_alarm_cost` and a missed positive `miss_cost`: call a row
/// positive when its probability p satisfies p x miss_cost >= (1 - p) x
/// false_alarm_cost, that is p >= false_alarm_cost / (false_alarm_cost + miss_cost)
/// (Elkan 2001, "The foundations of cost-sensitive learning", IJCAI, Theorem 1, with
/// correct decisions costing nothing). `None` unless both costs are positive and
/// finite.
///
/// # Example
/// ```
/// // Missing a failure costs nine times a needless inspection: inspect above 0.1.
/// assert_eq!(copse_forest::decision::cost_cutoff(1.0, 9.0), Some(0.1));
/// ```
pub fn cost_cutoff(false_alarm_cost: f64, miss_cost: f64) -> Option<f64> {
    let ok = |c: f64| c.is_finite() && c > 0.0;
    (ok(false_alarm_cost) && ok(miss_cost))
        .then(|| false_alarm_cost / (false_alarm_cost + miss_cost))
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Elkan (2001), Theorem 1: at p = p*, calling positive and negative cost the same
    /// in expectation; just above it, calling positive is cheaper.
    #[test]
    fn the_cost_cutoff_balances_expected_costs() {
        let (c_fp, c_fn) = (2.0, 5.0);
        let p = cost_cutoff(c_fp, c_fn).expect("positive costs");
        assert!((p * c_fn - (1.0 - p) * c_fp).abs() < 1e-12);
        let q = p + 0.01;
        assert!(q * c_fn > (1.0 - q) * c_fp);
        assert!(cost_cutoff(0.0, 1.0).is_none());
    }

    /// A score equal to the cut-off is called positive; unscored rows are left out.
    #[test]
    fn a_score_at_the_cutoff_counts_as_positive() {
        let t = at_cutoff(&[0.5, f64::NAN, 0.49], &[true, true, false], 0.5);
        assert_eq!((t.caught, t.missed, t.passed), (1, 0, 1));
        assert_eq!(t.recall, Some(1.0));
    }
}
