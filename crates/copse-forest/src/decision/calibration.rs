//! Whether probabilities mean what they say: a reliability table over equal-count bins
//! of the score and the decomposition of the Brier score into reliability, resolution
//! and uncertainty.
use super::interval::{wilson, Interval};
use serde::{Deserialize, Serialize};

/// One bin of a reliability table.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ReliabilityBin {
    /// Rows in the bin.
    pub rows: usize,
    /// Lowest and highest score in the bin.
    pub score_low: f64,
    /// Highest score in the bin.
    pub score_high: f64,
    /// Mean score of the bin's rows (what the model promised).
    pub mean_score: f64,
    /// Share of the bin's rows that are positive (what happened).
    pub observed_share: f64,
    /// 95% Wilson interval of `observed_share`.
    pub observed_interval: Option<Interval>,
}

/// A reliability table with the Brier score's decomposition.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Reliability {
    /// Bins from the lowest scores to the highest.
    pub bins: Vec<ReliabilityBin>,
    /// Mean of (score - outcome)² over the rows, outcome 1 for positive and 0 for
    /// negative (the two-outcome Brier score, half the report's all-class form).
    pub brier: f64,
    /// The same with each row's score replaced by its bin's mean score: the score the
    /// decomposition adds up to exactly.
    pub brier_binned: f64,
    /// Σ n_k (f_k - o_k)² / N: how far promised and observed shares differ (0 best).
    pub reliability: f64,
    /// Σ n_k (o_k - ō)² / N: how far the bins' observed shares spread around the base
    /// rate (larger is better).
    pub resolution: f64,
    /// ō (1 - ō): the Brier score of always forecasting the base rate.
    pub uncertainty: f64,
}

/// The reliability table of `scores` over `bins` bins of (nearly) equal row counts,
/// rows ordered by score (ties kept in input order), and the decomposition of Murphy
/// (1973), "A new vector partition of the probability score", J. Appl. Meteor.
/// 12:595-600: with the scores replaced by their bin means, Brier = reliability -
/// resolution + uncertainty exactly. `None` when no row has a score.
///
/// # Example
/// ```
/// let r = copse_forest::decision::reliability(
///     &[0.1, 0.2, 0.8, 0.9], &[false, false, true, true], 2).expect("scored rows");
/// let sum = r.reliability - r.resolution + r.uncertainty;
/// assert!((r.brier_binned - sum).abs() < 1e-12);
/// ```
pub fn reliability(scores: &[f64], positive: &[bool], bins: usize) -> Option<Reliability> {
    let mut rows = super::scored(scores, positive);
    let n = rows.len();
    if n == 0 || bins == 0 {
        return None;
    }
    rows.sort_by(|a, b| a.0.total_cmp(&b.0));
    let bins = bins.min(n);
    let base = rows.iter().filter(|r| r.1).count() as f64 / n as f64;
    let mut table = Vec::with_capacity(bins);
    let (mut rel, mut res, mut binned, mut brier) = (0.0, 0.0, 0.0, 0.0);
    for b in 0..bins {
        // Bin b holds rows [b n / bins, (b + 1) n / bins): sizes differ by at most one.
        let (lo, hi) = (b * n / bins, (b + 1) * n / bins);
        let part = &rows[lo..hi];
        let k = part.len();
        let pos = part.iter().filter(|r| r.1).count();
        let f = part.iter().map(|r| r.0).sum::<f64>() / k as f64;
        let o = pos as f64 / k as f64;
        for &(s, p) in part {
            let y = if p { 1.0 } else { 0.0 };
            brier += (s - y).powi(2);
            binned += (f - y).powi(2);
        }
        rel += k as f64 * (f - o).powi(2);
        res += k as f64 * (o - base).powi(2);
        table.push(ReliabilityBin {
            rows: k,
            score_low: part[0].0,
            score_high: part[k - 1].0,
            mean_score: f,
            observed_share: o,
            observed_interval: wilson(pos, k),
        });
    }
    let nf = n as f64;
    Some(Reliability {
        bins: table,
        brier: brier / nf,
        brier_binned: binned / nf,
        reliability: rel / nf,
        resolution: res / nf,
        uncertainty: base * (1.0 - base),
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Murphy (1973): on binned forecasts the parts add up to the Brier score exactly
    /// (to rounding), for any data; checked on a fixed mixed sample of 1000 rows.
    #[test]
    fn the_parts_add_up_to_the_binned_brier_score() {
        let scores: Vec<f64> = (0..1000)
            .map(|i| ((i * 37) % 1000) as f64 / 1000.0)
            .collect();
        let positive: Vec<bool> = (0..1000).map(|i| (i * 53) % 7 < 3).collect();
        let r = reliability(&scores, &positive, 10).expect("rows");
        let sum = r.reliability - r.resolution + r.uncertainty;
        assert!(
            (r.brier_binned - sum).abs() < 1e-12,
            "{} vs {sum}",
            r.brier_binned
        );
        assert_eq!(r.bins.iter().map(|b| b.rows).sum::<usize>(), 1000);
        assert!(r.bins.iter().all(|b| b.rows == 100));
    }

    /// Perfectly calibrated bins (each bin's observed share equals its scores) have
    /// reliability 0: bins of scores 0.25 and 0.75 with 1 of 4 and 3 of 4 positive.
    #[test]
    fn calibrated_bins_have_zero_reliability() {
        let scores = [0.25; 4]
            .iter()
            .chain(&[0.75; 4])
            .copied()
            .collect::<Vec<_>>();
        let positive = [true, false, false, false, true, true, true, false];
        let r = reliability(&scores, &positive, 2).expect("rows");
        assert!(r.reliability.abs() < 1e-15);
        // Resolution: both bins 0.25 from the base rate 0.5.
        assert!((r.resolution - 0.0625).abs() < 1e-15);
    }
}
