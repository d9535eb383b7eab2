//! Training: grow the trees in parallel on one shared binned copy of the data, then
//! compute the out-of-bag estimates and importance, all combined in tree-index order
//! so the model is the same for any number of threads.
use crate::card::ModelCard;
use crate::case_weights::{checked_groups, checked_weights};
use crate::draws::Draws;
use crate::error::{bad_setting, Error, ErrorKind, Result};
use crate::fingerprint::RowFingerprint;
use crate::forest::{Forest, Trained};
use crate::importance::impurity_importance;
use crate::intervals::{oob_check, OOB_CHECK_LEVEL};
use crate::leaf_rows::{outcome_ranks, LeafRows, TreeRows};
use crate::oob::{out_of_bag, OobMask};
use crate::oob_importance::oob_permutation;
use crate::outcome::Outcome;
use crate::progress::{Progress, Stage};
use crate::rng::{task_rng, task_seed, Purpose};
use crate::sample::Sampler;
use crate::settings::ForestSettings;
use crate::task::Task;
use copse_tree::{BinnedData, FeatureMeta, Grower, Tree};
use ndarray::ArrayView2;
use rayon::prelude::*;
use std::sync::atomic::{AtomicUsize, Ordering};

/// What a training run does beyond growing the trees, with what every model holds:
/// the extras that cost time or memory, and a progress callback.
#[derive(Clone, Copy)]
pub struct TrainOptions<'a> {
    /// Compute out-of-bag permutation importance while training (default true).
    pub oob_importance: bool,
    /// Keep in the model how many times each tree drew each training row (one byte per
    /// row and tree; see [`Draws`]). Needed for standard errors of predictions
    /// ([`Forest::prediction_uncertainty`]). Default false.
    pub keep_draws: bool,
    /// Keep in the model the training rows of every leaf with their draw counts and
    /// the training outcomes (see [`LeafRows`] for the bytes), so that
    /// [`Forest::outcome_quantiles`] and [`Forest::outcome_intervals`] can give
    /// quantiles and ranges of the outcome; training also measures how often outcomes
    /// fall inside their out-of-bag 90% range ([`LeafRows::oob_check`]). Regression
    /// only. Default false.
    pub keep_leaf_rows: bool,
    /// Told about progress (for a progress bar); reports may come from several threads
    /// at once. Default none.
    pub progress: Option<&'a (dyn Fn(Progress) + Sync)>,
    /// Case weights, one per row (finite, 0 or more on rows with a known outcome): a
    /// weight counts cases, each tree draws cases in proportion to the weights, and
    /// every out-of-bag figure and importance weighs rows by them (see
    /// [`crate::case_weights`]). Weights all 1 give the same model as none, byte for
    /// byte. Default none.
    pub case_weights: Option<&'a [f64]>,
    /// A group number per row: resampling draws whole groups, so a row is out of bag
    /// only for trees that drew no row of its group (see [`crate::case_weights`]).
    /// Default none.
    pub groups: Option<&'a [u32]>,
}

impl Default for TrainOptions<'_> {
    fn default() -> Self {
        TrainOptions {
            oob_importance: true,
            keep_draws: false,
            keep_leaf_rows: false,
            progress: None,
            case_weights: None,
            groups: None,
        }
    }
}

impl std::fmt::Debug for TrainOptions<'_> {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("TrainOptions")
            .field("oob_importance", &self.oob_importance)
            .field("keep_draws", &self.keep_draws)
            .field("keep_leaf_rows", &self.keep_leaf_rows)
            .field("progress", &self.progress.map(|_| "callback"))
            .field("case_weights", &self.case_weights.map(<[f64]>::len))
            .field("groups", &self.groups.map(<[u32]>::len))
            .finish()
    }
}

/// One tree and what training needs to remember about its sample.
struct Grown {
    tree: Tree,
    bag_weight: f64,
    oob: OobMask,
    /// Draw counts and how many saturated, when asked for.
    draws: Option<(Vec<u8>, usize)>,
    /// The rows of each leaf, when asked for.
    leaf_rows: Option<TreeRows>,
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
    /// outcomes (or groups, or rows of positive weight); `BadValue` for a negative or
    /// non-finite case weight; `InvalidSetting` for draw counts kept with case weights
    /// or groups (standard errors assume plain bootstrap draws of rows).
    ///
    /// # Example
    /// ```
    /// use copse_forest::{synth, Forest, ForestSettings, Progress, TrainOptions};
    /// use std::sync::atomic::{AtomicUsize, Ordering};
    ///
    /// let data = synth::friedman1(200, 1);
    /// let settings = ForestSettings { trees: 40, ..Default::default() };
    /// // Keep the draw counts (for standard errors) and count the progress reports.
    /// let reports = AtomicUsize::new(0);
    /// let progress = |_: Progress| {
    ///     reports.fetch_add(1, Ordering::Relaxed);
    /// };
    /// let options = TrainOptions {
    ///     keep_draws: true,
    ///     progress: Some(&progress),
    ///     ..TrainOptions::default()
    /// };
    /// let trained = Forest::train(data.x.view(), &data.meta, &data.outcome, &settings, &options)?;
    /// assert_eq!(trained.forest.trees().len(), 40);
    /// assert!(trained.forest.draws().is_some());
    /// assert!(trained.forest.oob_importance().is_some());
    /// assert!(reports.load(Ordering::Relaxed) >= 40);
    /// # Ok::<(), copse_forest::Error>(())
    /// ```
    pub fn train(
        x: ArrayView2<'_, f64>,
        meta: &[FeatureMeta],
        outcome: &Outcome,
        settings: &ForestSettings,
        options: &TrainOptions<'_>,
    ) -> Result<Trained> {
        settings.validate()?;
        let n = x.nrows();
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
        let data = BinnedData::new(x, meta, settings.bin_limit())?;
        train_binned(x, meta, outcome, Held::Owned(data), settings, options)
    }

    /// Trains a forest on data binned once by [`Prepared::new`], so that several
    /// settings can be tried on one copy (as [`crate::tune`] does). The result is the
    /// one [`Forest::train`] gives for the same data and settings, bit for bit.
    ///
    /// # Errors
    /// As for [`Forest::train`], and `InvalidSetting` when `settings.bins` is not the
    /// bin count the data was prepared with.
    ///
    /// # Example
    /// ```
    /// use copse_forest::{synth, Forest, ForestSettings, Prepared, TrainOptions};
    ///
    /// let d = synth::twonorm(200, 1);
    /// let settings = ForestSettings { trees: 20, ..Default::default() };
    /// let prepared = Prepared::new(d.x.view(), &d.meta, &d.outcome, settings.bins)?;
    /// let once = Forest::train_prepared(&prepared, &settings, &TrainOptions::default())?;
    /// let plain = Forest::train(d.x.view(), &d.meta, &d.outcome, &settings, &TrainOptions::default())?;
    /// assert_eq!(once.forest, plain.forest);
    /// # Ok::<(), copse_forest::Error>(())
    /// ```
    pub fn train_prepared(
        prepared: &Prepared<'_>,
        settings: &ForestSettings,
        options: &TrainOptions<'_>,
    ) -> Result<Trained> {
        settings.validate()?;
        if settings.bins != prepared.bins {
            return bad_setting(format!(
                "the data were binned with at most {} value bins per input, but the settings ask \
                 for {}; prepare the data again with the settings' bins",
                prepared.bins, settings.bins
            ));
        }
        let outcome = prepared.outcome;
        if settings.balanced && !outcome.is_classes() {
            return bad_setting(
                "balanced sampling draws cases per class; it needs a class outcome",
            );
        }
        train_binned(
            prepared.x,
            prepared.meta,
            outcome,
            Held::Borrowed(&prepared.data),
            settings,
            options,
        )
    }
}

/// Data made ready once for training several forests ([`Forest::train_prepared`]): the
/// rows, their outcome, and the inputs binned.
#[derive(Debug)]
pub struct Prepared<'a> {
    x: ArrayView2<'a, f64>,
    meta: &'a [FeatureMeta],
    outcome: &'a Outcome,
    data: BinnedData,
    bins: usize,
}

impl<'a> Prepared<'a> {
    /// Bins `x` (as [`Forest::train`] takes it) with at most `bins` value bins per
    /// numeric input ([`ForestSettings::bins`]).
    ///
    /// # Errors
    /// `LengthMismatch` when `outcome` and `x` differ in rows; the errors of an outcome
    /// that cannot be modelled and of data that cannot be binned, as for
    /// [`Forest::train`]; `InvalidSetting` for a bin count outside 2 to 65535.
    pub fn new(
        x: ArrayView2<'a, f64>,
        meta: &'a [FeatureMeta],
        outcome: &'a Outcome,
        bins: usize,
    ) -> Result<Self> {
        let n = x.nrows();
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
        let check = ForestSettings {
            bins,
            ..ForestSettings::default()
        };
        check.validate()?;
        let data = BinnedData::new(x, meta, check.bin_limit())?;
        Ok(Prepared {
            x,
            meta,
            outcome,
            data,
            bins,
        })
    }

    /// The outcome the data were prepared with.
    pub fn outcome(&self) -> &Outcome {
        self.outcome
    }

    /// Number of inputs.
    pub fn n_features(&self) -> usize {
        self.meta.len()
    }
}

/// The binned data of one training run: its own (freed once the trees are grown) or
/// a prepared copy shared between runs.
enum Held<'d> {
    Owned(BinnedData),
    Borrowed(&'d BinnedData),
}

impl Held<'_> {
    fn get(&self) -> &BinnedData {
        match self {
            Held::Owned(d) => d,
            Held::Borrowed(d) => d,
        }
    }
}

/// Everything of training after the binning.
fn train_binned(
    x: ArrayView2<'_, f64>,
    meta: &[FeatureMeta],
    outcome: &Outcome,
    held: Held<'_>,
    settings: &ForestSettings,
    options: &TrainOptions<'_>,
) -> Result<Trained> {
    {
        let progress: &(dyn Fn(Progress) + Sync) = options.progress.unwrap_or(&|_| {});
        let (n, p) = x.dim();
        let data = held.get();
        let k = settings
            .features_per_split
            .resolve(p, outcome.is_classes())?;
        let tree_settings = settings.tree.tree_settings((k < p).then_some(k));
        tree_settings.validate()?;
        let target = outcome.view()?;
        let weighted = checked_weights(options.case_weights, outcome)?;
        let grouped = checked_groups(options.groups, outcome)?;
        if options.keep_draws && (weighted.is_some() || grouped.is_some()) {
            return bad_setting(
                "standard errors of predictions assume plain bootstrap draws of rows; draw \
                 counts cannot be kept with case weights or row groups",
            );
        }
        if options.keep_leaf_rows && weighted.is_some() {
            return bad_setting(
                "outcome ranges weight the training outcomes by whole draws; leaf rows cannot \
                 be kept with case weights yet, so drop keep_leaf_rows or the case weights",
            );
        }
        let (weights, weights_record) = weighted.map_or((None, None), |(w, r)| (Some(w), Some(r)));
        let (clusters, groups_record) = grouped.map_or((None, None), |(c, r)| (Some(c), Some(r)));
        let sampler = Sampler::new(
            outcome,
            settings.sampling,
            settings.balanced,
            weights,
            clusters,
        )?;
        let ranks = match (options.keep_leaf_rows, outcome) {
            (false, _) => None,
            (true, Outcome::Values(y)) => Some(outcome_ranks(y)),
            (true, Outcome::Classes { .. }) => {
                return bad_setting(
                    "leaf rows are kept for quantiles of a numeric outcome; this outcome is \
                     classes, so drop keep_leaf_rows",
                )
            }
        };

        let n_trees = settings.trees;
        let done = AtomicUsize::new(0);
        let grown: Vec<Grown> = (0..n_trees)
            .into_par_iter()
            .map_init(
                || {
                    let buffers = (vec![0.0; n], Vec::new(), Vec::new());
                    (Grower::new(tree_settings.clone()), buffers)
                },
                |(grower, (counts, scratch, case_buf)), t| -> Result<Grown> {
                    let mut sample_rng = task_rng(settings.seed, Purpose::Sample, t as u64, 0);
                    sampler.draw(&mut sample_rng, counts, scratch);
                    let case = sampler.case_weights(counts, case_buf);
                    let grow_seed = task_seed(settings.seed, Purpose::Grow, t as u64, 0);
                    let tree = grower.grow(data, &target, case, grow_seed)?;
                    let bag_weight = case.iter().sum();
                    // Out of bag: never drawn (with row groups: no row of its group
                    // drawn), whatever its case weight.
                    let oob = OobMask::from_weights(counts);
                    let draws = options.keep_draws.then(|| Draws::column(counts));
                    let leaf_rows = ranks
                        .as_ref()
                        .map(|(rank, _)| TreeRows::collect(&tree, x, counts, rank));
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
                        draws,
                        leaf_rows,
                    })
                },
            )
            .collect::<Result<Vec<_>>>()?;
        let bins = data.bins().to_vec();
        drop(held);

        let mut trees = Vec::with_capacity(n_trees);
        let mut masks = Vec::with_capacity(n_trees);
        let mut bag_weights = Vec::with_capacity(n_trees);
        let mut draw_columns = Vec::new();
        let mut saturated = 0;
        let mut tree_rows = Vec::new();
        for g in grown {
            trees.push(g.tree);
            masks.push(g.oob);
            bag_weights.push(g.bag_weight);
            if let Some((col, sat)) = g.draws {
                draw_columns.push(col);
                saturated += sat;
            }
            tree_rows.extend(g.leaf_rows);
        }
        let draws = options
            .keep_draws
            .then(|| Draws::from_tree_columns(&draw_columns, n, outcome.n_labelled(), saturated));
        drop(draw_columns);
        let fingerprint = RowFingerprint::of_rows(
            outcome.n_labelled(),
            x.rows()
                .into_iter()
                .enumerate()
                .filter(|(i, _)| !outcome.is_missing(*i))
                .map(|(_, r)| r.into_iter().copied()),
        );
        // A balanced model's probabilities are shifted back to the training class
        // shares, with factors fitted on its raw out-of-bag probabilities (see
        // crate::priors); that takes one more out-of-bag pass.
        let prior_shift = match outcome {
            Outcome::Classes { codes, labels } if settings.balanced => {
                let shares = crate::priors::training_shares(codes, labels.len(), weights);
                let (raw, _) = out_of_bag(&trees, &masks, x, outcome, weights, None, &|_| {});
                Some(crate::priors::fitted_shift(raw.predictions.view(), &shares))
            }
            _ => None,
        };
        let (report, summary) = out_of_bag(
            &trees,
            &masks,
            x,
            outcome,
            weights,
            prior_shift.as_deref(),
            progress,
        );
        let oob_importance = if options.oob_importance {
            oob_permutation(
                &trees,
                &masks,
                x,
                outcome,
                weights,
                meta,
                settings.seed,
                progress,
            )
        } else {
            None
        };
        let leaf_rows = match (ranks, outcome) {
            (Some((_, sorted)), Outcome::Values(y)) => {
                let mut rows = LeafRows::new(sorted, tree_rows);
                rows.oob_check = oob_check(&trees, &masks, x, y, &rows, OOB_CHECK_LEVEL);
                Some(rows)
            }
            _ => None,
        };
        let impurity =
            impurity_importance(&trees, &bag_weights, meta, outcome, settings.tree.impurity);
        let (task, classes) = match outcome {
            Outcome::Classes { labels, .. } => (Task::Classify, labels.clone()),
            Outcome::Values(_) => (Task::Regress, Vec::new()),
        };
        let mut card = ModelCard::for_outcome(outcome, settings.features_per_split.to_string());
        card.weights = weights_record;
        card.groups = groups_record;
        let forest = Forest {
            meta: meta.to_vec(),
            task,
            classes,
            trees,
            settings: settings.clone(),
            features_per_split: k,
            training_rows: n,
            oob: summary,
            oob_importance,
            impurity_importance: impurity,
            draws,
            bins,
            card,
            prior_shift,
            fingerprint,
            leaf_rows,
        };
        Ok(Trained {
            forest,
            oob: report,
        })
    }
}
