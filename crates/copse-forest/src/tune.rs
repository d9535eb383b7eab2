//! Settings chosen by out-of-bag error: forests grown over a small grid of inputs per
//! split, smallest leaf and cut choice on one binned copy of the data, each judged by
//! its out-of-bag losses row by row against the default setting's.
//!
//! How a setting is judged: every forest draws the same resamples (same seed, same
//! sampling), so the out-of-bag losses of two settings are paired by row. For each
//! setting the difference of its per-row loss from the default's, over the rows both
//! judged, gives a mean difference and its standard error `sd(d) / sqrt(m)`. The
//! losses are the Brier score for classes (it uses the probabilities, so it separates
//! settings with less noise than the 0/1 error, which is reported beside it) and the
//! squared error for numbers. A setting is recommended only when it beats the default
//! by more than [`MARGIN`] standard errors of that difference; among those, the one
//! with the lowest loss. The standard error treats rows as independent; the rows share
//! their trees, which it ignores, so it is a guide, not an exact test.
//!
//! Choosing the best of many settings by their out-of-bag figures flatters the chosen
//! one: were all settings equally good, the smallest of `G` noisy differences would lie
//! about `E[max of G standard normals]` standard errors below zero
//! ([`TuneReport::selection_optimism`] gives that amount). A held-out check of the
//! chosen setting settles it.
use crate::error::{bad_setting, Result};
use crate::forest::Forest;
use crate::loss::row_loss;
use crate::outcome::Outcome;
use crate::settings::{FeaturesPerSplit, ForestSettings, Sampling};
use crate::train::{Prepared, TrainOptions};
use copse_tree::CutChoice;
use serde::Serialize;

/// Standard errors of the paired difference a setting must beat the default by to be
/// recommended (about a one-sided 2.5% chance per setting when it is no better).
pub const MARGIN: f64 = 2.0;

/// The values tried: every combination of the three lists.
#[derive(Debug, Clone, PartialEq)]
pub struct TuneGrid {
    /// Inputs tried per split, as counts (1 to the number of inputs).
    pub features_per_split: Vec<usize>,
    /// Smallest leaf sizes (cases).
    pub min_leaf: Vec<f64>,
    /// Cut choices.
    pub cuts: Vec<CutChoice>,
}

impl TuneGrid {
    /// The usual small grid around `base` for data with `p` inputs: inputs per split
    /// at half, once and twice the default count and every input; smallest leaves of
    /// 1, 5 and 20 cases (and the base's); the best and randomized cut points. At most
    /// 4 x 4 x 2 = 32 settings.
    ///
    /// # Errors
    /// As [`FeaturesPerSplit::resolve`] for the base's rule.
    pub fn around(base: &ForestSettings, p: usize, classification: bool) -> Result<TuneGrid> {
        let k = base.features_per_split.resolve(p, classification)?;
        let mut fps = vec![(k / 2).max(1), k, (2 * k).min(p), p];
        fps.sort_unstable();
        fps.dedup();
        let mut leaves = vec![1.0, 5.0, 20.0, base.tree.min_leaf];
        leaves.sort_by(f64::total_cmp);
        leaves.dedup();
        Ok(TuneGrid {
            features_per_split: fps,
            min_leaf: leaves,
            cuts: vec![CutChoice::Best, CutChoice::Random],
        })
    }
}

/// One setting tried and how its out-of-bag losses compare with the default's.
#[derive(Debug, Clone, Serialize)]
pub struct TuneRow {
    /// Inputs tried per split.
    pub features_per_split: usize,
    /// Smallest leaf (cases).
    pub min_leaf: f64,
    /// `best` or `random`.
    pub cuts: &'static str,
    /// Whether this is the default setting the others are compared with.
    pub is_default: bool,
    /// Rows with a known outcome that some tree left out.
    pub rows_judged: usize,
    /// Out-of-bag error rate (classes) or mean squared error (numbers).
    pub error: f64,
    /// Out-of-bag Brier score (classes only).
    pub brier: Option<f64>,
    /// The judged loss: the Brier score for classes, the mean squared error for numbers.
    pub loss: f64,
    /// Mean of (this setting's row loss - the default's) over the rows both judged;
    /// negative is better.
    pub loss_difference: f64,
    /// Standard error of that mean.
    pub loss_difference_se: f64,
    /// The same for the error rate (classes; for numbers it equals the loss difference).
    pub error_difference: f64,
    /// Standard error of the error-rate difference.
    pub error_difference_se: f64,
    /// Seconds spent training this forest and judging it.
    pub seconds: f64,
}

/// What [`tune`] found.
#[derive(Debug, Clone, Serialize)]
pub struct TuneReport {
    /// `brier` (classes) or `squared_error` (numbers): the loss settings are judged by.
    pub judged_by: &'static str,
    /// Every setting tried, in grid order.
    pub rows: Vec<TuneRow>,
    /// Index in `rows` of the default setting.
    pub default: usize,
    /// Index in `rows` of the recommended setting, when one beats the default by more
    /// than [`MARGIN`] standard errors.
    pub recommended: Option<usize>,
    /// Standard errors a setting must beat the default by ([`MARGIN`]).
    pub margin: f64,
    /// About how much choosing the best of these settings flatters its out-of-bag
    /// loss were none truly better: the median standard error of the differences times
    /// the expected largest of `G - 1` standard normals.
    pub selection_optimism: f64,
    /// Trees in each forest.
    pub trees: usize,
    /// The sampling every forest used (out-of-bag figures need resampling).
    pub sampling: Sampling,
}

/// Grows one forest per setting of `grid` (each with `base`'s other settings) on the
/// prepared data and compares their out-of-bag losses with those of `base` itself,
/// which is added to the grid when missing. `progress(done, total)` is called after
/// each forest.
///
/// # Errors
/// `InvalidSetting` when `base` draws no resamples ([`Sampling::Whole`]: there is no
/// out-of-bag error to judge by), for an empty grid or an inputs-per-split count outside
/// 1 to the number of inputs; the errors of [`Forest::train_prepared`].
///
/// # Example
/// ```
/// use copse_forest::tune::{tune, TuneGrid};
/// use copse_forest::{synth, CutChoice, ForestSettings, Prepared};
///
/// let d = synth::friedman1(300, 1);
/// let base = ForestSettings { trees: 30, ..Default::default() };
/// let prepared = Prepared::new(d.x.view(), &d.meta, &d.outcome, base.bins)?;
/// let grid = TuneGrid { features_per_split: vec![3, 10], min_leaf: vec![1.0], cuts: vec![CutChoice::Best] };
/// let report = tune(&prepared, &base, &grid, &|_, _| {})?;
/// assert_eq!(report.rows.len(), 2);
/// assert_eq!(report.judged_by, "squared_error");
/// # Ok::<(), copse_forest::Error>(())
/// ```
pub fn tune(
    prepared: &Prepared<'_>,
    base: &ForestSettings,
    grid: &TuneGrid,
    progress: &(dyn Fn(usize, usize) + Sync),
) -> Result<TuneReport> {
    base.validate()?;
    if base.sampling == Sampling::Whole {
        return bad_setting(
            "settings are judged by out-of-bag error, which needs resampling; use bootstrap or \
             subsample:F sampling",
        );
    }
    if grid.features_per_split.is_empty() || grid.min_leaf.is_empty() || grid.cuts.is_empty() {
        return bad_setting("the grid of settings to try is empty");
    }
    let outcome = prepared.outcome();
    let p = prepared.n_features();
    if let Some(&k) = grid.features_per_split.iter().find(|&&k| k == 0 || k > p) {
        return bad_setting(format!(
            "{k} inputs per split is out of range; the data have {p} inputs, so choose 1 to {p}"
        ));
    }
    let k0 = base.features_per_split.resolve(p, outcome.is_classes())?;
    let default = (k0, base.tree.min_leaf, base.tree.cuts);
    let mut settings = vec![default];
    for &k in &grid.features_per_split {
        for &leaf in &grid.min_leaf {
            for &cuts in &grid.cuts {
                if (k, leaf, cuts) != default {
                    settings.push((k, leaf, cuts));
                }
            }
        }
    }
    let total = settings.len();
    let options = TrainOptions {
        oob_importance: false,
        ..TrainOptions::default()
    };
    let n = outcome.len();
    let mut base_loss: Vec<Option<(f64, f64)>> = Vec::new();
    let mut rows = Vec::with_capacity(total);
    for (i, &(k, leaf, cuts)) in settings.iter().enumerate() {
        let started = std::time::Instant::now();
        let mut s = base.clone();
        // A count equal to the default's rule gives the same trees; keep the rule so
        // the default forest is exactly the one `copse train` grows.
        if i > 0 {
            s.features_per_split = FeaturesPerSplit::Count(k);
        }
        s.tree.min_leaf = leaf;
        s.tree.cuts = cuts;
        let trained = Forest::train_prepared(prepared, &s, &options)?;
        let preds = &trained.oob.predictions;
        let losses: Vec<Option<(f64, f64)>> = (0..n)
            .map(|r| {
                (!outcome.is_missing(r) && trained.oob.trees_out[r] > 0).then(|| {
                    let pr = preds.row(r);
                    let l = row_loss(outcome, r, pr.as_slice().unwrap_or(&pr.to_vec()));
                    (l.error, l.brier)
                })
            })
            .collect();
        if i == 0 {
            base_loss = losses.clone();
        }
        rows.push(judge(
            outcome,
            &losses,
            &base_loss,
            k,
            leaf,
            cuts,
            i == 0,
            started,
        ));
        progress(i + 1, total);
    }
    let recommended = rows
        .iter()
        .enumerate()
        .filter(|(_, r)| !r.is_default && r.loss_difference < -MARGIN * r.loss_difference_se)
        .min_by(|a, b| a.1.loss.total_cmp(&b.1.loss))
        .map(|(i, _)| i);
    let mut ses: Vec<f64> = rows
        .iter()
        .filter(|r| !r.is_default)
        .map(|r| r.loss_difference_se)
        .collect();
    ses.sort_by(f64::total_cmp);
    let selection_optimism = if ses.is_empty() {
        0.0
    } else {
        ses[ses.len() / 2] * expected_max_normal(ses.len())
    };
    Ok(TuneReport {
        judged_by: if outcome.is_classes() {
            "brier"
        } else {
            "squared_error"
        },
        rows,
        default: 0,
        recommended,
        margin: MARGIN,
        selection_optimism,
        trees: base.trees,
        sampling: base.sampling,
    })
}

/// One setting's row of the report from its per-row (error, Brier) losses and the
/// default's.
#[allow(clippy::too_many_arguments)]
fn judge(
    outcome: &Outcome,
    losses: &[Option<(f64, f64)>],
    base: &[Option<(f64, f64)>],
    k: usize,
    leaf: f64,
    cuts: CutChoice,
    is_default: bool,
    started: std::time::Instant,
) -> TuneRow {
    let classes = outcome.is_classes();
    // The judged loss of a row: Brier for classes, squared error (held in `error`) for
    // numbers.
    let judged = |l: (f64, f64)| if classes { l.1 } else { l.0 };
    let own: Vec<(f64, f64)> = losses.iter().flatten().copied().collect();
    let m = own.len().max(1) as f64;
    let error = own.iter().map(|l| l.0).sum::<f64>() / m;
    let brier = own.iter().map(|l| l.1).sum::<f64>() / m;
    let paired = losses
        .iter()
        .zip(base)
        .filter_map(|(a, b)| Some(((*a)?, (*b)?)));
    let (d_loss, d_err): (Vec<f64>, Vec<f64>) = paired
        .map(|(a, b)| (judged(a) - judged(b), a.0 - b.0))
        .unzip();
    let (loss_difference, loss_difference_se) = mean_se(&d_loss);
    let (error_difference, error_difference_se) = mean_se(&d_err);
    TuneRow {
        features_per_split: k,
        min_leaf: leaf,
        cuts: cuts.word(),
        is_default,
        rows_judged: own.len(),
        error,
        brier: classes.then_some(brier),
        loss: if classes { brier } else { error },
        loss_difference,
        loss_difference_se,
        error_difference,
        error_difference_se,
        seconds: started.elapsed().as_secs_f64(),
    }
}

/// Mean and standard error of the mean (`sd / sqrt(m)`, sd with `m - 1`).
fn mean_se(d: &[f64]) -> (f64, f64) {
    let m = d.len();
    if m == 0 {
        return (0.0, 0.0);
    }
    let mean = d.iter().sum::<f64>() / m as f64;
    if m < 2 {
        return (mean, 0.0);
    }
    let ss: f64 = d.iter().map(|x| (x - mean) * (x - mean)).sum();
    (mean, (ss / (m - 1) as f64 / m as f64).sqrt())
}

/// Expected largest of `g` independent standard normals, `integral of x g phi(x)
/// Phi(x)^(g-1) dx`, by the midpoint rule on [-9, 9] (the tails beyond add less than
/// 1e-15 for the grids tune uses).
pub fn expected_max_normal(g: usize) -> f64 {
    if g == 0 {
        return 0.0;
    }
    let (lo, hi, steps) = (-9.0f64, 9.0f64, 18_000);
    let h = (hi - lo) / steps as f64;
    let mut sum = 0.0;
    for i in 0..steps {
        let x = lo + (i as f64 + 0.5) * h;
        let phi = (-0.5 * x * x).exp() / (2.0 * std::f64::consts::PI).sqrt();
        sum += x * g as f64 * phi * normal_cdf(x).powi(g as i32 - 1);
    }
    sum * h
}

/// The standard normal distribution function, through the complementary error
/// function of Abramowitz & Stegun (1964), formula 7.1.26 (absolute error below
/// 1.5e-7).
fn normal_cdf(x: f64) -> f64 {
    let z = x.abs() / std::f64::consts::SQRT_2;
    let t = 1.0 / (1.0 + 0.327_591_1 * z);
    let poly = t
        * (0.254_829_592
            + t * (-0.284_496_736
                + t * (1.421_413_741 + t * (-1.453_152_027 + t * 1.061_405_429))));
    let erfc = poly * (-z * z).exp();
    if x >= 0.0 {
        1.0 - erfc / 2.0
    } else {
        erfc / 2.0
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Expected maxima of standard normals, from the tables of order statistics (for
    /// example Harter 1961, "Expected values of normal order statistics", Biometrika
    /// 48:151-165): 0.5642 for 2, 1.0294 for 4, 1.5388 for 10, 1.8675 for 20.
    #[test]
    fn expected_maxima_match_the_tables() {
        for (g, want) in [
            (1, 0.0),
            (2, 0.5642),
            (4, 1.0294),
            (10, 1.5388),
            (20, 1.8675),
        ] {
            let got = expected_max_normal(g);
            assert!((got - want).abs() < 2e-4, "{g}: {got}");
        }
    }

    #[test]
    fn mean_and_standard_error() {
        let (m, se) = mean_se(&[1.0, 2.0, 3.0, 4.0]);
        assert_eq!(m, 2.5);
        // sd = sqrt(5/3); se = sd / 2.
        assert!((se - (5.0f64 / 3.0).sqrt() / 2.0).abs() < 1e-15);
    }
}
