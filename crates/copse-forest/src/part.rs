//! Parts of a forest: trees `a..b` of an `N`-tree forest, grown anywhere (another
//! process, another machine) and merged later into the model one run of all `N` trees
//! would have made, byte for byte ([`Forest::merge_parts`], in [`crate::merge`]).
//!
//! This works because every random draw of tree `t` comes only from the seed and `t`
//! (its sample, its inputs per split, its out-of-bag permutations: the generators of
//! `rng.rs`), and because everything a model holds besides its trees is computed after
//! growing, from the trees, their samples and the data, combined in tree order. What
//! each part keeps, and what the merge recomputes:
//! - each tree's out-of-bag importance increases depend on that tree alone, so a part
//!   computes them where it grows (a few numbers per tree and input) and the merge only
//!   adds them up in tree order: this, the costliest step after growing, is spread over
//!   the machines;
//! - the out-of-bag predictions, the error curve and (with class-balanced sampling) the
//!   class-share shift are per-row running sums over all trees in tree order; an exact
//!   combination would need every tree's output for every out-of-bag row (about a
//!   third of rows times trees numbers, far more than the data), so the merge reads the
//!   training data again, draws every tree's sample again from the seed, and runs the
//!   out-of-bag pass by the very code that ends [`Forest::train`] (one pass of scoring);
//! - draw counts and bag weights are drawn again from the seed.
//!
//! A part also keeps what identifies the forest it belongs to (settings, seed, the
//! data's digest and fingerprint, inputs, bins, card). Any model file can serve as the
//! first part of a larger forest (growing 200 trees to 500), with no change to the
//! model format: its trees' importance pieces are then computed at the merge.
//!
//! A part file uses the model file's container ([`crate::model_file`]) with its own
//! marker ([`PART_MAGIC`]) and format version ([`PART_FORMAT_VERSION`]).
use crate::card::ModelCard;
use crate::error::{Error, ErrorKind, Result};
use crate::fingerprint::{rows_digest, RowFingerprint};
use crate::forest::Forest;
use crate::model_file::{decode_as, encode_as, read_as, Kind};
use crate::oob::OobMask;
use crate::oob_importance::{oob_tree_increases, TreeIncreases};
use crate::outcome::Outcome;
use crate::plan::{check_stop, checked_binned, Plan};
use crate::progress::Progress;
use crate::settings::ForestSettings;
use crate::task::Task;
use crate::train::{training_fingerprint, TrainOptions};
use copse_tree::{FeatureBins, FeatureMeta, Tree};
use ndarray::ArrayView2;
use serde::{Deserialize, Serialize};
use std::io::{self, Write};
use std::ops::Range;
use std::path::Path;

/// First eight bytes of every part file.
pub const PART_MAGIC: [u8; 8] = [0xC0, b'P', b'S', b'E', b'T', b'R', b'\r', b'\n'];
/// The part format this build writes and the only one it reads.
pub const PART_FORMAT_VERSION: u16 = 1;

/// The part file.
pub(crate) const PART: Kind = Kind {
    magic: PART_MAGIC,
    version: PART_FORMAT_VERSION,
    oldest: PART_FORMAT_VERSION,
    noun: "part",
    tool: "'copse train --tree-range'",
};

/// Trees `first..first + trees.len()` of a forest, with what identifies the forest.
#[derive(Debug, Clone, Serialize, Deserialize)]
pub struct ForestPart {
    /// What messages call the part (its file, or its trees); not stored.
    #[serde(skip)]
    pub(crate) name: String,
    /// Index of the first tree.
    pub(crate) first: usize,
    /// The whole forest's settings (`trees` is the whole forest's count).
    pub(crate) settings: ForestSettings,
    /// True for a model file taken as the first trees of a larger forest.
    pub(crate) from_model: bool,
    pub(crate) meta: Vec<FeatureMeta>,
    pub(crate) task: Task,
    pub(crate) classes: Vec<String>,
    pub(crate) features_per_split: usize,
    pub(crate) training_rows: usize,
    pub(crate) bins: Vec<FeatureBins>,
    pub(crate) card: ModelCard,
    pub(crate) fingerprint: RowFingerprint,
    /// The training rows' digest in row order; unknown for a model file.
    pub(crate) digest: Option<u64>,
    /// Whether the model keeps draw counts ([`TrainOptions::keep_draws`]).
    pub(crate) keep_draws: bool,
    /// Whether the model has out-of-bag permutation importance.
    pub(crate) oob_importance: bool,
    /// Whether the model keeps its leaves' training rows
    /// ([`TrainOptions::keep_leaf_rows`]); the merge collects them again.
    pub(crate) keep_leaf_rows: bool,
    /// The case weights the trees were grown with, when they weigh anything: the merge
    /// draws every tree's sample again with them (`None` for a model taken as a part).
    pub(crate) case_weights: Option<Vec<f64>>,
    /// The row groups the trees were grown with, likewise.
    pub(crate) groups: Option<Vec<u32>>,
    /// Each tree's out-of-bag importance increases (they depend on the tree alone, so
    /// the part computes them where it grows, and the merge only adds them up in tree
    /// order); `None` without importance, or for a model taken as a part.
    pub(crate) importance: Option<Vec<TreeIncreases>>,
    pub(crate) trees: Vec<Tree>,
}

impl Forest {
    /// Grows trees `trees` (a range of tree indices, counting from 0) of the forest
    /// `settings` describes (`settings.trees` trees in all), exactly as
    /// [`Forest::train`] grows them, and returns them as a part to merge with the
    /// others ([`Forest::merge_parts`]).
    ///
    /// # Errors
    /// As for [`Forest::train`]; `InvalidSetting` for an empty range or one that ends
    /// past `settings.trees`.
    ///
    /// # Example
    /// ```
    /// use copse_forest::{synth, Forest, ForestSettings};
    /// let d = synth::twonorm(200, 5);
    /// let s = ForestSettings { trees: 30, seed: 9, ..Default::default() };
    /// let o = Default::default();
    /// let a = Forest::train_part(d.x.view(), &d.meta, &d.outcome, &s, 0..10, &o)?;
    /// let b = Forest::train_part(d.x.view(), &d.meta, &d.outcome, &s, 10..30, &o)?;
    /// let merged = Forest::merge_parts(&[b, a], d.x.view(), &d.meta, &d.outcome, None)?;
    /// let whole = Forest::train(d.x.view(), &d.meta, &d.outcome, &s, &o)?;
    /// assert_eq!(merged.forest.to_bytes()?, whole.forest.to_bytes()?);
    /// # Ok::<(), copse_forest::Error>(())
    /// ```
    pub fn train_part(
        x: ArrayView2<'_, f64>,
        meta: &[FeatureMeta],
        outcome: &Outcome,
        settings: &ForestSettings,
        trees: Range<usize>,
        options: &TrainOptions<'_>,
    ) -> Result<ForestPart> {
        if trees.is_empty() || trees.end > settings.trees {
            return Err(Error::new(
                ErrorKind::InvalidSetting,
                format!(
                    "trees {}..{} are not a part of a forest of {} trees; give a range a..b with \
                     a < b <= {}",
                    trees.start, trees.end, settings.trees, settings.trees
                ),
            ));
        }
        let progress: &(dyn Fn(Progress) + Sync) = options.progress.unwrap_or(&|_| {});
        let data = checked_binned(x, meta, outcome, settings)?;
        let plan = Plan::new(x.ncols(), outcome, settings, options)?;
        let data = plan.fit_layout(data);
        let first = trees.start;
        let grown = plan.grow(&data, x, trees, settings.seed, options)?;
        let bins = data.bins().to_vec();
        drop(data);
        check_stop(options.stop)?;
        let (task, classes) = match outcome {
            Outcome::Classes { labels, .. } => (Task::Classify, labels.clone()),
            Outcome::Values(_) => (Task::Regress, Vec::new()),
        };
        let (trees, samples): (Vec<Tree>, Vec<_>) = grown.into_iter().unzip();
        let importance = options.oob_importance.then(|| {
            let masks: Vec<OobMask> = samples.iter().map(|s| s.oob().clone()).collect();
            oob_tree_increases(
                &trees,
                &masks,
                first,
                x,
                outcome,
                plan.weights,
                settings.seed,
                progress,
            )
        });
        let mut card = ModelCard::for_outcome(outcome, settings.features_per_split.to_string());
        (card.weights, card.groups) = plan.records();
        Ok(ForestPart {
            name: format!("the part of trees {first}..{}", first + trees.len()),
            first,
            settings: settings.clone(),
            from_model: false,
            meta: meta.to_vec(),
            task,
            classes,
            features_per_split: plan.k,
            training_rows: x.nrows(),
            bins,
            card,
            fingerprint: training_fingerprint(x, outcome),
            digest: Some(rows_digest(x, outcome)),
            keep_draws: options.keep_draws,
            oob_importance: options.oob_importance,
            keep_leaf_rows: options.keep_leaf_rows,
            case_weights: plan.weights.map(<[f64]>::to_vec),
            groups: plan.records().1.and(options.groups).map(<[u32]>::to_vec),
            importance,
            trees,
        })
    }
}

impl ForestPart {
    /// A model taken as trees `0..n` of a larger forest, to grow it: merged with parts
    /// holding trees `n..N` of the same settings and seed, it gives the model of `N`
    /// trees trained at once.
    pub fn from_model(model: Forest, name: impl Into<String>) -> ForestPart {
        ForestPart {
            name: name.into(),
            first: 0,
            from_model: true,
            features_per_split: model.features_per_split,
            training_rows: model.training_rows,
            digest: None,
            keep_draws: model.draws.is_some(),
            oob_importance: model.oob_importance.is_some(),
            keep_leaf_rows: model.leaf_rows.is_some(),
            case_weights: None,
            groups: None,
            importance: None,
            settings: model.settings,
            meta: model.meta,
            task: model.task,
            classes: model.classes,
            bins: model.bins,
            card: model.card,
            fingerprint: model.fingerprint,
            trees: model.trees,
        }
    }

    /// What messages call this part.
    pub fn name(&self) -> &str {
        &self.name
    }

    /// Renames the part in messages (for example after the file it came from).
    pub fn set_name(&mut self, name: impl Into<String>) {
        self.name = name.into();
    }

    /// The indices of the trees this part holds.
    pub fn tree_range(&self) -> Range<usize> {
        self.first..self.first + self.trees.len()
    }

    /// Trees in the whole forest this part belongs to (for a model file taken as a
    /// part, its own number of trees).
    pub fn forest_trees(&self) -> usize {
        self.settings.trees
    }

    /// Whether this part is a whole model taken as the first trees of a larger forest.
    pub fn is_model(&self) -> bool {
        self.from_model
    }

    /// Descriptions of the inputs, in column order.
    pub fn meta(&self) -> &[FeatureMeta] {
        &self.meta
    }

    /// What the forest predicts.
    pub fn task(&self) -> Task {
        self.task
    }

    /// The settings of the whole forest.
    pub fn settings(&self) -> &ForestSettings {
        &self.settings
    }

    /// The model card the merged model will carry.
    pub fn card(&self) -> &ModelCard {
        &self.card
    }

    /// Replaces the model card (the data layer records the file the rows came from).
    pub fn set_card(&mut self, card: ModelCard) {
        self.card = card;
    }

    /// The trees, in index order.
    pub fn trees(&self) -> &[Tree] {
        &self.trees
    }

    /// The complete bytes of this part's file.
    ///
    /// # Errors
    /// `InvalidModel` when the part is inconsistent.
    pub fn to_bytes(&self) -> Result<Vec<u8>> {
        self.check()?;
        encode_as(&PART, self)
    }

    /// Decodes a part from the complete bytes of a part file and checks it; `name`
    /// names it in messages.
    ///
    /// # Errors
    /// `NotAModel` (not a part file), `NewerFormat`, `OlderFormat`, `Damaged`,
    /// `Undecodable` or `InvalidModel`, each naming the part.
    pub fn from_bytes(bytes: &[u8], name: &str) -> Result<ForestPart> {
        let mut part: ForestPart = decode_as(&PART, bytes, name)?;
        part.name = name.to_string();
        part.check()?;
        Ok(part)
    }

    /// Reads and checks the part file at `path`.
    ///
    /// # Errors
    /// As for [`ForestPart::from_bytes`], plus `Io` and `FileTooLarge`.
    pub fn load(path: impl AsRef<Path>) -> Result<ForestPart> {
        let path = path.as_ref();
        let mut part: ForestPart = read_as(&PART, path)?;
        part.name = path.display().to_string();
        part.check()?;
        Ok(part)
    }

    /// Writes the part file to `path` through a temporary file and a rename.
    ///
    /// # Errors
    /// `Io` when the file cannot be written; as [`ForestPart::to_bytes`].
    pub fn save(&self, path: impl AsRef<Path>) -> Result<()> {
        let path = path.as_ref();
        let bytes = self.to_bytes()?;
        let io_err = |e: io::Error| {
            Error::new(
                ErrorKind::Io,
                format!(
                    "could not write the part {}: {}; check the disk has room and the folder is \
                     writable",
                    path.display(),
                    crate::error::io_reason(&e)
                ),
            )
        };
        let dir = match path.parent() {
            Some(d) if !d.as_os_str().is_empty() => d,
            _ => Path::new("."),
        };
        let mut tmp = tempfile::Builder::new()
            .prefix(".copse-")
            .suffix(".partial")
            .tempfile_in(dir)
            .map_err(io_err)?;
        tmp.write_all(&bytes).map_err(io_err)?;
        tmp.as_file().sync_all().map_err(io_err)?;
        tmp.persist(path).map_err(|e| io_err(e.error))?;
        Ok(())
    }

    /// Checks a part read from elsewhere: trees present, inside the forest, and each
    /// one sound for the part's inputs and outputs.
    fn check(&self) -> Result<()> {
        let bad = |what: String| {
            Err(Error::new(
                ErrorKind::InvalidModel,
                format!(
                    "{} is not a usable part: {what}; train it again with 'copse train \
                     --tree-range'",
                    self.name
                ),
            ))
        };
        let r = self.tree_range();
        if self.trees.is_empty() || r.end > self.settings.trees {
            return bad(format!(
                "it holds trees {}..{} of a forest of {}",
                r.start, r.end, self.settings.trees
            ));
        }
        let k = match self.task {
            Task::Classify => self.classes.len(),
            Task::Regress => 1,
        };
        let pieces_fit = self.importance.as_ref().is_none_or(|p| {
            p.len() == self.trees.len()
                && p.iter()
                    .flatten()
                    .all(|(e, b)| e.len() == self.meta.len() && b.len() == self.meta.len())
        });
        if !pieces_fit {
            return bad("its importance pieces do not fit its trees and inputs".to_string());
        }
        let rows_fit = self
            .case_weights
            .as_ref()
            .is_none_or(|w| w.len() == self.training_rows)
            && self
                .groups
                .as_ref()
                .is_none_or(|g| g.len() == self.training_rows);
        if !rows_fit {
            return bad("its case weights or row groups do not fit its rows".to_string());
        }
        if self.bins.len() != self.meta.len() || (self.task == Task::Classify && k == 0) {
            return bad("its inputs, bins and classes do not fit together".to_string());
        }
        for (i, tree) in self.trees.iter().enumerate() {
            let t = r.start + i;
            if tree.n_features() != self.meta.len() || tree.n_outputs() != k {
                return bad(format!("tree {t} does not fit its inputs or outputs"));
            }
            if let Err(e) = tree.check(&self.meta) {
                return bad(format!("tree {t} {}", e.message()));
            }
        }
        Ok(())
    }
}
