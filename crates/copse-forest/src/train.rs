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
use std::sync::atomic::{AtomicBool, AtomicUsize, Ordering};

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
    /// Checked before each tree and between the stages: once it is set, training ends
    /// with a `Stopped` error, typically within the time of one tree per thread (so an
    /// interactive caller can honour an interruption). Default none.
    pub stop: Option<&'a AtomicBool>,
}

impl Default for TrainOptions<'_> {
    fn default() -> Self {
        TrainOptions {
            oob_importance: true,
            keep_draws: false,
            progress: None,
            stop: None,
        }
    }
}

impl std::fmt::Debug for TrainOptions<'_> {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("TrainOptions")
            .field("oob_importance", &self.oob_importance)
            .field("keep_draws", &self.keep_draws)
            .field("progress", &self.progress.map(|_| "callback"))
            .field("stop", &self.stop)
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
    /// use std::sync::atomic::{AtomicBool, AtomicUsize, Ordering};
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

        let n_trees = settings.trees;
        let done = AtomicUsize::new(0);
        let grown: Vec<Grown> = (0..n_trees)
            .into_par_iter()
            .map_init(
                || (Grower::new(tree_settings.clone()), vec![0.0; n], Vec::new()),
                |(grower, weights, scratch), t| -> Result<Grown> {
                    check_stop(options)?;
                    let mut sample_rng = task_rng(settings.seed, Purpose::Sample, t as u64, 0);
                    sampler.draw(&mut sample_rng, weights, scratch);
                    let grow_seed = task_seed(settings.seed, Purpose::Grow, t as u64, 0);
                    let tree = grower.grow(&data, &target, weights, grow_seed)?;
                    let bag_weight = weights.iter().sum();
                    let oob = OobMask::from_weights(weights);
                    let draws = options.keep_draws.then(|| Draws::column(weights));
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
                    })
                },
            )
            .collect::<Result<Vec<_>>>()?;
        let bins = data.bins().to_vec();
        drop(data);
        check_stop(options)?;

        let mut trees = Vec::with_capacity(n_trees);
        let mut masks = Vec::with_capacity(n_trees);
        let mut bag_weights = Vec::with_capacity(n_trees);
        let mut draw_columns = Vec::new();
        let mut saturated = 0;
        for g in grown {
            trees.push(g.tree);
            masks.push(g.oob);
            bag_weights.push(g.bag_weight);
            if let Some((col, sat)) = g.draws {
                draw_columns.push(col);
                saturated += sat;
            }
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
                let shares = crate::priors::training_shares(codes, labels.len());
                let (raw, _) = out_of_bag(&trees, &masks, x, outcome, None, &|_| {});
                Some(crate::priors::fitted_shift(raw.predictions.view(), &shares))
            }
            _ => None,
        };
        let (report, summary) =
            out_of_bag(&trees, &masks, x, outcome, prior_shift.as_deref(), progress);
        check_stop(options)?;
        let oob_importance = if options.oob_importance {
            oob_permutation(&trees, &masks, x, outcome, meta, settings.seed, progress)
        } else {
            None
        };
        check_stop(options)?;
        let impurity =
            impurity_importance(&trees, &bag_weights, meta, outcome, settings.tree.impurity);
        let (task, classes) = match outcome {
            Outcome::Classes { labels, .. } => (Task::Classify, labels.clone()),
            Outcome::Values(_) => (Task::Regress, Vec::new()),
        };
        let card = ModelCard::for_outcome(outcome, settings.features_per_split.to_string());
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
        Ok(Trained {
            forest,
            oob: report,
        })
    }
}

/// A `Stopped` error once the caller has asked training to stop.
fn check_stop(options: &TrainOptions<'_>) -> Result<()> {
    match options.stop {
        Some(flag) if flag.load(Ordering::Relaxed) => Err(Error::new(
            ErrorKind::Stopped,
            "training was stopped before it finished; nothing was kept",
        )),
        _ => Ok(()),
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::synth;

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
