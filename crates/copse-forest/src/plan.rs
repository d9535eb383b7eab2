//! What growing a forest's trees needs besides the binned data ([`Plan`]: inputs per
//! split, tree settings, case weights and row groups, the row sampler), and what
//! training keeps of each tree's sample ([`Sample`]). Training, a part of a forest
//! ([`crate::part`]) and the merge of parts ([`crate::merge`]) draw every sample from
//! it, so a tree's sample is the same wherever it is drawn.
use crate::case_weights::{checked_groups, checked_weights, GroupsRecord, WeightsRecord};
use crate::draws::Draws;
use crate::error::{bad_setting, Error, ErrorKind, Result};
use crate::leaf_rows::{outcome_ranks, TreeRows};
use crate::oob::OobMask;
use crate::outcome::Outcome;
use crate::progress::{Progress, Stage};
use crate::reuse::Shelf;
use crate::rng::{task_rng, task_seed, Purpose};
use crate::sample::Sampler;
use crate::settings::ForestSettings;
use crate::train_options::TrainOptions;
use copse_tree::{BinnedData, FeatureMeta, Grower, OutcomeView, Tree, TreeSettings};
use ndarray::ArrayView2;
use rayon::prelude::*;
use std::ops::Range;
use std::sync::atomic::{AtomicBool, AtomicUsize, Ordering};

/// What training needs to remember about one tree's sample.
pub(crate) struct Sample {
    pub(crate) bag_weight: f64,
    pub(crate) oob: OobMask,
    /// Draw counts and how many saturated, when asked for.
    pub(crate) draws: Option<(Vec<u8>, usize)>,
    /// The rows of each leaf, when asked for.
    pub(crate) leaf_rows: Option<TreeRows>,
}

impl Sample {
    /// The tree's out-of-bag rows.
    pub(crate) fn oob(&self) -> &OobMask {
        &self.oob
    }
}

/// Checks the settings and the data as [`Forest::train`] takes them, and bins the data.
pub(crate) fn checked_binned(
    x: ArrayView2<'_, f64>,
    meta: &[FeatureMeta],
    outcome: &Outcome,
    settings: &ForestSettings,
) -> Result<BinnedData> {
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
        return bad_setting("balanced sampling draws cases per class; it needs a class outcome");
    }
    Ok(BinnedData::new(x, meta, settings.bin_limit())?)
}

/// What growing needs besides the binned data, resolved and checked once: inputs per
/// split, each tree's settings, the case weights and groups with their records, the
/// row sampler and (for leaf rows) the outcome ranks. Training, a part of a forest and
/// the merge of parts ([`crate::merge`]) all draw their samples from it.
pub(crate) struct Plan<'a> {
    /// Inputs tried per split, resolved for this data.
    pub(crate) k: usize,
    tree_settings: TreeSettings,
    target: OutcomeView<'a>,
    sampler: Sampler<'a>,
    /// The case weights, when they weigh anything (not all 1).
    pub(crate) weights: Option<&'a [f64]>,
    weights_record: Option<WeightsRecord>,
    groups_record: Option<GroupsRecord>,
    /// Each row's outcome rank and the sorted outcomes, when leaf rows are kept.
    pub(crate) ranks: Option<(Vec<u32>, Vec<f64>)>,
    pub(crate) keep_draws: bool,
}

impl<'a> Plan<'a> {
    /// Resolves the plan for `p` inputs and `outcome` (both checked by the caller).
    pub(crate) fn new(
        p: usize,
        outcome: &'a Outcome,
        settings: &ForestSettings,
        options: &TrainOptions<'a>,
    ) -> Result<Plan<'a>> {
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
        Ok(Plan {
            k,
            tree_settings,
            target,
            sampler,
            weights,
            weights_record,
            groups_record,
            ranks,
            keep_draws: options.keep_draws,
        })
    }

    /// `data` laid out for the grower this plan's trees take: two classes without
    /// case weights (whole-number draw counts) take the two-class grower, which reads
    /// the codes row by row only, so the column-major copy is dropped
    /// ([`BinnedData::into_row_major`]); other outcomes keep the columns. Either way
    /// the trees are the same.
    pub(crate) fn fit_layout(&self, data: BinnedData) -> BinnedData {
        match self.target {
            OutcomeView::Classes { n_classes: 2, .. } if self.weights.is_none() => {
                data.into_row_major()
            }
            _ => data,
        }
    }

    /// The records of the case weights and row groups, for the model card.
    pub(crate) fn records(&self) -> (Option<WeightsRecord>, Option<GroupsRecord>) {
        (self.weights_record.clone(), self.groups_record.clone())
    }

    /// The sample of a tree from its draw counts.
    fn sample(
        &self,
        tree: &Tree,
        x: ArrayView2<'_, f64>,
        counts: &[f64],
        case_buf: &mut Vec<f64>,
    ) -> Sample {
        let case = self.sampler.case_weights(counts, case_buf);
        Sample {
            bag_weight: case.iter().sum(),
            // Out of bag: never drawn (with row groups: no row of its group drawn),
            // whatever its case weight.
            oob: OobMask::from_weights(counts),
            draws: self.keep_draws.then(|| Draws::column(counts)),
            leaf_rows: self
                .ranks
                .as_ref()
                .map(|(rank, _)| TreeRows::collect(tree, x, counts, rank)),
        }
    }

    /// Grows trees `range` on `data` in parallel, each from its own generators (seed,
    /// tree index), and returns them in index order with their samples.
    pub(crate) fn grow(
        &self,
        data: &BinnedData,
        x: ArrayView2<'_, f64>,
        range: Range<usize>,
        seed: u64,
        options: &TrainOptions<'_>,
    ) -> Result<Vec<(Tree, Sample)>> {
        let progress: &(dyn Fn(Progress) + Sync) = options.progress.unwrap_or(&|_| {});
        let n = x.nrows();
        let total = range.len();
        let done = AtomicUsize::new(0);
        let shelf = Shelf::new();
        range
            .into_par_iter()
            .map_init(
                || {
                    shelf.take(|| {
                        let buffers = (vec![0.0; n], Vec::new(), Vec::new());
                        (Grower::new(self.tree_settings.clone()), buffers)
                    })
                },
                |lent, t| -> Result<(Tree, Sample)> {
                    let (grower, (counts, scratch, case_buf)) = lent.get();
                    check_stop(options.stop)?;
                    let mut sample_rng = task_rng(seed, Purpose::Sample, t as u64, 0);
                    self.sampler.draw(&mut sample_rng, counts, scratch);
                    let grow_seed = task_seed(seed, Purpose::Grow, t as u64, 0);
                    let case = self.sampler.case_weights(counts, case_buf);
                    let tree = grower.grow(data, &self.target, case, grow_seed)?;
                    let sample = self.sample(&tree, x, counts, case_buf);
                    let d = done.fetch_add(1, Ordering::Relaxed) + 1;
                    progress(Progress {
                        stage: Stage::Growing,
                        done: d,
                        total,
                    });
                    Ok((tree, sample))
                },
            )
            .collect()
    }

    /// Draws again the samples of `trees`, trees `0..trees.len()` of a forest (the same
    /// draws growing made: each comes only from the seed and the tree's index),
    /// without growing anything.
    pub(crate) fn resample(
        &self,
        trees: &[Tree],
        x: ArrayView2<'_, f64>,
        seed: u64,
    ) -> Vec<Sample> {
        let n = x.nrows();
        let shelf = Shelf::new();
        (0..trees.len())
            .into_par_iter()
            .map_init(
                || shelf.take(|| (vec![0.0; n], Vec::new(), Vec::new())),
                |lent, t| {
                    let (counts, scratch, case_buf) = lent.get();
                    let mut sample_rng = task_rng(seed, Purpose::Sample, t as u64, 0);
                    self.sampler.draw(&mut sample_rng, counts, scratch);
                    self.sample(&trees[t], x, counts, case_buf)
                },
            )
            .collect()
    }
}

/// A `Stopped` error once the caller has asked training to stop.
pub(crate) fn check_stop(stop: Option<&AtomicBool>) -> Result<()> {
    match stop {
        Some(flag) if flag.load(Ordering::Relaxed) => Err(Error::new(
            ErrorKind::Stopped,
            "training was stopped before it finished; nothing was kept",
        )),
        _ => Ok(()),
    }
}
