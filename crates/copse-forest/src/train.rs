//! Training: grow the trees in parallel on one shared binned copy of the data, then
//! compute the out-of-bag estimates and importance, all combined in tree-index order
//! so the model is the same for any number of threads.
use crate::card::ModelCard;
use crate::draws::Draws;
use crate::error::{bad_setting, Error, ErrorKind, Result};
use crate::fingerprint::RowFingerprint;
use crate::forest::{Forest, Trained};
use crate::importance::impurity_importance;
use crate::oob::{out_of_bag, OobMask};
use crate::oob_importance::{oob_permutation, oob_tables, TreeIncreases};
use crate::outcome::Outcome;
use crate::progress::{Progress, Stage};
use crate::rng::{task_rng, task_seed, Purpose};
use crate::sample::Sampler;
use crate::settings::ForestSettings;
use crate::task::Task;
use copse_tree::{BinnedData, FeatureBins, FeatureMeta, Grower, OutcomeView, Tree, TreeSettings};
use ndarray::ArrayView2;
use rayon::prelude::*;
use std::ops::Range;
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
    /// Told about progress (for a progress bar); reports may come from several threads
    /// at once. Default none.
    pub progress: Option<&'a (dyn Fn(Progress) + Sync)>,
}

impl Default for TrainOptions<'_> {
    fn default() -> Self {
        TrainOptions {
            oob_importance: true,
            keep_draws: false,
            progress: None,
        }
    }
}

impl std::fmt::Debug for TrainOptions<'_> {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("TrainOptions")
            .field("oob_importance", &self.oob_importance)
            .field("keep_draws", &self.keep_draws)
            .field("progress", &self.progress.map(|_| "callback"))
            .finish()
    }
}

/// What training needs to remember about one tree's sample.
pub(crate) struct Sample {
    bag_weight: f64,
    oob: OobMask,
    /// Draw counts and how many saturated, when asked for.
    draws: Option<(Vec<u8>, usize)>,
}

impl Sample {
    /// The tree's out-of-bag rows.
    pub(crate) fn oob(&self) -> &OobMask {
        &self.oob
    }

    /// The sample of a tree whose case weights are `weights`.
    fn of(weights: &[f64], keep_draws: bool) -> Sample {
        Sample {
            bag_weight: weights.iter().sum(),
            oob: OobMask::from_weights(weights),
            draws: keep_draws.then(|| Draws::column(weights)),
        }
    }
}

/// The data made ready for growing: binned once, with the resolved inputs per split,
/// each tree's settings and the row sampler.
pub(crate) struct Ground<'o> {
    data: BinnedData,
    /// Inputs tried per split, resolved for this data.
    pub(crate) k: usize,
    tree_settings: TreeSettings,
    pub(crate) sampler: Sampler,
    target: OutcomeView<'o>,
}

impl<'o> Ground<'o> {
    /// Checks the settings and data and bins the data.
    pub(crate) fn new(
        x: ArrayView2<'_, f64>,
        meta: &[FeatureMeta],
        outcome: &'o Outcome,
        settings: &ForestSettings,
    ) -> Result<Ground<'o>> {
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
        let data = BinnedData::new(x, meta, settings.bin_limit())?;
        let k = settings
            .features_per_split
            .resolve(p, outcome.is_classes())?;
        let tree_settings = settings.tree.tree_settings((k < p).then_some(k));
        tree_settings.validate()?;
        let target = outcome.view()?;
        let sampler = Sampler::new(outcome, settings.sampling, settings.balanced)?;
        Ok(Ground {
            data,
            k,
            tree_settings,
            sampler,
            target,
        })
    }

    /// Each input's bin layout.
    pub(crate) fn bins(&self) -> Vec<FeatureBins> {
        self.data.bins().to_vec()
    }

    /// Grows trees `range` in parallel, each from its own generators (seed, tree
    /// index), and returns them in index order with their samples.
    pub(crate) fn grow(
        &self,
        range: Range<usize>,
        seed: u64,
        keep_draws: bool,
        progress: &(dyn Fn(Progress) + Sync),
    ) -> Result<Vec<(Tree, Sample)>> {
        let n = self.target.len();
        let total = range.len();
        let done = AtomicUsize::new(0);
        range
            .into_par_iter()
            .map_init(
                || {
                    (
                        Grower::new(self.tree_settings.clone()),
                        vec![0.0; n],
                        Vec::new(),
                    )
                },
                |(grower, weights, scratch), t| -> Result<(Tree, Sample)> {
                    let mut sample_rng = task_rng(seed, Purpose::Sample, t as u64, 0);
                    self.sampler.draw(&mut sample_rng, weights, scratch);
                    let grow_seed = task_seed(seed, Purpose::Grow, t as u64, 0);
                    let tree = grower.grow(&self.data, &self.target, weights, grow_seed)?;
                    let d = done.fetch_add(1, Ordering::Relaxed) + 1;
                    progress(Progress {
                        stage: Stage::Growing,
                        done: d,
                        total,
                    });
                    Ok((tree, Sample::of(weights, keep_draws)))
                },
            )
            .collect()
    }
}

/// Draws again the samples of trees `range` (the same draws growing made: each comes
/// only from the seed and the tree's index), without growing anything.
pub(crate) fn resample(
    sampler: &Sampler,
    n: usize,
    range: Range<usize>,
    seed: u64,
    keep_draws: bool,
) -> Vec<Sample> {
    range
        .into_par_iter()
        .map_init(
            || (vec![0.0; n], Vec::new()),
            |(weights, scratch), t| {
                let mut sample_rng = task_rng(seed, Purpose::Sample, t as u64, 0);
                sampler.draw(&mut sample_rng, weights, scratch);
                Sample::of(weights, keep_draws)
            },
        )
        .collect()
}

/// The fingerprint of the rows of `x` that have an outcome.
pub(crate) fn training_fingerprint(x: ArrayView2<'_, f64>, outcome: &Outcome) -> RowFingerprint {
    RowFingerprint::of_rows(
        outcome.n_labelled(),
        x.rows()
            .into_iter()
            .enumerate()
            .filter(|(i, _)| !outcome.is_missing(*i))
            .map(|(_, r)| r.into_iter().copied()),
    )
}

/// Everything of a model that is not its trees, with the trees: what [`Forest::train`]
/// and the merge of parts ([`crate::part`]) both end with, so that they give the same
/// model byte for byte.
pub(crate) struct Finish<'a> {
    pub(crate) x: ArrayView2<'a, f64>,
    pub(crate) meta: &'a [FeatureMeta],
    pub(crate) outcome: &'a Outcome,
    pub(crate) settings: &'a ForestSettings,
    pub(crate) k: usize,
    pub(crate) bins: Vec<FeatureBins>,
    pub(crate) oob_importance: bool,
    pub(crate) keep_draws: bool,
    /// The card to store; the engine's own for the outcome when `None`.
    pub(crate) card: Option<ModelCard>,
    /// Every tree's out-of-bag importance increases, when already computed (by the
    /// parts of a forest); computed here when `None`.
    pub(crate) importance_pieces: Option<Vec<TreeIncreases>>,
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
        let progress: &(dyn Fn(Progress) + Sync) = options.progress.unwrap_or(&|_| {});
        let ground = Ground::new(x, meta, outcome, settings)?;
        let grown = ground.grow(
            0..settings.trees,
            settings.seed,
            options.keep_draws,
            progress,
        )?;
        let (k, bins) = (ground.k, ground.bins());
        drop(ground);
        let (trees, samples) = grown.into_iter().unzip();
        Ok(Finish {
            x,
            meta,
            outcome,
            settings,
            k,
            bins,
            oob_importance: options.oob_importance,
            keep_draws: options.keep_draws,
            card: None,
            importance_pieces: None,
        }
        .run(trees, samples, progress))
    }
}

impl Finish<'_> {
    /// Computes the out-of-bag results, importance and fingerprint of `trees`, whose
    /// samples are `samples`, and makes the model.
    pub(crate) fn run(
        self,
        trees: Vec<Tree>,
        samples: Vec<Sample>,
        progress: &(dyn Fn(Progress) + Sync),
    ) -> Trained {
        let Finish {
            x,
            meta,
            outcome,
            settings,
            k,
            bins,
            oob_importance,
            keep_draws,
            card,
            importance_pieces,
        } = self;
        let n = x.nrows();
        let n_trees = trees.len();
        let mut masks = Vec::with_capacity(n_trees);
        let mut bag_weights = Vec::with_capacity(n_trees);
        let mut draw_columns = Vec::new();
        let mut saturated = 0;
        for s in samples {
            masks.push(s.oob);
            bag_weights.push(s.bag_weight);
            if let Some((col, sat)) = s.draws {
                draw_columns.push(col);
                saturated += sat;
            }
        }
        let draws = keep_draws
            .then(|| Draws::from_tree_columns(&draw_columns, n, outcome.n_labelled(), saturated));
        drop(draw_columns);
        let fingerprint = training_fingerprint(x, outcome);
        // A balanced model's probabilities are shifted back to the training class
        // shares, with factors fitted on its raw out-of-bag probabilities (see
        // crate::priors); that takes one more out-of-bag pass.
        let prior_shift = match outcome {
            Outcome::Classes { codes, labels } if settings.balanced => {
                let shares = crate::priors::training_shares(codes, labels.len());
                let (raw, _) = out_of_bag(&trees, &masks, x, outcome, None, &|_| {});
                Some(crate::priors::fitted_shift(raw.predictions.view(), &shares))
            }
            _ => None,
        };
        let (report, summary) =
            out_of_bag(&trees, &masks, x, outcome, prior_shift.as_deref(), progress);
        let oob_importance = match (oob_importance, importance_pieces) {
            (false, _) => None,
            (true, Some(pieces)) => oob_tables(pieces, outcome, meta),
            (true, None) => {
                oob_permutation(&trees, &masks, x, outcome, meta, settings.seed, progress)
            }
        };
        let impurity =
            impurity_importance(&trees, &bag_weights, meta, outcome, settings.tree.impurity);
        let (task, classes) = match outcome {
            Outcome::Classes { labels, .. } => (Task::Classify, labels.clone()),
            Outcome::Values(_) => (Task::Regress, Vec::new()),
        };
        let card = card.unwrap_or_else(|| {
            ModelCard::for_outcome(outcome, settings.features_per_split.to_string())
        });
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
        };
        Trained {
            forest,
            oob: report,
        }
    }
}
