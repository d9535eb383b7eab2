//! Effect curves: how the forest's prediction moves as one input changes, averaged
//! over a data set (partial dependence, Friedman 2001, "Greedy function approximation:
//! a gradient boosting machine", Annals of Statistics 29:1189-1232, section 8.2) and for
//! single rows (individual conditional expectation curves, Goldstein, Kapelner, Bleich &
//! Pitkin 2015, "Peeking inside the black box", J. Comp. Graph. Stat. 24:44-65).
//!
//! For input `j` and a grid value `v`, every row of the data is copied with its value of
//! `j` replaced by `v` and scored by the forest; the curve's point at `v` is the mean of
//! those predictions (each class's probability, or the value), and row `i`'s own curve is
//! its prediction at each `v`. The data's own values of `j` are counted around each grid
//! point, so a caller can show where the curve rests on little data (a forest predicts
//! flat beyond the training range, and near the edges its curves flatten because the
//! leaves there average over neighbours that lie further in).
use crate::error::{Error, ErrorKind, Result};
use crate::forest::Forest;
use copse_tree::FeatureKind;
use ndarray::{Array2, Array3, ArrayView2, Axis, Slice};

/// Where an effect curve is evaluated.
#[derive(Debug, Clone, PartialEq)]
pub enum EffectGrid {
    /// For a numeric input: `points` quantiles of the input's non-missing values in the
    /// data, evenly spaced in probability from `low` to `high` (linear interpolation
    /// between order statistics), equal neighbours merged. For a categorical input the
    /// grid is every category of the model, whatever these numbers say.
    Quantiles {
        /// Number of quantiles asked for (at least 1).
        points: usize,
        /// Lowest probability, in [0, 1].
        low: f64,
        /// Highest probability, in [low, 1].
        high: f64,
    },
    /// These values, in this order (for a categorical input: category codes).
    Values(Vec<f64>),
}

impl Default for EffectGrid {
    /// 20 quantiles from the 5th to the 95th percentile: the outer 5% on each side are
    /// left out because there the curve rests on few rows.
    fn default() -> Self {
        EffectGrid::Quantiles {
            points: 20,
            low: 0.05,
            high: 0.95,
        }
    }
}

/// How an effect curve is computed.
#[derive(Debug, Clone, PartialEq)]
pub struct EffectSettings {
    /// The grid of values the input is set to.
    pub grid: EffectGrid,
    /// Most rows whose own curves are kept.
    pub row_curves: usize,
    /// How the kept rows are chosen: `None`, evenly spaced over the data (row
    /// `floor(i * n / m)` for `i` in `0..m`); `Some(seed)`, a simple random sample
    /// drawn with this seed ([`sample_rows`]). Either way the same data and settings
    /// always give the same rows.
    pub row_seed: Option<u64>,
}

impl Default for EffectSettings {
    /// The default grid and 50 evenly spaced row curves (more make a plot unreadable).
    fn default() -> Self {
        EffectSettings {
            grid: EffectGrid::default(),
            row_curves: 50,
            row_seed: None,
        }
    }
}

/// `m` of the rows `0..n` drawn without replacement with `seed`, ascending (all rows
/// when `n <= m`). Each set of `m` rows is equally likely: Floyd's algorithm (Bentley
/// & Floyd 1987, "Programming pearls: a sample of brilliance", Comm. ACM 30:754-757),
/// which draws `m` numbers whatever `n` is.
///
/// # Example
/// ```
/// let rows = copse_forest::effects::sample_rows(1000, 5, 7);
/// assert_eq!(rows.len(), 5);
/// assert!(rows.windows(2).all(|w| w[0] < w[1]) && rows[4] < 1000);
/// assert_eq!(rows, copse_forest::effects::sample_rows(1000, 5, 7));
/// ```
pub fn sample_rows(n: usize, m: usize, seed: u64) -> Vec<usize> {
    use rand::RngExt as _;
    if m >= n {
        return (0..n).collect();
    }
    let mut rng = crate::rng::task_rng(seed, crate::rng::Purpose::EffectRows, n as u64, m as u64);
    let mut chosen = std::collections::BTreeSet::new();
    for j in n - m..n {
        let t = rng.random_range(0..=j);
        if !chosen.insert(t) {
            chosen.insert(j);
        }
    }
    chosen.into_iter().collect()
}

/// An effect curve of one input.
#[derive(Debug, Clone, PartialEq)]
pub struct EffectCurve {
    /// The input's column.
    pub input: usize,
    /// Grid values (category codes for a categorical input), ascending for quantiles.
    pub grid: Vec<f64>,
    /// Mean prediction at each grid value: grid points by outputs (a column per class
    /// in model order, or one column of values).
    pub mean: Array2<f64>,
    /// The data rows whose own curves are kept, ascending.
    pub rows: Vec<usize>,
    /// Those rows' predictions: kept rows by grid points by outputs.
    pub row_curves: Array3<f64>,
    /// The data's values of the input nearest each grid point (numeric: between the
    /// midpoints to the neighbouring grid points, the end intervals open; categorical:
    /// rows of that category); values are assigned to the earlier point on a tie.
    pub counts: Vec<usize>,
    /// Rows whose value of the input is missing (or, for a categorical input, not a
    /// category on the grid).
    pub missing: usize,
}

impl Forest {
    /// The effect curve of `input` over the rows of `x` (columns in the training order,
    /// categories as codes): the mean prediction at each grid value, the curves of a
    /// thinned sample of rows, and the data's counts along the grid. Scoring runs
    /// through [`Forest::predict`] one block of rows at a time, so memory stays near
    /// one scoring block whatever the number of rows.
    ///
    /// # Errors
    /// `LengthMismatch` for a wrong number of columns; `InvalidSetting` for an input
    /// out of range, bad quantile settings or grid values that are not finite (or not
    /// category codes of a categorical input); `EmptyData` when `x` has no rows or a
    /// numeric input has no non-missing value to take quantiles of.
    ///
    /// # Example
    /// ```
    /// use copse_forest::{synth, EffectSettings, Forest, ForestSettings, TrainOptions};
    ///
    /// let data = synth::friedman1(300, 1);
    /// let settings = ForestSettings { trees: 30, ..Default::default() };
    /// let options = TrainOptions { oob_importance: false, ..TrainOptions::default() };
    /// let forest = Forest::train(data.x.view(), &data.meta, &data.outcome, &settings, &options)?
    ///     .forest;
    /// let curve = forest.effect_curve(data.x.view(), 3, &EffectSettings::default())?;
    /// assert_eq!(curve.mean.nrows(), curve.grid.len());
    /// assert_eq!(curve.row_curves.dim(), (50, curve.grid.len(), 1));
    /// # Ok::<(), copse_forest::Error>(())
    /// ```
    pub fn effect_curve(
        &self,
        x: ArrayView2<'_, f64>,
        input: usize,
        settings: &EffectSettings,
    ) -> Result<EffectCurve> {
        self.check_columns(x)?;
        if input >= self.n_features() {
            return Err(Error::new(
                ErrorKind::InvalidSetting,
                format!(
                    "input {input} does not exist: the model has {} inputs",
                    self.n_features()
                ),
            ));
        }
        let n = x.nrows();
        if n == 0 {
            return Err(Error::new(
                ErrorKind::EmptyData,
                "an effect curve needs at least one row of data",
            ));
        }
        let levels = match &self.meta()[input].kind {
            FeatureKind::Categorical { levels } => Some(levels.len()),
            FeatureKind::Numeric => None,
        };
        let grid = effect_grid(x.column(input).iter().copied(), levels, &settings.grid)?;
        let (g, k) = (grid.len(), self.n_outputs());
        let rows = match settings.row_seed {
            None => thinned_rows(n, settings.row_curves),
            Some(seed) => sample_rows(n, settings.row_curves, seed),
        };
        let mut sums = Array2::<f64>::zeros((g, k));
        let mut row_curves = Array3::<f64>::zeros((rows.len(), g, k));

        let block = self.scoring_block_rows().min(n);
        let mut copy = Array2::<f64>::zeros((block, x.ncols()));
        let mut next_kept = 0;
        for start in (0..n).step_by(block) {
            let end = (start + block).min(n);
            let mut part = copy.slice_axis_mut(Axis(0), Slice::from(0..end - start));
            part.assign(&x.slice_axis(Axis(0), Slice::from(start..end)));
            let kept_here: Vec<(usize, usize)> = rows[next_kept..]
                .iter()
                .take_while(|&&r| r < end)
                .enumerate()
                .map(|(i, &r)| (next_kept + i, r - start))
                .collect();
            next_kept += kept_here.len();
            for (p, &v) in grid.iter().enumerate() {
                part.column_mut(input).fill(v);
                let pred = self.predict(part.view())?;
                // Row by row in order, so the sum does not depend on the threads.
                for row in pred.rows() {
                    for (s, &o) in sums.row_mut(p).iter_mut().zip(row) {
                        *s += o;
                    }
                }
                for &(slot, local) in &kept_here {
                    row_curves
                        .index_axis_mut(Axis(0), slot)
                        .row_mut(p)
                        .assign(&pred.row(local));
                }
            }
        }
        let mean = sums / n as f64;
        let (counts, missing) = count_along(x.column(input).iter().copied(), &grid, levels);
        Ok(EffectCurve {
            input,
            grid,
            mean,
            rows,
            row_curves,
            counts,
            missing,
        })
    }
}

/// The grid of an effect curve, checked.
pub(crate) fn effect_grid(
    values: impl Iterator<Item = f64>,
    levels: Option<usize>,
    grid: &EffectGrid,
) -> Result<Vec<f64>> {
    let bad = |m: String| Err(Error::new(ErrorKind::InvalidSetting, m));
    match (grid, levels) {
        (EffectGrid::Values(v), _) if v.is_empty() => bad("the grid has no values".into()),
        (EffectGrid::Values(v), _) if v.iter().any(|x| !x.is_finite()) => {
            bad("grid values must be finite numbers".into())
        }
        (EffectGrid::Values(v), Some(l))
            if v.iter()
                .any(|&c| c < 0.0 || c.fract() != 0.0 || c >= l as f64) =>
        {
            bad(format!(
                "grid values of a categorical input must be category codes 0..{l}"
            ))
        }
        (EffectGrid::Values(v), _) => Ok(v.clone()),
        (EffectGrid::Quantiles { .. }, Some(l)) => Ok((0..l).map(|c| c as f64).collect()),
        (EffectGrid::Quantiles { points, low, high }, None) => {
            if *points == 0 || !(0.0..=1.0).contains(low) || !(*low..=1.0).contains(high) {
                return bad(format!(
                    "quantile grid of {points} points from {low} to {high}: need at least \
                     one point and 0 <= low <= high <= 1"
                ));
            }
            let mut sorted: Vec<f64> = values.filter(|v| !v.is_nan()).collect();
            if sorted.is_empty() {
                return Err(Error::new(
                    ErrorKind::EmptyData,
                    "the input has no non-missing value to place a grid on",
                ));
            }
            sorted.sort_by(f64::total_cmp);
            let mut out: Vec<f64> = (0..*points)
                .map(|i| {
                    let p = if *points == 1 {
                        *low
                    } else {
                        low + (high - low) * i as f64 / (*points - 1) as f64
                    };
                    quantile(&sorted, p)
                })
                .collect();
            out.dedup();
            Ok(out)
        }
    }
}

/// The `p` quantile of ascending `sorted` values (not empty) by linear interpolation
/// between order statistics at position `p (n - 1)` (Hyndman & Fan 1996, "Sample
/// quantiles in statistical packages", American Statistician 50:361-365, definition 7).
fn quantile(sorted: &[f64], p: f64) -> f64 {
    let h = p * (sorted.len() - 1) as f64;
    let lo = h.floor() as usize;
    let hi = (lo + 1).min(sorted.len() - 1);
    sorted[lo] + (h - lo as f64) * (sorted[hi] - sorted[lo])
}

/// `m` row indices evenly spaced over `n` rows (all rows when `n <= m`).
fn thinned_rows(n: usize, m: usize) -> Vec<usize> {
    let m = m.min(n);
    (0..m).map(|i| i * n / m).collect()
}

/// Counts of `values` by nearest grid point (numeric) or by category, and the missing.
fn count_along(
    values: impl Iterator<Item = f64>,
    grid: &[f64],
    levels: Option<usize>,
) -> (Vec<usize>, usize) {
    let mut counts = vec![0; grid.len()];
    let mut missing = 0;
    for v in values {
        match grid_slot(v, grid, levels.is_some()) {
            Some(i) => counts[i] += 1,
            None => missing += 1,
        }
    }
    (counts, missing)
}

/// The grid point value `v` is counted at: a categorical input's own category, a
/// numeric input's nearest grid point (the earlier one on a tie); `None` when `v` is
/// missing or a category not on the grid.
pub(crate) fn grid_slot(v: f64, grid: &[f64], categorical: bool) -> Option<usize> {
    if v.is_nan() {
        None
    } else if categorical {
        grid.iter().position(|&c| c == v)
    } else {
        // A user grid need not be sorted, so every point is looked at.
        grid.iter()
            .enumerate()
            .fold(None, |best: Option<(usize, f64)>, (i, &c)| {
                let d = (v - c).abs();
                match best {
                    Some((_, bd)) if bd <= d => best,
                    _ => Some((i, d)),
                }
            })
            .map(|(i, _)| i)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::outcome::Outcome;
    use crate::settings::ForestSettings;
    use crate::synth;
    use crate::train::TrainOptions;
    use copse_tree::FeatureMeta;

    fn no_importance() -> TrainOptions<'static> {
        TrainOptions {
            oob_importance: false,
            ..TrainOptions::default()
        }
    }

    /// Least-squares slope of the curve over grid points in [0.1, 0.9]: the central
    /// 80% of the range of a uniform [0, 1] input.
    fn central_slope(curve: &EffectCurve) -> f64 {
        let pts: Vec<(f64, f64)> = curve
            .grid
            .iter()
            .zip(curve.mean.column(0))
            .filter(|(&v, _)| (0.1..=0.9).contains(&v))
            .map(|(&v, &m)| (v, m))
            .collect();
        let n = pts.len() as f64;
        let mx = pts.iter().map(|p| p.0).sum::<f64>() / n;
        let my = pts.iter().map(|p| p.1).sum::<f64>() / n;
        let sxy: f64 = pts.iter().map(|p| (p.0 - mx) * (p.1 - my)).sum();
        let sxx: f64 = pts.iter().map(|p| (p.0 - mx).powi(2)).sum();
        sxy / sxx
    }

    #[test]
    fn friedman1_curves_follow_the_generating_formula() {
        // Friedman #1 (Friedman 1991, "Multivariate adaptive regression splines",
        // Annals of Statistics 19:1-67): y = 10 sin(pi x1 x2) + 20 (x3 - 0.5)^2
        // + 10 x4 + 5 x5 + N(0, 1), x6..x10 noise. The inputs are independent, so the
        // partial dependence on x4 is 10 x4 plus a constant, on x5 5 x5, on x3 a
        // parabola with its minimum at 0.5, and flat on x6..x10.
        let data = synth::friedman1(1000, 11);
        let settings = ForestSettings {
            trees: 200,
            seed: 5,
            ..Default::default()
        };
        let forest = Forest::train(
            data.x.view(),
            &data.meta,
            &data.outcome,
            &settings,
            &no_importance(),
        )
        .unwrap()
        .forest;
        let curve = |j| {
            forest
                .effect_curve(data.x.view(), j, &EffectSettings::default())
                .unwrap()
        };
        let (x3, x4, x5) = (curve(2), curve(3), curve(4));
        let (s4, s5) = (central_slope(&x4), central_slope(&x5));
        let at = |c: &EffectCurve| c.mean.column(0).to_vec();
        let m3 = at(&x3);
        let argmin = (0..m3.len())
            .min_by(|&a, &b| m3[a].total_cmp(&m3[b]))
            .unwrap();
        let ranges: Vec<f64> = (5..10)
            .map(|j| {
                let m = at(&curve(j));
                m.iter().cloned().fold(f64::MIN, f64::max)
                    - m.iter().cloned().fold(f64::MAX, f64::min)
            })
            .collect();
        eprintln!(
            "slope x4 {s4:.3}, slope x5 {s5:.3}, x3 minimum at {:.3} (curve {:?}), \
             noise ranges {ranges:.3?}",
            x3.grid[argmin], m3
        );
        // The forest's slopes are below the true 10 and 5 (seen: about 9.0 and 3.4, and
        // the x3 parabola about half its true depth of 4): its curves flatten where
        // leaves average over neighbouring values, most at the edges, and a weak input
        // such as x5 loses splits to the stronger ones.
        assert!((7.0..=11.0).contains(&s4), "slope of x4 {s4}");
        assert!((3.0..=6.5).contains(&s5), "slope of x5 {s5}");
        assert!((0.35..=0.65).contains(&x3.grid[argmin]));
        // U-shaped: both ends above the minimum.
        assert!(m3[0] > m3[argmin] + 0.5 && m3[m3.len() - 1] > m3[argmin] + 0.5);
        for (j, r) in ranges.iter().enumerate() {
            assert!(*r < 0.5, "x{} ranges over {r}", j + 6);
        }
        // The grid runs from about the 5th to the 95th percentile of U(0, 1) and the
        // counts cover every row (no missing values in the data).
        assert!((x4.grid[0] - 0.05).abs() < 0.03 && (x4.grid[19] - 0.95).abs() < 0.03);
        assert_eq!(x4.counts.iter().sum::<usize>() + x4.missing, 1000);
        assert_eq!(x4.missing, 0);
    }

    #[test]
    fn mean_and_row_curves_are_the_predictions_of_changed_rows() {
        let data = synth::friedman1(120, 3);
        let settings = ForestSettings {
            trees: 10,
            ..Default::default()
        };
        let forest = Forest::train(
            data.x.view(),
            &data.meta,
            &data.outcome,
            &settings,
            &no_importance(),
        )
        .unwrap()
        .forest;
        let grid = vec![0.2, 0.7, -1.0];
        let effect = EffectSettings {
            grid: EffectGrid::Values(grid.clone()),
            row_curves: 7,
            row_seed: None,
        };
        let curve = forest.effect_curve(data.x.view(), 1, &effect).unwrap();
        assert_eq!(curve.rows, vec![0, 17, 34, 51, 68, 85, 102]);
        for (p, &v) in grid.iter().enumerate() {
            let mut changed = data.x.clone();
            changed.column_mut(1).fill(v);
            let pred = forest.predict(changed.view()).unwrap();
            let mean = pred.column(0).sum() / 120.0;
            assert!((curve.mean[[p, 0]] - mean).abs() < 1e-12);
            for (slot, &r) in curve.rows.iter().enumerate() {
                assert_eq!(curve.row_curves[[slot, p, 0]], pred[[r, 0]]);
            }
        }
        // -1 is below every value: nothing lies nearest to it.
        assert_eq!(curve.counts[2], 0);
        assert_eq!(curve.counts.iter().sum::<usize>(), 120);
    }

    #[test]
    fn a_categorical_input_gets_one_point_per_category_and_class_probabilities() {
        // Class "b" exactly when the category is 2: the curve of that category must
        // give "b" most of the probability and the others little.
        let n = 300;
        let mut x = Array2::<f64>::zeros((n, 2));
        let mut labels = Vec::with_capacity(n);
        for i in 0..n {
            x[[i, 0]] = (i % 3) as f64;
            x[[i, 1]] = (i % 7) as f64;
            labels.push(Some(if i % 3 == 2 { "b" } else { "a" }));
        }
        x[[0, 0]] = f64::NAN;
        let meta = vec![
            FeatureMeta {
                name: "colour".into(),
                kind: FeatureKind::Categorical {
                    levels: vec!["red".into(), "green".into(), "blue".into()],
                },
            },
            FeatureMeta::numeric("other"),
        ];
        let outcome = Outcome::from_labels(labels);
        let settings = ForestSettings {
            trees: 20,
            ..Default::default()
        };
        let forest = Forest::train(x.view(), &meta, &outcome, &settings, &no_importance())
            .unwrap()
            .forest;
        let curve = forest
            .effect_curve(x.view(), 0, &EffectSettings::default())
            .unwrap();
        assert_eq!(curve.grid, vec![0.0, 1.0, 2.0]);
        assert_eq!(curve.counts, vec![99, 100, 100]);
        assert_eq!(curve.missing, 1);
        let b = forest.classes().iter().position(|c| c == "b").unwrap();
        assert!(curve.mean[[2, b]] > 0.9 && curve.mean[[0, b]] < 0.1);
        for row in curve.mean.rows() {
            assert!((row.sum() - 1.0).abs() < 1e-12);
        }
        let bad = EffectSettings {
            grid: EffectGrid::Values(vec![3.0]),
            ..EffectSettings::default()
        };
        let err = forest.effect_curve(x.view(), 0, &bad).unwrap_err();
        assert_eq!(err.kind(), ErrorKind::InvalidSetting);
    }

    #[test]
    fn quantiles_interpolate_between_order_statistics() {
        // Definition 7 of Hyndman & Fan: the median of 1..4 is 2.5, the 0.1 quantile
        // of 1..11 is 2.
        assert_eq!(quantile(&[1.0, 2.0, 3.0, 4.0], 0.5), 2.5);
        let eleven: Vec<f64> = (1..=11).map(f64::from).collect();
        assert_eq!(quantile(&eleven, 0.1), 2.0);
        // Few distinct values: equal quantiles are merged.
        let grid = effect_grid(
            [1.0, 1.0, 1.0, 2.0, f64::NAN].into_iter(),
            None,
            &EffectGrid::default(),
        )
        .unwrap();
        assert!(grid.windows(2).all(|w| w[0] < w[1]) && grid[0] == 1.0);
    }

    #[test]
    fn seeded_rows_are_a_uniform_sample_without_repeats() {
        // 4000 draws of 3 rows of 10: each row is chosen with probability 0.3, so its
        // count is Binomial(4000, 0.3), mean 1200 and sd sqrt(4000 * 0.3 * 0.7) = 29;
        // 5 sd either side is 145.
        let mut counts = [0usize; 10];
        for seed in 0..4000 {
            let rows = sample_rows(10, 3, seed);
            assert_eq!(rows.len(), 3);
            assert!(rows.windows(2).all(|w| w[0] < w[1]) && rows[2] < 10);
            for r in rows {
                counts[r] += 1;
            }
        }
        assert!(counts.iter().all(|&c| c.abs_diff(1200) < 145), "{counts:?}");
        assert_eq!(sample_rows(4, 9, 1), vec![0, 1, 2, 3]);
        // The kept curves follow the seed, and each is its row's own.
        let data = synth::friedman1(60, 3);
        let settings = ForestSettings {
            trees: 5,
            ..Default::default()
        };
        let forest = Forest::train(
            data.x.view(),
            &data.meta,
            &data.outcome,
            &settings,
            &no_importance(),
        )
        .unwrap()
        .forest;
        let effect = EffectSettings {
            grid: EffectGrid::Values(vec![0.5]),
            row_curves: 4,
            row_seed: Some(9),
        };
        let curve = forest.effect_curve(data.x.view(), 0, &effect).unwrap();
        assert_eq!(curve.rows, sample_rows(60, 4, 9));
        let mut changed = data.x.clone();
        changed.column_mut(0).fill(0.5);
        let pred = forest.predict(changed.view()).unwrap();
        for (slot, &r) in curve.rows.iter().enumerate() {
            assert_eq!(curve.row_curves[[slot, 0, 0]], pred[[r, 0]]);
        }
    }
}
