//! How sure a figure is: Wilson score intervals for shares, the DeLong standard error of
//! ROC AUC, and an interval for the root mean squared error.
use serde::{Deserialize, Serialize};

/// The normal quantile for a two-sided 95% interval.
pub const Z95: f64 = 1.959_963_984_540_054;

/// A two-sided interval.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct Interval {
    /// Lower end.
    pub low: f64,
    /// Upper end.
    pub high: f64,
}

/// The 95% Wilson score interval for `k` successes in `n` trials (Wilson 1927,
/// "Probable inference, the law of succession, and statistical inference", JASA
/// 22:209-212): the shares `p` whose normal test does not reject `k / n`,
/// `(p̂ + z²/2n ± z sqrt(p̂(1-p̂)/n + z²/4n²)) / (1 + z²/n)`. Unlike the plain normal
/// interval it stays inside [0, 1] and is sound for shares near 0 or 1. `None` when
/// `n` is 0.
///
/// # Example
/// ```
/// let i = copse_forest::decision::wilson(0, 20).expect("20 trials");
/// assert_eq!(i.low, 0.0);
/// assert!((i.high - 0.1611).abs() < 1e-4);
/// ```
pub fn wilson(k: usize, n: usize) -> Option<Interval> {
    if n == 0 {
        return None;
    }
    let (k, n) = (k as f64, n as f64);
    let z2 = Z95 * Z95;
    let p = k / n;
    let centre = p + z2 / (2.0 * n);
    let half = Z95 * (p * (1.0 - p) / n + z2 / (4.0 * n * n)).sqrt();
    let d = 1.0 + z2 / n;
    Some(Interval {
        low: ((centre - half) / d).max(0.0),
        high: ((centre + half) / d).min(1.0),
    })
}

/// ROC AUC and its standard error by DeLong, DeLong & Clarke-Pearson (1988),
/// "Comparing the areas under two or more correlated receiver operating characteristic
/// curves: a nonparametric approach", Biometrics 44:837-845. Each positive row gets
/// the share of negative rows it outscores (ties half), each negative row the share of
/// positive rows that outscore it; the AUC is the mean of the first, and its variance
/// is `S10 / m + S01 / n` with `S10`, `S01` the sample variances of the two sets of
/// placements and `m`, `n` the positive and negative counts. `None` without both
/// classes, or with a single row of one class (no variance).
///
/// # Example
/// ```
/// // Scores 0.9, 0.4 for the positives and 0.5, 0.1 for the negatives: the positives
/// // outscore 2 and 1 of the 2 negatives, so AUC = (1 + 0.5) / 2 = 0.75.
/// let (auc, _se) = copse_forest::decision::auc_std_error(
///     &[0.9, 0.4, 0.5, 0.1], &[true, true, false, false]).expect("two of each");
/// assert_eq!(auc, 0.75);
/// ```
pub fn auc_std_error(scores: &[f64], positive: &[bool]) -> Option<(f64, f64)> {
    let rows = super::scored(scores, positive);
    let mut pos: Vec<f64> = rows.iter().filter(|r| r.1).map(|r| r.0).collect();
    let mut neg: Vec<f64> = rows.iter().filter(|r| !r.1).map(|r| r.0).collect();
    let (m, n) = (pos.len(), neg.len());
    if m < 2 || n < 2 {
        return None;
    }
    pos.sort_by(f64::total_cmp);
    neg.sort_by(f64::total_cmp);
    // Placements by binary search: rows strictly below plus half the ties.
    let below_and_ties = |sorted: &[f64], v: f64| {
        let lo = sorted.partition_point(|&s| s < v);
        let hi = sorted.partition_point(|&s| s <= v);
        lo as f64 + 0.5 * (hi - lo) as f64
    };
    let v10: Vec<f64> = pos
        .iter()
        .map(|&x| below_and_ties(&neg, x) / n as f64)
        .collect();
    let v01: Vec<f64> = neg
        .iter()
        .map(|&y| 1.0 - below_and_ties(&pos, y) / m as f64)
        .collect();
    let auc = v10.iter().sum::<f64>() / m as f64;
    let var = |v: &[f64], mean: f64| {
        v.iter().map(|x| (x - mean).powi(2)).sum::<f64>() / (v.len() - 1) as f64
    };
    let se = (var(&v10, auc) / m as f64 + var(&v01, auc) / n as f64).sqrt();
    Some((auc, se))
}

/// A 95% interval for the root mean squared error of `errors` (prediction minus
/// outcome): the mean squared error's normal interval from the central limit theorem
/// (its standard error is the standard deviation of the squared errors over sqrt(n)),
/// with both ends square-rooted (the lower end kept at or above 0). Common practice;
/// it leans on many rows, and heavy-tailed errors make it too narrow. `None` with fewer
/// than two errors.
pub fn rmse_interval(errors: &[f64]) -> Option<Interval> {
    let sq: Vec<f64> = errors
        .iter()
        .filter(|e| e.is_finite())
        .map(|e| e * e)
        .collect();
    let n = sq.len();
    if n < 2 {
        return None;
    }
    let mse = sq.iter().sum::<f64>() / n as f64;
    let var = sq.iter().map(|s| (s - mse).powi(2)).sum::<f64>() / (n - 1) as f64;
    let half = Z95 * (var / n as f64).sqrt();
    Some(Interval {
        low: (mse - half).max(0.0).sqrt(),
        high: (mse + half).sqrt(),
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Wilson (1927), checked by hand: 8 of 10, z = 1.96: centre (0.8 + 0.19208) /
    /// 1.38415 = 0.71674, half 1.96 sqrt(0.016 + 0.0096) / 1.38415 = 0.22657, so
    /// (0.4902, 0.9433).
    #[test]
    fn wilson_matches_a_hand_computation() {
        let i = wilson(8, 10).expect("ten trials");
        assert!((i.low - 0.4902).abs() < 1e-4, "{i:?}");
        assert!((i.high - 0.9433).abs() < 1e-4, "{i:?}");
        assert!(wilson(0, 0).is_none());
    }

    /// The DeLong AUC equals the Mann-Whitney statistic U / (m n) computed by hand:
    /// positives 0.8, 0.6, 0.6; negatives 0.6, 0.3: pairs won 2 + 1.5 + 1.5 = 5 of 6
    /// (0.6 against 0.6 counts one half), AUC 5/6. Placements V10 = (1, 0.75, 0.75)
    /// (negatives each positive outscores), V01 = (2/3, 1) (positives outscoring each
    /// negative): S10 = var(1, .75, .75) = 0.0208333, S01 = var(2/3, 1) = 0.0555556,
    /// Var = S10/3 + S01/2 = 0.0347222, SE 0.186339.
    #[test]
    fn delong_matches_mann_whitney_and_a_hand_variance() {
        let (auc, se) = auc_std_error(
            &[0.8, 0.6, 0.6, 0.6, 0.3],
            &[true, true, true, false, false],
        )
        .expect("both classes");
        assert!((auc - 5.0 / 6.0).abs() < 1e-12);
        assert!((se - 0.186_339).abs() < 1e-6, "{se}");
    }

    /// Hanley & McNeil (1982), "The meaning and use of the area under a receiver
    /// operating characteristic (ROC) curve", Radiology 143:29-36: SE² = (A(1-A) +
    /// (m-1)(Q1-A²) + (n-1)(Q2-A²)) / (m n), Q1 = A/(2-A), Q2 = 2A²/(1+A), derived for
    /// exponential score distributions; for well-behaved continuous scores DeLong's
    /// estimate lies close to it. Binormal scores (positives N(1,1), negatives N(0,1),
    /// 400 of each, a fixed stream): the two agree within 15%, a wide band because
    /// the formula's exponential assumption does not hold exactly here (they agreed
    /// to about 1% in our run).
    #[test]
    fn delong_agrees_with_hanley_mcneil_on_continuous_scores() {
        use rand::SeedableRng;
        use rand_distr::{Distribution, StandardNormal};
        let mut rng = rand_xoshiro::Xoshiro256PlusPlus::seed_from_u64(5);
        let mut scores = Vec::new();
        let mut positive = Vec::new();
        for i in 0..800 {
            let pos = i % 2 == 0;
            let z: f64 = StandardNormal.sample(&mut rng);
            scores.push(z + if pos { 1.0 } else { 0.0 });
            positive.push(pos);
        }
        let (a, se) = auc_std_error(&scores, &positive).expect("both classes");
        let (m, n) = (400.0, 400.0);
        let (q1, q2) = (a / (2.0 - a), 2.0 * a * a / (1.0 + a));
        let hm = ((a * (1.0 - a) + (m - 1.0) * (q1 - a * a) + (n - 1.0) * (q2 - a * a)) / (m * n))
            .sqrt();
        assert!(
            (se / hm - 1.0).abs() < 0.15,
            "DeLong {se}, Hanley-McNeil {hm}"
        );
    }

    /// Errors 1, -1, 1, -1: MSE 1, every squared error 1, so the interval is exactly 1.
    #[test]
    fn rmse_interval_of_equal_squared_errors_is_a_point() {
        let i = rmse_interval(&[1.0, -1.0, 1.0, -1.0]).expect("four errors");
        assert_eq!((i.low, i.high), (1.0, 1.0));
    }
}
