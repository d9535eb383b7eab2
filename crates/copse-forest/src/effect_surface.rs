//! Effect surfaces: how the forest's prediction moves as two inputs change together,
//! averaged over a data set (two-input partial dependence, Friedman 2001, "Greedy
//! function approximation: a gradient boosting machine", Annals of Statistics
//! 29:1189-1232, section 8.2), and how much of that surface the two inputs' separate
//! effects cannot explain (their interaction).
//!
//! For inputs `a`, `b` and grid values `u`, `v`, every row of the data is copied with
//! `a` set to `u` and `b` to `v` and scored; the surface's cell `(u, v)` is the mean of
//! those predictions. When the forest's function is a sum `g(a) + h(b) + rest(others)`
//! the surface is exactly `g(u) + h(v) + c`, so what is left after removing each row's
//! and each column's mean of the grid (double centring) is the interaction.
use crate::effects::{effect_grid, grid_slot, EffectGrid};
use crate::error::{Error, ErrorKind, Result};
use crate::forest::Forest;
use copse_tree::FeatureKind;
use ndarray::{Array2, Array3, ArrayView2, Axis, Slice};

/// How an effect surface is computed: a grid for each input.
#[derive(Debug, Clone, PartialEq)]
pub struct SurfaceSettings {
    /// The grid of the first input (the surface's rows).
    pub first: EffectGrid,
    /// The grid of the second input (the surface's columns).
    pub second: EffectGrid,
}

impl Default for SurfaceSettings {
    /// 12 quantiles from the 5th to the 95th percentile on each axis (144 cells: every
    /// row is scored 144 times).
    fn default() -> Self {
        let grid = EffectGrid::Quantiles {
            points: 12,
            low: 0.05,
            high: 0.95,
        };
        SurfaceSettings {
            first: grid.clone(),
            second: grid,
        }
    }
}

/// The effect surface of two inputs.
#[derive(Debug, Clone, PartialEq)]
pub struct EffectSurface {
    /// The two inputs' columns: the first along the rows of `mean`, the second along
    /// its columns.
    pub inputs: [usize; 2],
    /// The grid of each input (category codes for a categorical input).
    pub grids: [Vec<f64>; 2],
    /// Mean prediction in each cell: first grid by second grid by outputs (a layer
    /// per class in model order, or one layer of values).
    pub mean: Array3<f64>,
    /// The data rows nearest each cell (each input's value counted at its grid point as
    /// in [`crate::EffectCurve::counts`]): where the surface rests on few rows.
    pub counts: Array2<usize>,
    /// Rows missing either input (or holding a category not on its grid).
    pub missing: usize,
}

impl EffectSurface {
    /// The interaction part of output `k`'s surface: each cell minus its row's mean
    /// and its column's mean, plus the grand mean. Zero in every cell when the
    /// surface is a sum of a function of each input.
    ///
    /// # Panics
    /// When `k` is not an output of the surface.
    pub fn interaction(&self, k: usize) -> Array2<f64> {
        let layer = self.mean.index_axis(Axis(2), k);
        let (ga, gb) = layer.dim();
        let rows: Vec<f64> = layer
            .rows()
            .into_iter()
            .map(|r| r.sum() / gb as f64)
            .collect();
        let cols: Vec<f64> = layer
            .columns()
            .into_iter()
            .map(|c| c.sum() / ga as f64)
            .collect();
        let grand = rows.iter().sum::<f64>() / ga as f64;
        Array2::from_shape_fn((ga, gb), |(i, j)| layer[[i, j]] - rows[i] - cols[j] + grand)
    }

    /// The share of output `k`'s variation over the grid's cells that the interaction
    /// holds: the sum of squares of [`EffectSurface::interaction`] over the sum of
    /// squares of the centred surface, 0 for an additive surface and at most 1. A grid
    /// version of Friedman & Popescu's H statistic (2008, "Predictive learning via rule
    /// ensembles", Annals of Applied Statistics 2:916-954, section 8.1), with the grid
    /// cells weighted equally instead of the data rows; on quantile grids the cells are
    /// spread like the data along each axis. 0 when the surface is flat.
    ///
    /// # Panics
    /// When `k` is not an output of the surface.
    pub fn interaction_share(&self, k: usize) -> f64 {
        let layer = self.mean.index_axis(Axis(2), k);
        let grand = layer.mean().unwrap_or(0.0);
        let total: f64 = layer.iter().map(|v| (v - grand).powi(2)).sum();
        if total <= 0.0 {
            return 0.0;
        }
        self.interaction(k).iter().map(|v| v * v).sum::<f64>() / total
    }
}

impl Forest {
    /// The effect surface of inputs `a` and `b` over the rows of `x` (columns in the
    /// training order, categories as codes): the mean prediction in each cell of the
    /// two grids and the data's counts in the cells. Rows are scored one block at a
    /// time through [`Forest::predict`], so memory stays near one scoring block.
    ///
    /// # Errors
    /// `LengthMismatch` for a wrong number of columns; `InvalidSetting` for an input
    /// out of range, the same input twice, or a bad grid (as for
    /// [`Forest::effect_curve`]); `EmptyData` when `x` has no rows or a numeric input
    /// has no non-missing value.
    ///
    /// # Example
    /// ```
    /// use copse_forest::{synth, Forest, ForestSettings, SurfaceSettings, TrainOptions};
    ///
    /// let data = synth::friedman1(200, 1);
    /// let settings = ForestSettings { trees: 20, ..Default::default() };
    /// let options = TrainOptions { oob_importance: false, ..TrainOptions::default() };
    /// let forest = Forest::train(data.x.view(), &data.meta, &data.outcome, &settings, &options)?
    ///     .forest;
    /// let surface = forest.effect_surface(data.x.view(), 0, 1, &SurfaceSettings::default())?;
    /// assert_eq!(surface.mean.dim(), (12, 12, 1));
    /// assert_eq!(surface.counts.sum(), 200);
    /// # Ok::<(), copse_forest::Error>(())
    /// ```
    pub fn effect_surface(
        &self,
        x: ArrayView2<'_, f64>,
        a: usize,
        b: usize,
        settings: &SurfaceSettings,
    ) -> Result<EffectSurface> {
        self.check_columns(x)?;
        let p = self.n_features();
        if a >= p || b >= p {
            return Err(Error::new(
                ErrorKind::InvalidSetting,
                format!(
                    "input {} does not exist: the model has {p} inputs",
                    a.max(b)
                ),
            ));
        }
        if a == b {
            return Err(Error::new(
                ErrorKind::InvalidSetting,
                format!("a surface needs two different inputs, not input {a} twice"),
            ));
        }
        let n = x.nrows();
        if n == 0 {
            return Err(Error::new(
                ErrorKind::EmptyData,
                "an effect surface needs at least one row of data",
            ));
        }
        let levels = |j: usize| match &self.meta()[j].kind {
            FeatureKind::Categorical { levels } => Some(levels.len()),
            FeatureKind::Numeric => None,
        };
        let ga = effect_grid(x.column(a).iter().copied(), levels(a), &settings.first)?;
        let gb = effect_grid(x.column(b).iter().copied(), levels(b), &settings.second)?;
        let k = self.n_outputs();
        let mut sums = Array3::<f64>::zeros((ga.len(), gb.len(), k));

        let block = self.scoring_block_rows().min(n);
        let mut copy = Array2::<f64>::zeros((block, x.ncols()));
        for start in (0..n).step_by(block) {
            let end = (start + block).min(n);
            let mut part = copy.slice_axis_mut(Axis(0), Slice::from(0..end - start));
            part.assign(&x.slice_axis(Axis(0), Slice::from(start..end)));
            for (i, &u) in ga.iter().enumerate() {
                part.column_mut(a).fill(u);
                for (j, &v) in gb.iter().enumerate() {
                    part.column_mut(b).fill(v);
                    let pred = self.predict(part.view())?;
                    // Row by row in order, so the sum does not depend on the threads.
                    for row in pred.rows() {
                        for (o, &val) in row.iter().enumerate() {
                            sums[[i, j, o]] += val;
                        }
                    }
                }
            }
        }
        let mean = sums / n as f64;
        let mut counts = Array2::<usize>::zeros((ga.len(), gb.len()));
        let mut missing = 0;
        for row in x.rows() {
            match (
                grid_slot(row[a], &ga, levels(a).is_some()),
                grid_slot(row[b], &gb, levels(b).is_some()),
            ) {
                (Some(i), Some(j)) => counts[[i, j]] += 1,
                _ => missing += 1,
            }
        }
        Ok(EffectSurface {
            inputs: [a, b],
            grids: [ga, gb],
            mean,
            counts,
            missing,
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::settings::ForestSettings;
    use crate::synth;
    use crate::train::TrainOptions;

    fn friedman_forest(n: usize, data_seed: u64, seed: u64) -> (Forest, synth::Synthetic) {
        let data = synth::friedman1(n, data_seed);
        let settings = ForestSettings {
            trees: 200,
            seed,
            ..Default::default()
        };
        let options = TrainOptions {
            oob_importance: false,
            ..TrainOptions::default()
        };
        let forest = Forest::train(
            data.x.view(),
            &data.meta,
            &data.outcome,
            &settings,
            &options,
        )
        .unwrap()
        .forest;
        (forest, data)
    }

    fn rms(a: &Array2<f64>) -> f64 {
        (a.iter().map(|v| v * v).sum::<f64>() / a.len() as f64).sqrt()
    }

    /// Pearson correlation of two equal-length sets of values.
    fn correlation(a: &[f64], b: &[f64]) -> f64 {
        let n = a.len() as f64;
        let (ma, mb) = (a.iter().sum::<f64>() / n, b.iter().sum::<f64>() / n);
        let cov: f64 = a.iter().zip(b).map(|(x, y)| (x - ma) * (y - mb)).sum();
        let va: f64 = a.iter().map(|x| (x - ma).powi(2)).sum();
        let vb: f64 = b.iter().map(|y| (y - mb).powi(2)).sum();
        cov / (va * vb).sqrt()
    }

    #[test]
    fn friedman1_surfaces_show_the_one_interaction_of_the_formula() {
        // Friedman #1 (Friedman 1991, "Multivariate adaptive regression splines",
        // Annals of Statistics 19:1-67): y = 10 sin(pi x1 x2) + 20 (x3 - 0.5)^2
        // + 10 x4 + 5 x5 + N(0, 1), inputs independent U(0, 1). The surface of
        // (x1, x2) is 10 sin(pi u v) plus a constant; that of (x4, x5) is 10 u + 5 v
        // plus a constant, with no interaction at all.
        let (f1, d1) = friedman_forest(1000, 11, 5);
        let (f2, d2) = friedman_forest(1000, 12, 6);
        let s = SurfaceSettings::default();
        let x12 = f1.effect_surface(d1.x.view(), 0, 1, &s).unwrap();
        let truth: Vec<f64> = x12.grids[0]
            .iter()
            .flat_map(|&u| {
                x12.grids[1]
                    .iter()
                    .map(move |&v| 10.0 * (std::f64::consts::PI * u * v).sin())
            })
            .collect();
        let shape = correlation(&truth, &x12.mean.iter().copied().collect::<Vec<_>>());
        let x45 = f1.effect_surface(d1.x.view(), 3, 4, &s).unwrap();
        let x45_again = f2.effect_surface(d2.x.view(), 3, 4, &s).unwrap();
        // The interaction of an additive pair is estimation error only. Two forests on
        // independent samples err independently, so the rms of the difference of their
        // interaction parts is sqrt(2) times the rms error of one: the noise level.
        let noise = rms(&(&x45.interaction(0) - &x45_again.interaction(0))) / 2f64.sqrt();
        let (i12, i45) = (rms(&x12.interaction(0)), rms(&x45.interaction(0)));
        eprintln!(
            "correlation with 10 sin(pi x1 x2) {shape:.3}; rms interaction x1,x2 {i12:.3}, \
             x4,x5 {i45:.3}, noise level {noise:.3}; shares {:.4}, {:.4}",
            x12.interaction_share(0),
            x45.interaction_share(0)
        );
        // Seen: 0.96 (0.95 to 0.96 on three other samples). For an error uncorrelated
        // with the surface, the correlation is
        // 1 / sqrt(1 + (sd error / sd surface)^2); errors up to half the surface's
        // spread give 1 / sqrt(1.25) = 0.89.
        assert!(shape > 0.89, "correlation {shape}");
        // If the additive pair's interaction is estimation error alone, its rms is
        // about the noise level (ratio 1; seen 1.1 here, 0.8 to 1.6 on three other
        // pairs of samples). The cells of a smooth surface move together: the 144
        // count as about 10 independent values, so each rms is known to about
        // 1 / sqrt(2 * 10) = 22% and the ratio of two to about 31%; 2 is more than
        // three of those above 1.
        assert!(
            i45 < 2.0 * noise,
            "x4,x5 interaction {i45} against noise {noise}"
        );
        // The pair with a true interaction stands clear of the level the additive pair
        // must stay under (seen 6.6 times the noise level; 3.2 to 7 on other samples).
        assert!(
            i12 > 2.0 * noise,
            "x1,x2 interaction {i12} against noise {noise}"
        );
        // The true interaction of x1,x2 on this grid has rms 1.25 (from the formula);
        // the forest flattens it as it flattens one-input curves (seen 0.43 to 0.51 of
        // it over four samples); a third of it at least.
        assert!(i12 > 1.25 / 3.0, "x1,x2 interaction {i12}");
        assert!(x12.interaction_share(0) > x45.interaction_share(0));
        // Every row lies in one cell.
        assert_eq!(x12.counts.sum() + x12.missing, 1000);
    }

    #[test]
    fn interaction_is_what_a_sum_of_one_input_functions_leaves() {
        // Hand-made surfaces: u + 2 v is additive (no interaction); u v on the grid
        // {-1, 1} x {-1, 1} is all interaction (every row and column mean is 0).
        let grids = [vec![-1.0, 1.0], vec![-1.0, 1.0]];
        let surface = |f: fn(f64, f64) -> f64| EffectSurface {
            inputs: [0, 1],
            grids: grids.clone(),
            mean: Array3::from_shape_fn((2, 2, 1), |(i, j, _)| f(grids[0][i], grids[1][j])),
            counts: Array2::zeros((2, 2)),
            missing: 0,
        };
        let additive = surface(|u, v| u + 2.0 * v);
        assert!(additive.interaction(0).iter().all(|v| v.abs() < 1e-15));
        assert_eq!(additive.interaction_share(0), 0.0);
        let product = surface(|u, v| u * v + 3.0);
        assert_eq!(product.interaction_share(0), 1.0);
        assert_eq!(product.interaction(0)[[0, 1]], -1.0);
        assert_eq!(surface(|_, _| 4.0).interaction_share(0), 0.0);
    }

    #[test]
    fn surfaces_refuse_one_input_twice_and_unknown_inputs() {
        let data = synth::friedman1(50, 2);
        let settings = ForestSettings {
            trees: 5,
            ..Default::default()
        };
        let options = TrainOptions {
            oob_importance: false,
            ..TrainOptions::default()
        };
        let forest = Forest::train(
            data.x.view(),
            &data.meta,
            &data.outcome,
            &settings,
            &options,
        )
        .unwrap()
        .forest;
        let s = SurfaceSettings::default();
        for (a, b) in [(2, 2), (0, 10)] {
            let e = forest.effect_surface(data.x.view(), a, b, &s).unwrap_err();
            assert_eq!(e.kind(), ErrorKind::InvalidSetting, "{a},{b}");
        }
        // Each cell is the mean prediction of the changed rows.
        let grid = SurfaceSettings {
            first: EffectGrid::Values(vec![0.3]),
            second: EffectGrid::Values(vec![0.1, 0.8]),
        };
        let surface = forest.effect_surface(data.x.view(), 0, 3, &grid).unwrap();
        let mut changed = data.x.clone();
        changed.column_mut(0).fill(0.3);
        changed.column_mut(3).fill(0.8);
        let direct = forest.predict(changed.view()).unwrap().column(0).sum() / 50.0;
        assert!((surface.mean[[0, 1, 0]] - direct).abs() < 1e-12);
    }
}
