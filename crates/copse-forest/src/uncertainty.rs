//! Standard errors of forest predictions by the bias-corrected infinitesimal jackknife
//! (Wager, Hastie & Efron 2014, "Confidence intervals for random forests: the jackknife
//! and the infinitesimal jackknife", JMLR 15:1625-1651), for regression values and for
//! each class probability.
//!
//! For a query row, let `t_b` be tree `b`'s output (a leaf mean, or one class's leaf
//! share), `tbar` their mean over the `B` trees (the forest's prediction), and `N_bi`
//! the number of times tree `b`'s bootstrap sample drew training row `i`. The
//! infinitesimal jackknife estimates the variance of the prediction over training sets
//! drawn from the same population as
//!
//! ```text
//! V_IJ   = sum_i C_i^2,  C_i = (1/B) sum_b (N_bi - 1)(t_b - tbar)
//! V_IJ-U = V_IJ - (n / B^2) sum_b (t_b - tbar)^2
//! ```
//!
//! with `n` the number of rows each sample was drawn from. `V_IJ` computed from
//! finitely many trees carries Monte Carlo noise whose expected size is the subtracted
//! term, so it is biased upward; `V_IJ-U` removes that bias (Wager et al., section 2.1,
//! formula quoted from memory). Both are returned. Because `sum_b (t_b - tbar) = 0`,
//! `C_i = (1/B) sum_b N_bi (t_b - tbar)`, which is what is computed (zero counts skip
//! work).
//!
//! The corrected estimate can come out negative when the trees are few relative to the
//! rows (the correction is then large and noisy); it is set to 0, the number of such
//! entries is reported ([`Uncertainty::clamped`]), and the remedy is more trees. The
//! formula assumes plain bootstrap samples, so other sampling schemes are refused.
//!
//! Cost: for each query row, one pass over `training rows x trees x outputs`
//! multiply-adds. The draw counts must have been kept at training time
//! ([`crate::TrainOptions::keep_draws`]).
use crate::error::{Error, ErrorKind, Result};
use crate::forest::Forest;
use crate::settings::Sampling;
use ndarray::{Array2, ArrayView2};
use rayon::prelude::*;

/// Query rows per parallel block: the centred tree outputs of a block (`rows x outputs
/// x trees` numbers) are reused for every training row, so a block should be large
/// enough to amortise reading the draw table and small enough to stay in cache.
const BLOCK_ROWS: usize = 32;

/// Predictions with their estimated variances over training sets.
#[derive(Debug, Clone, PartialEq)]
pub struct Uncertainty {
    /// The forest's predictions (rows x outputs), as [`Forest::predict`] gives them.
    pub predictions: Array2<f64>,
    /// Bias-corrected infinitesimal-jackknife variance `V_IJ-U` of each prediction,
    /// set to 0 where the estimate came out negative.
    pub variance: Array2<f64>,
    /// Uncorrected infinitesimal-jackknife variance `V_IJ` (never below `variance`).
    pub variance_uncorrected: Array2<f64>,
    /// The Monte Carlo bias correction `(n / B^2) sum_b (t_b - tbar)^2`; the corrected
    /// estimate before clamping is `variance_uncorrected - correction`.
    pub correction: Array2<f64>,
    /// Number of entries where `V_IJ-U` was negative and was set to 0.
    pub clamped: usize,
    /// True where `V_IJ-U` was negative and was set to 0 in `variance`: the standard
    /// error there is unknown (rows x outputs).
    pub unknown: Array2<bool>,
}

impl Uncertainty {
    /// Standard errors: the square roots of [`Uncertainty::variance`], `None` where
    /// the bias-corrected estimate came out negative ([`Uncertainty::unknown`]): the
    /// error there is unknown, not zero.
    pub fn std_errors(&self) -> Array2<Option<f64>> {
        ndarray::Zip::from(&self.variance)
            .and(&self.unknown)
            .map_collect(|&v, &unknown| (!unknown).then(|| v.sqrt()))
    }

    /// Standard errors from the uncorrected variance.
    pub fn std_errors_uncorrected(&self) -> Array2<f64> {
        self.variance_uncorrected.mapv(f64::sqrt)
    }
}

/// One block's results.
struct BlockOut {
    pred: Vec<f64>,
    corrected: Vec<f64>,
    raw: Vec<f64>,
    correction: Vec<f64>,
    unknown: Vec<bool>,
}

impl Forest {
    /// Predictions for `x` with their infinitesimal-jackknife variances (see the module
    /// documentation). Blocks of rows run in parallel on the current rayon pool; the
    /// result is the same for any number of threads.
    ///
    /// # Errors
    /// `InvalidSetting` when the model holds no draw counts, was not trained with
    /// plain bootstrap samples, has fewer than two trees, or has saturated counts;
    /// `LengthMismatch` when `x` has the wrong number of columns.
    ///
    /// # Example
    /// ```
    /// use copse_forest::{synth, Forest, ForestSettings, TrainOptions};
    ///
    /// let data = synth::friedman1(100, 1);
    /// let settings = ForestSettings { trees: 200, ..Default::default() };
    /// let options = TrainOptions { keep_draws: true, oob_importance: false, ..Default::default() };
    /// let forest = Forest::train(data.x.view(), &data.meta, &data.outcome, &settings, &options)?
    ///     .forest;
    /// let query = synth::friedman1(4, 2);
    /// let u = forest.prediction_uncertainty(query.x.view())?;
    /// assert_eq!(u.predictions, forest.predict(query.x.view())?);
    /// // `None` where the bias-corrected variance came out negative.
    /// let se = u.std_errors();
    /// assert_eq!(se.dim(), (4, 1));
    /// assert_eq!(se.iter().filter(|s| s.is_none()).count(), u.clamped);
    /// # Ok::<(), copse_forest::Error>(())
    /// ```
    pub fn prediction_uncertainty(&self, x: ArrayView2<'_, f64>) -> Result<Uncertainty> {
        let draws = self.usable_draws()?;
        self.check_columns(x)?;
        let (m, k) = (x.nrows(), self.n_outputs());
        let b = self.trees.len();
        let n_pop = draws.population() as f64;
        let blocks: Vec<BlockOut> = (0..m.div_ceil(BLOCK_ROWS))
            .into_par_iter()
            .map(|blk| {
                let start = blk * BLOCK_ROWS;
                let rows = BLOCK_ROWS.min(m - start);
                let width = rows * k;
                // Tree outputs, tree-major: entry (b, r * k + c).
                let mut t = vec![0.0; b * width];
                for (tb, tree) in self.trees.iter().enumerate() {
                    for r in 0..rows {
                        let row = x.row(start + r);
                        let leaf = tree.leaf_index_with(|j| row[j]);
                        let dst = &mut t[tb * width + r * k..tb * width + (r + 1) * k];
                        dst.copy_from_slice(&tree.leaf_value(leaf));
                    }
                }
                // Forest prediction: trees summed in tree order, as `predict` does.
                let mut mean = vec![0.0; width];
                for tb in 0..b {
                    mean.iter_mut()
                        .zip(&t[tb * width..(tb + 1) * width])
                        .for_each(|(s, v)| *s += v);
                }
                mean.iter_mut().for_each(|s| *s /= b as f64);
                // Centre, and sum the squared deviations for the correction.
                let mut spread = vec![0.0; width];
                for tb in 0..b {
                    let col = &mut t[tb * width..(tb + 1) * width];
                    for ((v, mu), s) in col.iter_mut().zip(&mean).zip(spread.iter_mut()) {
                        *v -= mu;
                        *s += *v * *v;
                    }
                }
                // C_i for every training row, squared and summed.
                let mut v_ij = vec![0.0; width];
                let mut c = vec![0.0; width];
                for i in 0..draws.rows() {
                    let counts = draws.row(i);
                    if counts.iter().all(|&n| n == 0) {
                        // Never drawn (or outcome missing): C_i = 0.
                        continue;
                    }
                    c.iter_mut().for_each(|v| *v = 0.0);
                    for (tb, &n) in counts.iter().enumerate() {
                        if n == 0 {
                            continue;
                        }
                        let nf = f64::from(n);
                        c.iter_mut()
                            .zip(&t[tb * width..(tb + 1) * width])
                            .for_each(|(acc, v)| *acc += nf * v);
                    }
                    v_ij.iter_mut().zip(&c).for_each(|(s, ci)| {
                        let ci = ci / b as f64;
                        *s += ci * ci;
                    });
                }
                let correction: Vec<f64> = spread
                    .iter()
                    .map(|s| n_pop * s / (b as f64 * b as f64))
                    .collect();
                let unknown: Vec<bool> = v_ij
                    .iter()
                    .zip(&correction)
                    .map(|(v, c)| v - c < 0.0)
                    .collect();
                let corrected = v_ij
                    .iter()
                    .zip(&correction)
                    .map(|(v, c)| if v - c < 0.0 { 0.0 } else { v - c })
                    .collect();
                BlockOut {
                    pred: mean,
                    corrected,
                    raw: v_ij,
                    correction,
                    unknown,
                }
            })
            .collect();
        let mut pred = Vec::with_capacity(m * k);
        let mut var = Vec::with_capacity(m * k);
        let mut raw = Vec::with_capacity(m * k);
        let mut corr = Vec::with_capacity(m * k);
        let mut unknown = Vec::with_capacity(m * k);
        for blk in blocks {
            pred.extend(blk.pred);
            var.extend(blk.corrected);
            raw.extend(blk.raw);
            corr.extend(blk.correction);
            unknown.extend(blk.unknown);
        }
        let shape = |v: Vec<f64>| {
            Array2::from_shape_vec((m, k), v).expect("m rows of k outputs by construction")
        };
        let clamped = unknown.iter().filter(|&&u| u).count();
        Ok(Uncertainty {
            predictions: shape(pred),
            variance: shape(var),
            variance_uncorrected: shape(raw),
            correction: shape(corr),
            clamped,
            unknown: Array2::from_shape_vec((m, k), unknown)
                .expect("m rows of k outputs by construction"),
        })
    }

    /// The draw table, if this model's standard errors can be computed from it.
    fn usable_draws(&self) -> Result<&crate::draws::Draws> {
        let refuse = |why: &str| Err(Error::new(ErrorKind::InvalidSetting, why.to_string()));
        let Some(draws) = self.draws.as_ref() else {
            return refuse(
                "the model holds no draw counts, which standard errors need; retrain it \
                 keeping them",
            );
        };
        if self.settings.sampling != Sampling::Bootstrap || self.settings.balanced {
            return refuse(
                "standard errors by the infinitesimal jackknife assume plain bootstrap samples; \
                 retrain with bootstrap sampling and without class balancing",
            );
        }
        if self.trees.len() < 2 {
            return refuse("standard errors need at least two trees; retrain with more");
        }
        if draws.saturated() > 0 {
            return refuse(
                "some draw counts exceeded 255 and were stored as 255, so standard errors \
                 would be wrong; this needs a tiny data set with very many draws of one row",
            );
        }
        Ok(draws)
    }
}
