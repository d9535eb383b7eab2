//! How stable is each kind of model: one tree, bagged trees and a random forest are
//! each trained with several seeds on the same data, and the report says how much
//! their error, their held-out predictions and their importance rankings move from
//! seed to seed.
//!
//! Per seed `s`:
//! - single tree: every input at every split, no resampling. Grown on all rows such a
//!   tree is the same for every seed (the grower draws nothing at random when it tries
//!   every input, and breaks ties between equally good splits in a fixed order), so
//!   its seed-to-seed variation is measured through `folds`-fold cross-validation with
//!   folds drawn by the seed: error = cross-validated error, held-out prediction of a
//!   row = the prediction of the tree grown without its fold, importance = the
//!   held-out permutation importance of each fold's tree on its fold (one permutation,
//!   averaged over folds weighted by fold size);
//! - bagged trees: bootstrap samples, every input at every split;
//! - random forest: bootstrap samples, a random subset of inputs at every split.
//!
//! For both ensembles: error = out-of-bag error, held-out prediction = out-of-bag
//! prediction, importance = out-of-bag permutation importance. Importance is the
//! error measure (misclassification or mean squared error) throughout.
//!
//! The summaries over seeds (error spread, prediction change, agreement of rankings)
//! are in `stability/summary.rs`.
use crate::error::{bad_setting, Result};
use crate::forest::Forest;
use crate::metrics::predicted_class;
use crate::outcome::Outcome;
use crate::rng::{task_rng, Purpose};
use crate::settings::{FeaturesPerSplit, ForestSettings, Sampling};
use crate::significance::subset;
use crate::train::TrainOptions;
use copse_tree::FeatureMeta;
use ndarray::{Array2, ArrayView2, Axis};
use rand::seq::SliceRandom;
use rand::Rng as _;
use rayon::prelude::*;
use serde::{Deserialize, Serialize};

mod summary;
pub use summary::kendall_tau_b;
use summary::{held_out_error, outcome_sd, summarise};

/// What a stability study does.
#[derive(Debug, Clone, PartialEq)]
pub struct StabilitySettings {
    /// Number of seeds (at least 2; default 5).
    pub seeds: usize,
    /// Folds of the single tree's cross-validation (2 to the number of rows; default 5).
    pub folds: usize,
    /// Settings of the ensembles: number of trees, tree settings, bins, master seed.
    /// The random forest uses its inputs per split ([`FeaturesPerSplit::Default`] if
    /// they say [`FeaturesPerSplit::Every`]); bagged trees and the single tree use every
    /// input. Sampling is forced to bootstrap for the ensembles (out-of-bag error needs
    /// it) and to none for the single tree; `balanced` is kept for the ensembles.
    pub forest: ForestSettings,
}

impl Default for StabilitySettings {
    fn default() -> Self {
        StabilitySettings {
            seeds: 5,
            folds: 5,
            forest: ForestSettings::default(),
        }
    }
}

/// The kinds of model compared.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
pub enum ModelKind {
    /// One tree, all rows, every input at every split.
    SingleTree,
    /// Trees on bootstrap samples, every input at every split.
    BaggedTrees,
    /// A random forest: trees on bootstrap samples, a random subset of inputs at every
    /// split.
    Forest,
}

impl ModelKind {
    /// A short stable name for machine-read output: `one_tree`, `bagged_trees` or
    /// `random_forest`.
    pub fn key(self) -> &'static str {
        match self {
            ModelKind::SingleTree => "one_tree",
            ModelKind::BaggedTrees => "bagged_trees",
            ModelKind::Forest => "random_forest",
        }
    }
}

impl std::fmt::Display for ModelKind {
    /// The kind in words: "one tree", "bagged trees" or "random forest".
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(match self {
            ModelKind::SingleTree => "one tree",
            ModelKind::BaggedTrees => "bagged trees",
            ModelKind::Forest => "random forest",
        })
    }
}

/// How a kind of model varied over the seeds.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct KindStability {
    /// The kind of model.
    pub kind: ModelKind,
    /// Error per seed: cross-validated (single tree) or out-of-bag (ensembles);
    /// misclassification rate or mean squared error.
    pub errors: Vec<f64>,
    /// Mean of `errors`.
    pub error_mean: f64,
    /// Sample standard deviation of `errors` (n - 1 denominator).
    pub error_sd: f64,
    /// Smallest of `errors`.
    pub error_min: f64,
    /// Largest of `errors`.
    pub error_max: f64,
    /// Mean over pairs of seeds of the change in held-out predictions (see the module
    /// documentation); `None` when no pair had a row predicted in both.
    pub prediction_change: Option<f64>,
    /// Mean over pairs of seeds of Kendall's tau-b between importances; `None` when
    /// every pair had an importance vector with all values tied.
    pub rank_tau: Option<f64>,
    /// Importance per seed (outer) and input (inner, input order).
    pub importance: Vec<Vec<f64>>,
}

/// What [`stability_report`] returns.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct StabilityReport {
    /// Single tree, bagged trees, random forest, in that order.
    pub kinds: Vec<KindStability>,
    /// Number of seeds.
    pub seeds: usize,
    /// Folds of the single tree's cross-validation.
    pub folds: usize,
    /// Trees in each ensemble.
    pub trees: usize,
    /// Inputs per split of the random forest, as resolved for the data.
    pub forest_features_per_split: usize,
    /// Rows with a known outcome.
    pub rows: usize,
    /// True for a class outcome (errors are misclassification rates and the prediction
    /// change a share of rows), false for values (mean squared errors, relative root
    /// mean squared difference).
    pub classes: bool,
}

/// One seed's results for one kind.
struct Run {
    error: f64,
    /// Held-out prediction per row (class index as f64, or value); NaN when none.
    held_out: Vec<f64>,
    importance: Vec<f64>,
}

/// Trains the three kinds of model with `settings.seeds` seeds each and summarises how
/// they vary (see the module documentation). Seed series `s` draws the folds and the
/// ensembles' seeds from the generator for `(settings.forest.seed, s)`. Runs on the
/// current rayon pool; the report is the same for any number of threads.
/// `progress(done, total)` counts finished models.
///
/// # Errors
/// `InvalidSetting` for fewer than 2 seeds or folds out of range; the errors of
/// [`Forest::train`] for the data.
pub fn stability_report(
    x: ArrayView2<'_, f64>,
    meta: &[FeatureMeta],
    outcome: &Outcome,
    settings: &StabilitySettings,
    progress: &(dyn Fn(usize, usize) + Sync),
) -> Result<StabilityReport> {
    stability_report_grouped(x, meta, outcome, None, settings, progress)
}

/// [`stability_report`] for rows in `groups` (a group number per row, see
/// [`TrainOptions::groups`]): the ensembles draw whole groups, so their out-of-bag
/// figures judge rows only by trees that saw none of their group, and the single
/// tree's folds hold whole groups (drawn in a seed-drawn order of groups).
///
/// # Errors
/// As for [`stability_report`]; `InvalidSetting` for more folds than groups.
pub fn stability_report_grouped(
    x: ArrayView2<'_, f64>,
    meta: &[FeatureMeta],
    outcome: &Outcome,
    groups: Option<&[u32]>,
    settings: &StabilitySettings,
    progress: &(dyn Fn(usize, usize) + Sync),
) -> Result<StabilityReport> {
    if settings.seeds < 2 {
        return bad_setting("a stability report compares seeds, so it needs at least 2");
    }
    let labelled: Vec<usize> = (0..outcome.len())
        .filter(|&i| !outcome.is_missing(i))
        .collect();
    if settings.folds < 2 || settings.folds > labelled.len() {
        return bad_setting(format!(
            "cross-validation folds must be 2 to the number of rows with an outcome ({}); got {}",
            labelled.len(),
            settings.folds
        ));
    }
    let fewest = fewest_training_rows(labelled.len(), settings.folds);
    if fewest < 2 {
        let (n, f) = (labelled.len(), settings.folds);
        let remedy = match (f + 1..=n).find(|&g| fewest_training_rows(n, g) >= 2) {
            Some(g) => format!("use {g} folds or more, or more rows"),
            None => "add rows: 2 folds need at least 4 rows with an outcome".into(),
        };
        return bad_setting(format!(
            "with {n} rows with an outcome in {f} folds, the single tree of the largest fold is \
             trained on the other folds' {fewest} row(s), and a tree needs at least 2; {remedy}"
        ));
    }
    settings.forest.validate()?;
    let classes = outcome.is_classes();
    let p = x.ncols();
    let mut bagged = settings.forest.clone();
    bagged.features_per_split = FeaturesPerSplit::Every;
    bagged.sampling = Sampling::Bootstrap;
    let mut forest = bagged.clone();
    forest.features_per_split = match settings.forest.features_per_split {
        FeaturesPerSplit::Every => FeaturesPerSplit::Default,
        k => k,
    };
    let k_forest = forest.features_per_split.resolve(p, classes)?;

    let total = settings.seeds * (settings.folds + 2);
    let done = std::sync::atomic::AtomicUsize::new(0);
    let tick = |n: usize| {
        let d = done.fetch_add(n, std::sync::atomic::Ordering::Relaxed) + n;
        progress(d, total);
    };
    let mut runs: [Vec<Run>; 3] = [Vec::new(), Vec::new(), Vec::new()];
    for s in 0..settings.seeds {
        let mut rng = task_rng(settings.forest.seed, Purpose::Stability, s as u64, 0);
        let mut order = labelled.clone();
        order.shuffle(&mut rng);
        let fold_of = crate::case_weights::folds_of(&order, groups, settings.folds)?;
        runs[0].push(cross_validated_tree(
            x,
            meta,
            outcome,
            &settings.forest,
            &order,
            &fold_of,
            settings.folds,
            rng.next_u64(),
            &tick,
        )?);
        for (slot, base) in [(1, &bagged), (2, &forest)] {
            let mut st = base.clone();
            st.seed = rng.next_u64();
            runs[slot].push(ensemble_run(x, meta, outcome, groups, &st)?);
            tick(1);
        }
    }
    let scale = if classes {
        1.0
    } else {
        outcome_sd(outcome, &labelled)
    };
    let kinds = [
        ModelKind::SingleTree,
        ModelKind::BaggedTrees,
        ModelKind::Forest,
    ]
    .into_iter()
    .zip(runs)
    .map(|(kind, runs)| summarise(kind, &runs, &labelled, classes, scale))
    .collect();
    Ok(StabilityReport {
        kinds,
        seeds: settings.seeds,
        folds: settings.folds,
        trees: settings.forest.trees,
        forest_features_per_split: k_forest,
        rows: labelled.len(),
        classes,
    })
}

/// Rows the single tree of a fold is trained on, at fewest, when `n` rows are split
/// into `folds` folds (fold sizes differ by at most one): those outside the largest.
fn fewest_training_rows(n: usize, folds: usize) -> usize {
    n - n.div_ceil(folds.max(1))
}

/// The single tree's run for one seed: `folds`-fold cross-validation over `order`
/// (labelled rows in a seed-drawn order; fold `f` holds the positions `fold_of` puts
/// in it).
#[allow(clippy::too_many_arguments)]
fn cross_validated_tree(
    x: ArrayView2<'_, f64>,
    meta: &[FeatureMeta],
    outcome: &Outcome,
    base: &ForestSettings,
    order: &[usize],
    fold_of: &[usize],
    folds: usize,
    seed: u64,
    tick: &(dyn Fn(usize) + Sync),
) -> Result<Run> {
    let tree_settings = ForestSettings {
        trees: 1,
        features_per_split: FeaturesPerSplit::Every,
        sampling: Sampling::Whole,
        balanced: false,
        ..base.clone()
    };
    let options = TrainOptions {
        oob_importance: false,
        ..TrainOptions::default()
    };
    let n = x.nrows();
    let per_fold: Vec<(Vec<usize>, Vec<f64>, Vec<f64>)> = (0..folds)
        .into_par_iter()
        .map(|f| -> Result<(Vec<usize>, Vec<f64>, Vec<f64>)> {
            let (mut held, mut train) = (Vec::new(), Vec::new());
            for (&i, &fold) in order.iter().zip(fold_of) {
                if fold == f {
                    held.push(i)
                } else {
                    train.push(i)
                }
            }
            let (xt, yt) = (x.select(Axis(0), &train), subset(outcome, &train));
            let tree = Forest::train(xt.view(), meta, &yt, &tree_settings, &options)?.forest;
            let (xh, yh) = (x.select(Axis(0), &held), subset(outcome, &held));
            let preds = tree.predict(xh.view())?;
            let held_out = held_values(&preds, outcome.is_classes());
            // One permutation per input; a fold of one row cannot be permuted.
            let importance = if held.len() >= 2 {
                let imp = tree.permutation_importance(xh.view(), &yh, 1, seed ^ f as u64)?;
                imp.error.features.iter().map(|fi| fi.mean).collect()
            } else {
                vec![0.0; x.ncols()]
            };
            tick(1);
            Ok((held, held_out, importance))
        })
        .collect::<Result<Vec<_>>>()?;
    let mut held_out = vec![f64::NAN; n];
    let mut importance = vec![0.0; x.ncols()];
    for (rows, preds, imp) in &per_fold {
        for (&i, &v) in rows.iter().zip(preds) {
            held_out[i] = v;
        }
        let w = rows.len() as f64 / order.len() as f64;
        importance
            .iter_mut()
            .zip(imp)
            .for_each(|(a, v)| *a += w * v);
    }
    let error = held_out_error(outcome, &held_out, order);
    Ok(Run {
        error,
        held_out,
        importance,
    })
}

/// One ensemble trained on all rows (drawing whole `groups` when given).
fn ensemble_run(
    x: ArrayView2<'_, f64>,
    meta: &[FeatureMeta],
    outcome: &Outcome,
    groups: Option<&[u32]>,
    settings: &ForestSettings,
) -> Result<Run> {
    let options = TrainOptions {
        groups,
        ..TrainOptions::default()
    };
    let trained = Forest::train(x, meta, outcome, settings, &options)?;
    let error = trained
        .forest
        .oob()
        .metrics
        .as_ref()
        .map_or(f64::NAN, crate::metrics::Metrics::error);
    let held_out = held_values(&trained.oob.predictions, outcome.is_classes());
    let importance = match trained.forest.oob_importance() {
        Some(imp) => imp.error.features.iter().map(|f| f.mean).collect(),
        None => vec![0.0; x.ncols()],
    };
    Ok(Run {
        error,
        held_out,
        importance,
    })
}

/// Predicted class index (as f64) or value of each prediction row; NaN rows stay NaN.
fn held_values(preds: &Array2<f64>, classes: bool) -> Vec<f64> {
    preds
        .rows()
        .into_iter()
        .map(|r| {
            if r.iter().any(|v| v.is_nan()) {
                f64::NAN
            } else if classes {
                predicted_class(&r.to_vec()) as f64
            } else {
                r[0]
            }
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::error::ErrorKind;

    /// 3 rows in 2 folds leave a fold's tree 1 row to train on: refused for that reason
    /// (it once failed later, saying only 1 row had a known outcome), with the fold
    /// count that works; 3 folds of 3 rows train each tree on 2.
    #[test]
    fn folds_that_leave_a_tree_one_row_are_refused_for_that_reason() {
        assert_eq!(fewest_training_rows(3, 2), 1);
        assert_eq!(fewest_training_rows(3, 3), 2);
        assert_eq!(fewest_training_rows(4, 2), 2);
        assert_eq!(fewest_training_rows(10, 3), 6);
        let x = ndarray::Array2::from_shape_vec((3, 1), vec![1.0, 2.0, 3.0]).expect("shape");
        let meta = [FeatureMeta::numeric("a".to_string())];
        let outcome = Outcome::Values(vec![1.0, 2.0, 4.0]);
        let mut settings = StabilitySettings {
            folds: 2,
            ..StabilitySettings::default()
        };
        settings.forest.trees = 3;
        let e = stability_report(x.view(), &meta, &outcome, &settings, &|_, _| {})
            .expect_err("2 folds of 3 rows");
        assert_eq!(e.kind(), ErrorKind::InvalidSetting);
        assert!(
            e.message().contains("3 rows with an outcome in 2 folds")
                && e.message().contains("1 row(s)")
                && e.message().contains("use 3 folds or more"),
            "{e}"
        );
        settings.folds = 3;
        assert!(stability_report(x.view(), &meta, &outcome, &settings, &|_, _| {}).is_ok());
        let x2 = ndarray::Array2::from_shape_vec((2, 1), vec![1.0, 2.0]).expect("shape");
        let two = Outcome::Values(vec![1.0, 2.0]);
        settings.folds = 2;
        let e =
            stability_report(x2.view(), &meta, &two, &settings, &|_, _| {}).expect_err("2 rows");
        assert!(e.message().contains("add rows"), "{e}");
    }
}
