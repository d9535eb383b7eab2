//! Training: grow the trees in parallel on one shared binned copy of the data, then
//! compute the out-of-bag estimates and importance, all combined in tree-index order
//! so the model is the same for any number of threads.
use crate::card::ModelCard;
use crate::draws::Draws;
use crate::error::{bad_setting, Error, ErrorKind, Result};
use crate::fingerprint::RowFingerprint;
use crate::forest::{Forest, Trained};
use crate::importance::impurity_importance;
use crate::intervals::{oob_check, OOB_CHECK_LEVEL};
use crate::leaf_rows::LeafRows;
use crate::oob::out_of_bag;
use crate::oob_importance::{oob_permutation, oob_tables, TreeIncreases};
use crate::outcome::Outcome;
use crate::plan::{check_stop, checked_binned, Plan, Sample};
use crate::progress::Progress;
use crate::settings::ForestSettings;
use crate::task::Task;
pub use crate::train_options::TrainOptions;
use copse_tree::{BinnedData, FeatureBins, FeatureMeta, Tree};
use ndarray::ArrayView2;
use std::sync::atomic::AtomicBool;

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
        let data = checked_binned(x, meta, outcome, settings)?;
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
    let plan = Plan::new(x.ncols(), outcome, settings, options)?;
    let held = match held {
        Held::Owned(data) => Held::Owned(plan.fit_layout(data)),
        shared => shared,
    };
    let grown = plan.grow(held.get(), x, 0..settings.trees, settings.seed, options)?;
    let bins = held.get().bins().to_vec();
    drop(held);
    check_stop(options.stop)?;
    let (trees, samples) = grown.into_iter().unzip();
    Finish {
        x,
        meta,
        outcome,
        settings,
        plan,
        bins,
        oob_importance: options.oob_importance,
        card: None,
        importance_pieces: None,
        stop: options.stop,
    }
    .run(trees, samples, options.progress.unwrap_or(&|_| {}))
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
/// and the merge of parts ([`crate::merge`]) both end with, so that they give the same
/// model byte for byte.
pub(crate) struct Finish<'a> {
    pub(crate) x: ArrayView2<'a, f64>,
    pub(crate) meta: &'a [FeatureMeta],
    pub(crate) outcome: &'a Outcome,
    pub(crate) settings: &'a ForestSettings,
    pub(crate) plan: Plan<'a>,
    pub(crate) bins: Vec<FeatureBins>,
    pub(crate) oob_importance: bool,
    /// The card to store; the engine's own for the outcome when `None`.
    pub(crate) card: Option<ModelCard>,
    /// Every tree's out-of-bag importance increases, when already computed (by the
    /// parts of a forest); computed here when `None`.
    pub(crate) importance_pieces: Option<Vec<TreeIncreases>>,
    pub(crate) stop: Option<&'a AtomicBool>,
}

impl Finish<'_> {
    /// Computes the out-of-bag results, importance and fingerprint of `trees`, whose
    /// samples are `samples`, and makes the model.
    pub(crate) fn run(
        self,
        trees: Vec<Tree>,
        samples: Vec<Sample>,
        progress: &(dyn Fn(Progress) + Sync),
    ) -> Result<Trained> {
        let Finish {
            x,
            meta,
            outcome,
            settings,
            plan,
            bins,
            oob_importance,
            card,
            importance_pieces,
            stop,
        } = self;
        let n = x.nrows();
        let n_trees = trees.len();
        let weights = plan.weights;
        let mut masks = Vec::with_capacity(n_trees);
        let mut bag_weights = Vec::with_capacity(n_trees);
        let mut draw_columns = Vec::new();
        let mut saturated = 0;
        let mut tree_rows = Vec::new();
        for s in samples {
            masks.push(s.oob);
            bag_weights.push(s.bag_weight);
            if let Some((col, sat)) = s.draws {
                draw_columns.push(col);
                saturated += sat;
            }
            tree_rows.extend(s.leaf_rows);
        }
        let draws = plan
            .keep_draws
            .then(|| Draws::from_tree_columns(&draw_columns, n, outcome.n_labelled(), saturated));
        drop(draw_columns);
        let fingerprint = training_fingerprint(x, outcome);
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
        check_stop(stop)?;
        let oob_importance = match (oob_importance, importance_pieces) {
            (false, _) => None,
            (true, Some(pieces)) => oob_tables(pieces, outcome, meta),
            (true, None) => oob_permutation(
                &trees,
                &masks,
                x,
                outcome,
                weights,
                meta,
                settings.seed,
                progress,
            ),
        };
        check_stop(stop)?;
        let leaf_rows = match (&plan.ranks, outcome) {
            (Some((_, sorted)), Outcome::Values(y)) => {
                let mut rows = LeafRows::new(sorted.clone(), tree_rows);
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
        let card = card.unwrap_or_else(|| {
            let mut card = ModelCard::for_outcome(outcome, settings.features_per_split.to_string());
            (card.weights, card.groups) = plan.records();
            card
        });
        let forest = Forest {
            meta: meta.to_vec(),
            task,
            classes,
            trees,
            settings: settings.clone(),
            features_per_split: plan.k,
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
            pool: None,
        };
        Ok(Trained {
            forest,
            oob: report,
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::progress::Stage;
    use crate::synth;
    use crate::ErrorKind;
    use std::sync::atomic::{AtomicUsize, Ordering};

    /// A stop asked for before training ends it with `Stopped`; one asked for from
    /// the progress reports ends it after the tree that reported.
    #[test]
    fn a_stop_ends_training_with_stopped() {
        let data = synth::twonorm(100, 1);
        let settings = ForestSettings {
            trees: 50,
            ..Default::default()
        };
        let stop = AtomicBool::new(true);
        let options = TrainOptions {
            stop: Some(&stop),
            ..TrainOptions::default()
        };
        let e = Forest::train(
            data.x.view(),
            &data.meta,
            &data.outcome,
            &settings,
            &options,
        )
        .err()
        .map(|e| e.kind());
        assert_eq!(e, Some(ErrorKind::Stopped));

        let stop = AtomicBool::new(false);
        let grown = AtomicUsize::new(0);
        let progress = |p: Progress| {
            if p.stage == Stage::Growing {
                grown.fetch_add(1, Ordering::Relaxed);
                stop.store(true, Ordering::Relaxed);
            }
        };
        let options = TrainOptions {
            stop: Some(&stop),
            progress: Some(&progress),
            ..TrainOptions::default()
        };
        let e = Forest::train(
            data.x.view(),
            &data.meta,
            &data.outcome,
            &settings,
            &options,
        )
        .err()
        .map(|e| e.kind());
        assert_eq!(e, Some(ErrorKind::Stopped));
        // At most one tree in flight per thread finishes after the stop.
        assert!(grown.load(Ordering::Relaxed) <= rayon::current_num_threads());
    }
}
