//! Accuracy measures for class probabilities and for values, used for the out-of-bag
//! report, for evaluation on labelled data, and by the importance measures.
use crate::outcome::MISSING;
use ndarray::ArrayView2;
use serde::{Deserialize, Serialize};

/// Probabilities are clipped to `[LOG_LOSS_EPSILON, 1]` before taking logarithms, so
/// one confident mistake costs at most `-ln(1e-15) = 34.5` rather than infinity
/// (common practice).
pub const LOG_LOSS_EPSILON: f64 = 1e-15;

/// Predicted class from a row of class probabilities: the highest probability, ties
/// broken towards the lowest class index (the first in model order). NaN entries are
/// never chosen over a number.
pub fn predicted_class(probs: &[f64]) -> usize {
    let mut best = 0;
    for (k, &p) in probs.iter().enumerate() {
        if p > probs[best] || (probs[best].is_nan() && !p.is_nan()) {
            best = k;
        }
    }
    best
}

/// Measures of class predictions on the rows where both the outcome and the
/// prediction are known.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ClassMetrics {
    /// Rows the measures are computed on.
    pub rows: usize,
    /// Share of rows whose predicted class is not the true class.
    pub error: f64,
    /// Counts by true class (outer index) and predicted class (inner index), in model
    /// class order.
    pub confusion: Vec<Vec<u64>>,
    /// Per true class, the share of its rows predicted as another class; `None` for a
    /// class with no rows.
    pub wrong_share_by_class: Vec<Option<f64>>,
    /// Mean of `-ln p(true class)`, probabilities clipped at [`LOG_LOSS_EPSILON`].
    pub log_loss: f64,
    /// Brier score in its original multi-class form (Brier 1950): mean over rows of
    /// `sum_k (p_k - [y = k])^2`, from 0 (perfect) to 2.
    pub brier: f64,
    /// Area under the ROC curve with the second class (index 1) as the positive class
    /// and its probability as the score; two classes only, and both must be present.
    pub roc_auc: Option<f64>,
    /// With case weights: the total weight of the rows measured, and the confusion
    /// table in weights (every other figure above is then a weighted mean, and
    /// `confusion` still counts rows). `None` without case weights.
    pub weighted: Option<WeightedTable>,
}

/// Case-weighted totals of class measures.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct WeightedTable {
    /// Sum of the case weights of the rows measured.
    pub total: f64,
    /// Sums of case weights by true class (outer index) and predicted class (inner).
    pub confusion: Vec<Vec<f64>>,
}

/// Measures of value predictions on the rows where both the outcome and the
/// prediction are known.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ValueMetrics {
    /// Rows the measures are computed on.
    pub rows: usize,
    /// Mean squared error.
    pub mse: f64,
    /// Mean absolute error.
    pub mae: f64,
    /// `1 - MSE / Var(y)`, with `Var(y)` the mean squared deviation of the true values
    /// on the same rows (n denominator); `None` when the true values are all equal.
    pub r_squared: Option<f64>,
    /// With case weights, the total weight of the rows measured (every figure above is
    /// then a weighted mean, `Var(y)` the weighted variance); `None` without.
    pub weight_total: Option<f64>,
}

/// Measures for either kind of model.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub enum Metrics {
    /// Classification measures.
    Classes(ClassMetrics),
    /// Regression measures.
    Values(ValueMetrics),
}

impl Metrics {
    /// The headline error: misclassification rate, or mean squared error.
    pub fn error(&self) -> f64 {
        match self {
            Metrics::Classes(c) => c.error,
            Metrics::Values(v) => v.mse,
        }
    }

    /// Rows the measures are computed on.
    pub fn rows(&self) -> usize {
        match self {
            Metrics::Classes(c) => c.rows,
            Metrics::Values(v) => v.rows,
        }
    }
}

/// Class measures of `probs` (rows by classes) against `codes`. Rows with a missing
/// code (or one outside the columns) or a NaN probability are skipped. `None` when no
/// row is left.
pub fn class_metrics(codes: &[u32], probs: ArrayView2<'_, f64>) -> Option<ClassMetrics> {
    class_metrics_weighted(codes, probs, None)
}

/// Class measures as [`class_metrics`], each row counted with its case weight when
/// `weights` are given (one per row, non-negative): every figure is a weighted mean
/// (the error is the weight share of wrong rows), the ROC AUC the weighted rank
/// statistic, and [`ClassMetrics::weighted`] holds the confusion table in weights.
/// `None` when no row is left or the rows left weigh nothing.
pub fn class_metrics_weighted(
    codes: &[u32],
    probs: ArrayView2<'_, f64>,
    weights: Option<&[f64]>,
) -> Option<ClassMetrics> {
    let k = probs.ncols();
    let mut confusion = vec![vec![0u64; k]; k];
    let mut in_weight = vec![vec![0.0f64; k]; k];
    let mut rows = 0usize;
    // Sums of weights; with no weights every row weighs exactly 1.0, so the sums are
    // the row counts and the figures those of the unweighted formulas, bit for bit.
    let (mut total, mut wrong) = (0.0, 0.0);
    let (mut log_loss, mut brier) = (0.0, 0.0);
    let (mut truth, mut score, mut case) = (Vec::new(), Vec::new(), Vec::new());
    let mut p = vec![0.0; k];
    for (i, row) in probs.rows().into_iter().enumerate() {
        let y = codes[i];
        if y == MISSING || (y as usize) >= k || row.iter().any(|v| v.is_nan()) {
            continue;
        }
        let y = y as usize;
        let w = weights.map_or(1.0, |w| w[i]);
        p.iter_mut().zip(row).for_each(|(a, b)| *a = *b);
        let hat = predicted_class(&p);
        confusion[y][hat] += 1;
        in_weight[y][hat] += w;
        rows += 1;
        total += w;
        if hat != y {
            wrong += w;
        }
        log_loss -= w * p[y].clamp(LOG_LOSS_EPSILON, 1.0).ln();
        brier += w * brier_row(&p, y);
        if k == 2 {
            truth.push(y == 1);
            score.push(p[1]);
            case.push(w);
        }
    }
    if rows == 0 || total <= 0.0 {
        return None;
    }
    let wrong_share_by_class = in_weight
        .iter()
        .enumerate()
        .map(|(c, r)| {
            let all: f64 = r.iter().sum();
            (all > 0.0).then(|| (all - r[c]) / all)
        })
        .collect();
    let roc_auc = match (k, weights) {
        (2, None) => roc_auc(&truth, &score),
        (2, Some(_)) => roc_auc_weighted(&truth, &score, &case),
        _ => None,
    };
    Some(ClassMetrics {
        rows,
        error: wrong / total,
        confusion,
        wrong_share_by_class,
        log_loss: log_loss / total,
        brier: brier / total,
        roc_auc,
        weighted: weights.map(|_| WeightedTable {
            total,
            confusion: in_weight,
        }),
    })
}

/// `sum_k (p_k - [y = k])^2` for one row.
#[inline]
pub(crate) fn brier_row(p: &[f64], y: usize) -> f64 {
    p.iter()
        .enumerate()
        .map(|(k, &q)| {
            let d = q - f64::from(u8::from(k == y));
            d * d
        })
        .sum()
}

/// Value measures of `pred` against `truth`; rows where either is NaN are skipped.
/// `None` when no row is left.
pub fn value_metrics(truth: &[f64], pred: &[f64]) -> Option<ValueMetrics> {
    value_metrics_weighted(truth, pred, None)
}

/// Value measures as [`value_metrics`], each row counted with its case weight when
/// `weights` are given: weighted mean squared and absolute errors, and `R^2` against
/// the weighted variance of the true values. `None` when no row is left or the rows
/// left weigh nothing.
pub fn value_metrics_weighted(
    truth: &[f64],
    pred: &[f64],
    weights: Option<&[f64]>,
) -> Option<ValueMetrics> {
    // With no weights every row weighs exactly 1.0: the sums below are then those of
    // the unweighted formulas, bit for bit.
    let cases: Vec<(f64, f64, f64)> = truth
        .iter()
        .zip(pred)
        .enumerate()
        .filter(|(_, (y, p))| !y.is_nan() && !p.is_nan())
        .map(|(i, (&y, &p))| (y, p, weights.map_or(1.0, |w| w[i])))
        .collect();
    let n: f64 = cases.iter().map(|c| c.2).sum();
    if cases.is_empty() || n <= 0.0 {
        return None;
    }
    let mse = cases
        .iter()
        .map(|(y, p, w)| w * ((y - p) * (y - p)))
        .sum::<f64>()
        / n;
    let mae = cases.iter().map(|(y, p, w)| w * (y - p).abs()).sum::<f64>() / n;
    let mean = cases.iter().map(|(y, _, w)| w * y).sum::<f64>() / n;
    let var = cases
        .iter()
        .map(|(y, _, w)| w * ((y - mean) * (y - mean)))
        .sum::<f64>()
        / n;
    Some(ValueMetrics {
        rows: cases.len(),
        mse,
        mae,
        r_squared: (var > 0.0).then(|| 1.0 - mse / var),
        weight_total: weights.map(|_| n),
    })
}

/// Area under the ROC curve by the rank-sum (Mann-Whitney) form: the probability
/// that a random positive scores above a random negative, ties counted one half
/// (tied scores get the average of their ranks). `None` without both classes.
pub fn roc_auc(positive: &[bool], score: &[f64]) -> Option<f64> {
    let n_pos = positive.iter().filter(|&&p| p).count();
    let n_neg = positive.len() - n_pos;
    if n_pos == 0 || n_neg == 0 {
        return None;
    }
    let mut order: Vec<usize> = (0..score.len()).collect();
    order.sort_by(|&a, &b| score[a].total_cmp(&score[b]));
    let mut rank_sum_pos = 0.0;
    let mut i = 0;
    while i < order.len() {
        let mut j = i;
        while j + 1 < order.len() && score[order[j + 1]] == score[order[i]] {
            j += 1;
        }
        // Ranks i+1..=j+1 share their average.
        let avg = (i + j + 2) as f64 / 2.0;
        rank_sum_pos += avg * order[i..=j].iter().filter(|&&r| positive[r]).count() as f64;
        i = j + 1;
    }
    let (p, q) = (n_pos as f64, n_neg as f64);
    Some((rank_sum_pos - p * (p + 1.0) / 2.0) / (p * q))
}

/// Area under the ROC curve with case weights: the weighted share of (positive,
/// negative) pairs in which the positive scores higher, ties counted one half, each
/// pair weighing the product of its cases' weights (the rank-sum form above with
/// every row repeated as often as its weight). `None` when either class weighs
/// nothing.
pub fn roc_auc_weighted(positive: &[bool], score: &[f64], weight: &[f64]) -> Option<f64> {
    let w_pos: f64 = (0..positive.len())
        .filter(|&i| positive[i])
        .map(|i| weight[i])
        .sum();
    let w_neg: f64 = (0..positive.len())
        .filter(|&i| !positive[i])
        .map(|i| weight[i])
        .sum();
    if w_pos <= 0.0 || w_neg <= 0.0 {
        return None;
    }
    let mut order: Vec<usize> = (0..score.len()).collect();
    order.sort_by(|&a, &b| score[a].total_cmp(&score[b]));
    // Walk up the scores: each positive wins against the negative weight below its
    // tied run and ties with the negative weight inside it.
    let (mut below, mut won) = (0.0, 0.0);
    let mut i = 0;
    while i < order.len() {
        let mut j = i;
        while j + 1 < order.len() && score[order[j + 1]] == score[order[i]] {
            j += 1;
        }
        let run = &order[i..=j];
        let pos: f64 = run
            .iter()
            .filter(|&&r| positive[r])
            .map(|&r| weight[r])
            .sum();
        let neg: f64 = run
            .iter()
            .filter(|&&r| !positive[r])
            .map(|&r| weight[r])
            .sum();
        won += pos * (below + 0.5 * neg);
        below += neg;
        i = j + 1;
    }
    Some(won / (w_pos * w_neg))
}

#[cfg(test)]
mod tests {
    use super::*;
    use ndarray::array;

    #[test]
    fn ties_go_to_the_lowest_class() {
        assert_eq!(predicted_class(&[0.4, 0.4, 0.2]), 0);
        assert_eq!(predicted_class(&[0.2, 0.4, 0.4]), 1);
        assert_eq!(predicted_class(&[f64::NAN, 0.1]), 1);
    }

    #[test]
    fn auc_by_hand() {
        // Pairs (pos, neg): scores pos {0.9, 0.5}, neg {0.5, 0.1}: of 4 pairs, 3 won
        // and 1 tied, so AUC = 3.5 / 4 (computed by hand from the definition).
        let auc = roc_auc(&[true, true, false, false], &[0.9, 0.5, 0.5, 0.1]).expect("a value");
        assert!((auc - 0.875).abs() < 1e-12);
        assert_eq!(roc_auc(&[true, true], &[0.1, 0.2]), None);
    }

    #[test]
    fn class_measures_by_hand() {
        let probs = array![[0.8, 0.2], [0.3, 0.7], [0.6, 0.4], [f64::NAN, f64::NAN]];
        let m = class_metrics(&[0, 1, 1, 0], probs.view()).expect("a value");
        assert_eq!(m.rows, 3);
        assert!((m.error - 1.0 / 3.0).abs() < 1e-12);
        assert_eq!(m.confusion, vec![vec![1, 0], vec![1, 1]]);
        assert_eq!(m.wrong_share_by_class, vec![Some(0.0), Some(0.5)]);
        // Brier: (0.04+0.04) + (0.09+0.09) + (0.36+0.36) = 0.98, over 3 rows.
        assert!((m.brier - 0.98 / 3.0).abs() < 1e-12);
        let ll = -(0.8f64.ln() + 0.7f64.ln() + 0.4f64.ln()) / 3.0;
        assert!((m.log_loss - ll).abs() < 1e-12);
        assert_eq!(m.roc_auc, Some(1.0));
    }

    #[test]
    fn whole_number_weights_measure_as_repeated_rows() {
        // Weights 2, 1, 3 against the rows written out that many times: every figure
        // of the weighted formulas is the plain figure of the repeated rows.
        let probs = array![[0.8, 0.2], [0.3, 0.7], [0.6, 0.4]];
        let w = [2.0, 1.0, 3.0];
        let m = class_metrics_weighted(&[0, 1, 1], probs.view(), Some(&w)).expect("a value");
        let rep = array![
            [0.8, 0.2],
            [0.8, 0.2],
            [0.3, 0.7],
            [0.6, 0.4],
            [0.6, 0.4],
            [0.6, 0.4]
        ];
        let r = class_metrics(&[0, 0, 1, 1, 1, 1], rep.view()).expect("a value");
        for (a, b) in [
            (m.error, r.error),
            (m.brier, r.brier),
            (m.log_loss, r.log_loss),
            (m.roc_auc.expect("auc"), r.roc_auc.expect("auc")),
        ] {
            assert!((a - b).abs() < 1e-12, "{a} vs {b}");
        }
        let table = m.weighted.expect("weighted");
        assert_eq!(table.confusion, vec![vec![2.0, 0.0], vec![3.0, 1.0]]);
        assert_eq!(m.wrong_share_by_class, r.wrong_share_by_class);
        let v =
            value_metrics_weighted(&[1.0, 2.0, 4.0], &[1.5, 2.0, 3.0], Some(&w)).expect("a value");
        let vr = value_metrics(
            &[1.0, 1.0, 2.0, 4.0, 4.0, 4.0],
            &[1.5, 1.5, 2.0, 3.0, 3.0, 3.0],
        )
        .expect("a value");
        assert!((v.mse - vr.mse).abs() < 1e-12 && (v.mae - vr.mae).abs() < 1e-12);
        let (a, b) = (v.r_squared.expect("r2"), vr.r_squared.expect("r2"));
        assert!((a - b).abs() < 1e-12);
        assert_eq!(v.weight_total, Some(6.0));
    }

    #[test]
    fn value_measures_by_hand() {
        let m = value_metrics(&[1.0, 2.0, 3.0, f64::NAN], &[1.0, 2.0, 5.0, 0.0]).expect("a value");
        assert_eq!(m.rows, 3);
        assert!((m.mse - 4.0 / 3.0).abs() < 1e-12);
        assert!((m.mae - 2.0 / 3.0).abs() < 1e-12);
        // Var(y) = 2/3, so 1 - (4/3)/(2/3) = -1.
        assert!((m.r_squared.expect("a value") + 1.0).abs() < 1e-12);
    }
}
