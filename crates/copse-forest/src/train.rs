//! Training: grow the trees in parallel on one shared binned copy of the data, then
//! compute the out-of-bag estimates and importance, all combined in tree-index order
//! so the model is the same for any number of threads.
use crate::error::{bad_setting, Error, ErrorKind, Result};
use crate::forest::{Forest, Task, Trained};
use crate::importance::{impurity_importance, oob_permutation};
use crate::inbag::InBag;
use crate::oob::{out_of_bag, OobMask};
use crate::outcome::Outcome;
use crate::rng::{task_rng, task_seed, Purpose};
use crate::sample::Sampler;
use crate::settings::ForestSettings;
use copse_tree::{BinnedData, FeatureMeta, Grower, Tree};
use ndarray::ArrayView2;
use rayon::prelude::*;
use std::sync::atomic::{AtomicUsize, Ordering};

/// Which phase of training a [`Progress`] report is about.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Stage {
    /// Growing trees (`done` trees of `total`).
    Growing,
    /// Out-of-bag predictions (`done` row blocks of `total`).
    OutOfBag,
    /// Out-of-bag permutation importance (`done` trees of `total`).
    Importance,
}

/// A progress report: `done` units of `total` finished in `stage`. Reports may arrive
/// from several threads at once and slightly out of order.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Progress {
    /// The phase.
    pub stage: Stage,
    /// Units finished so far.
    pub done: usize,
    /// Units in the phase.
    pub total: usize,
}

/// Optional records a training run keeps beyond what every model holds.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub struct TrainOptions {
    /// Keep in the model how many times each tree drew each training row (one byte per
    /// row and tree; see [`InBag`]). Needed for standard errors of predictions
    /// ([`Forest::prediction_uncertainty`]). Default false.
    pub keep_inbag: bool,
}

/// One tree and what training needs to remember about its sample.
struct Grown {
    tree: Tree,
    bag_weight: f64,
    oob: OobMask,
    /// In-bag counts and how many saturated, when asked for.
    inbag: Option<(Vec<u8>, usize)>,
}

impl Forest {
    /// Trains a forest on the current rayon thread pool (wrap the call in
    /// `ThreadPool::install` to choose the number of threads; the result is the same
    /// for any number).
    ///
    /// `x` is rows by inputs (any memory layout); numeric inputs use NaN for missing,
    /// categorical inputs hold category codes as numbers. Rows whose outcome is
    /// missing are never drawn into a tree; they still get out-of-bag predictions
    /// (from every tree) but count in no accuracy measure.
    ///
    /// # Errors
    /// `InvalidSetting` for bad settings; `LengthMismatch`, `EmptyData`, `BadValue`,
    /// `TooLarge` for data that does not fit; `NoTargets` with fewer than two known
    /// outcomes.
    pub fn train(
        x: ArrayView2<'_, f64>,
        meta: &[FeatureMeta],
        outcome: &Outcome,
        settings: &ForestSettings,
    ) -> Result<Trained> {
        Self::train_with_progress(x, meta, outcome, settings, &|_| {})
    }

    /// [`Forest::train`] with a callback told about progress (for a progress bar).
    ///
    /// # Errors
    /// As [`Forest::train`].
    pub fn train_with_progress(
        x: ArrayView2<'_, f64>,
        meta: &[FeatureMeta],
        outcome: &Outcome,
        settings: &ForestSettings,
        progress: &(dyn Fn(Progress) + Sync),
    ) -> Result<Trained> {
        Self::train_with_options(
            x,
            meta,
            outcome,
            settings,
            TrainOptions::default(),
            progress,
        )
    }

    /// [`Forest::train_with_progress`] with optional records kept in the model
    /// ([`TrainOptions`]).
    ///
    /// # Errors
    /// As [`Forest::train`].
    pub fn train_with_options(
        x: ArrayView2<'_, f64>,
        meta: &[FeatureMeta],
        outcome: &Outcome,
        settings: &ForestSettings,
        options: TrainOptions,
        progress: &(dyn Fn(Progress) + Sync),
    ) -> Result<Trained> {
        settings.validate()?;
        let (n, p) = x.dim();
        if outcome.len() != n {
            return Err(Error::new(
                ErrorKind::LengthMismatch,
                format!(
                    "{n} data rows but {} outcomes; they must match",
                    outcome.len()
                ),
            ));
        }
        outcome.validate()?;
        if settings.balanced && !outcome.is_classes() {
            return bad_setting(
                "balanced sampling draws cases per class; it needs a class outcome",
            );
        }
        let data = BinnedData::new(x, meta, settings.bin_limit)?;
        let k = settings
            .features_per_split
            .resolve(p, outcome.is_classes())?;
        let mut tree_settings = settings.tree.clone();
        tree_settings.features_per_split = (k < p).then_some(k);
        tree_settings.validate()?;
        let target = outcome.target()?;
        let sampler = Sampler::new(outcome, settings.sampling, settings.balanced)?;

        let n_trees = settings.trees;
        let done = AtomicUsize::new(0);
        let grown: Vec<Grown> = (0..n_trees)
            .into_par_iter()
            .map_init(
                || (Grower::new(tree_settings.clone()), vec![0.0; n], Vec::new()),
                |(grower, weights, scratch), t| -> Result<Grown> {
                    let mut sample_rng = task_rng(settings.seed, Purpose::Sample, t as u64, 0);
                    sampler.draw(&mut sample_rng, weights, scratch);
                    let grow_seed = task_seed(settings.seed, Purpose::Grow, t as u64, 0);
                    let tree = grower.grow(&data, &target, weights, grow_seed)?;
                    let bag_weight = weights.iter().sum();
                    let oob = OobMask::from_weights(weights);
                    let inbag = options.keep_inbag.then(|| InBag::column(weights));
                    let d = done.fetch_add(1, Ordering::Relaxed) + 1;
                    progress(Progress {
                        stage: Stage::Growing,
                        done: d,
                        total: n_trees,
                    });
                    Ok(Grown {
                        tree,
                        bag_weight,
                        oob,
                        inbag,
                    })
                },
            )
            .collect::<Result<Vec<_>>>()?;
        drop(data);

        let mut trees = Vec::with_capacity(n_trees);
        let mut masks = Vec::with_capacity(n_trees);
        let mut bag_weights = Vec::with_capacity(n_trees);
        let mut inbag_columns = Vec::new();
        let mut saturated = 0;
        for g in grown {
            trees.push(g.tree);
            masks.push(g.oob);
            bag_weights.push(g.bag_weight);
            if let Some((col, sat)) = g.inbag {
                inbag_columns.push(col);
                saturated += sat;
            }
        }
        let inbag = options
            .keep_inbag
            .then(|| InBag::from_tree_columns(&inbag_columns, n, outcome.n_labelled(), saturated));
        drop(inbag_columns);
        let (report, summary) = out_of_bag(&trees, &masks, x, outcome, progress);
        let oob_importance = if settings.oob_importance {
            oob_permutation(&trees, &masks, x, outcome, meta, settings.seed, progress)
        } else {
            None
        };
        let impurity = impurity_importance(&trees, &bag_weights, meta, outcome, &settings.tree);
        let task = match outcome {
            Outcome::Classes { labels, .. } => Task::Classification {
                classes: labels.clone(),
            },
            Outcome::Values(_) => Task::Regression,
        };
        let forest = Forest {
            meta: meta.to_vec(),
            task,
            trees,
            settings: settings.clone(),
            features_per_split: k,
            training_rows: n,
            oob: summary,
            oob_importance,
            impurity_importance: impurity,
            inbag,
        };
        Ok(Trained {
            forest,
            oob: report,
        })
    }
}
