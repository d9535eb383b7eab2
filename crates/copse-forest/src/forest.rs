//! The trained model: trees, the task, the settings that made it, and the summaries
//! computed while training (out-of-bag accuracy, importance).
use crate::card::ModelCard;
use crate::draws::Draws;
use crate::error::{Error, ErrorKind, Result};
use crate::fingerprint::RowFingerprint;
use crate::importance::{Importance, PermutationImportance};
use crate::leaf_rows::LeafRows;
use crate::oob_summary::{OobReport, OobSummary};
use crate::outcome::{Outcome, MISSING};
use crate::pool_record::Pool;
use crate::settings::ForestSettings;
use crate::task::Task;
use copse_tree::{FeatureBins, FeatureMeta, Tree};
use ndarray::ArrayView2;
use serde::{Deserialize, Serialize};

/// Bytes one tree node takes in memory (its output and case weight included; a leaf
/// with three or more classes keeps its class shares apart, 8 bytes a class), for
/// estimating a model's size before training.
pub const NODE_BYTES: usize = std::mem::size_of::<copse_tree::tree::Node>();

/// A trained ensemble of trees.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Forest {
    pub(crate) meta: Vec<FeatureMeta>,
    pub(crate) task: Task,
    /// Class labels in model order (empty for regression).
    pub(crate) classes: Vec<String>,
    pub(crate) trees: Vec<Tree>,
    pub(crate) settings: ForestSettings,
    pub(crate) features_per_split: usize,
    pub(crate) training_rows: usize,
    pub(crate) oob: OobSummary,
    pub(crate) oob_importance: Option<PermutationImportance>,
    pub(crate) impurity_importance: Importance,
    /// Times each tree drew each training row, when kept ([`crate::TrainOptions`]).
    pub(crate) draws: Option<Draws>,
    /// Each input's bin layout as training used it (for numeric inputs, the lowest and
    /// highest training value in each bin).
    pub(crate) bins: Vec<FeatureBins>,
    /// How the model was made.
    pub(crate) card: ModelCard,
    /// With class-balanced sampling, the training class shares the probabilities are
    /// shifted back to ([`crate::priors`]); `None` otherwise.
    pub(crate) prior_shift: Option<Vec<f64>>,
    /// A fingerprint of the training rows' inputs, to recognise them later.
    pub(crate) fingerprint: RowFingerprint,
    /// The training rows of every leaf and the training outcomes, when kept
    /// ([`crate::TrainOptions::keep_leaf_rows`]); model format 4 on.
    pub(crate) leaf_rows: Option<LeafRows>,
    /// For a model pooled from forests trained on partitions of the rows
    /// ([`Forest::pool`]), each partition's own record; model format 5 on.
    pub(crate) pool: Option<Pool>,
}

/// What [`Forest::train`] returns: the model, and the per-row out-of-bag results that
/// are too large to keep in it.
#[derive(Debug, Clone)]
pub struct Trained {
    /// The model.
    pub forest: Forest,
    /// Per-row out-of-bag predictions.
    pub oob: OobReport,
}

impl Forest {
    /// Descriptions of the inputs, in column order.
    pub fn meta(&self) -> &[FeatureMeta] {
        &self.meta
    }

    /// Number of inputs.
    pub fn n_features(&self) -> usize {
        self.meta.len()
    }

    /// What the forest predicts.
    pub fn task(&self) -> Task {
        self.task
    }

    /// Class labels in model order (empty for regression).
    pub fn classes(&self) -> &[String] {
        &self.classes
    }

    /// Width of a prediction row: number of classes, or 1.
    pub fn n_outputs(&self) -> usize {
        match self.task {
            Task::Classify => self.classes.len(),
            Task::Regress => 1,
        }
    }

    /// Each input's bin layout as training used it.
    pub fn bins(&self) -> &[FeatureBins] {
        &self.bins
    }

    /// With class-balanced sampling, the training class shares its probabilities are
    /// shifted back to (Saerens, Latinne & Decaestecker 2002), so they estimate the
    /// chances under the training data's class shares rather than equal ones; `None`
    /// for other models.
    pub fn prior_shift(&self) -> Option<&[f64]> {
        self.prior_shift.as_deref()
    }

    /// A fingerprint of the training rows' inputs (one byte a row).
    pub fn fingerprint(&self) -> &RowFingerprint {
        &self.fingerprint
    }

    /// How many rows of `x` may be training rows of this model: every training row
    /// counts, and about [`RowFingerprint::false_match_rate`] of other rows match by
    /// chance. Judged on rows it was trained on, a forest looks far better than it is.
    /// A pooled model looks each row up in every partition's fingerprint, read in
    /// that partition's own category codes.
    pub fn training_row_matches(&self, x: ArrayView2<'_, f64>) -> usize {
        match &self.pool {
            None => x
                .rows()
                .into_iter()
                .filter(|r| self.fingerprint.contains(r.iter().copied()))
                .count(),
            Some(pool) => {
                let (mut row, mut scratch) = (Vec::new(), Vec::new());
                x.rows()
                    .into_iter()
                    .filter(|r| {
                        row.clear();
                        row.extend(r.iter().copied());
                        pool.contains(&row, &mut scratch)
                    })
                    .count()
            }
        }
    }

    /// The chance that a row that was not a training row counts in
    /// [`Forest::training_row_matches`] (for a pooled model, that it matches some
    /// partition's fingerprint).
    pub fn training_row_false_match_rate(&self) -> f64 {
        match &self.pool {
            None => self.fingerprint.false_match_rate(),
            Some(pool) => pool.false_match_rate(),
        }
    }

    /// How the model was made: outcome column, missing tokens, source, row counts.
    pub fn card(&self) -> &ModelCard {
        &self.card
    }

    /// Replaces the model card (the data layer records the file the rows came from).
    ///
    /// # Errors
    /// `InvalidModel` when the card's counts do not fit the model.
    pub fn set_card(&mut self, card: ModelCard) -> Result<()> {
        card.check(self.classes.len(), &self.oob).map_err(|e| {
            Error::new(
                ErrorKind::InvalidModel,
                format!("the model card does not fit: {}", e.message()),
            )
        })?;
        self.card = card;
        Ok(())
    }

    /// The trees, in index order.
    pub fn trees(&self) -> &[Tree] {
        &self.trees
    }

    /// The settings the forest was trained with.
    pub fn settings(&self) -> &ForestSettings {
        &self.settings
    }

    /// Inputs tried per split, as resolved for this data (equal to the number of
    /// inputs for bagged trees).
    pub fn features_per_split(&self) -> usize {
        self.features_per_split
    }

    /// Rows in the training data (including rows whose outcome was missing).
    pub fn training_rows(&self) -> usize {
        self.training_rows
    }

    /// Out-of-bag accuracy summary.
    pub fn oob(&self) -> &OobSummary {
        &self.oob
    }

    /// Out-of-bag permutation importance (`None` when not requested or when no tree
    /// had out-of-bag rows).
    pub fn oob_importance(&self) -> Option<&PermutationImportance> {
        self.oob_importance.as_ref()
    }

    /// Impurity-decrease importance; read its caution ([`Importance::caution`]).
    pub fn impurity_importance(&self) -> &Importance {
        &self.impurity_importance
    }

    /// Times each tree drew each training row, if training kept them
    /// ([`crate::TrainOptions::keep_draws`]).
    pub fn draws(&self) -> Option<&Draws> {
        self.draws.as_ref()
    }

    /// Total number of nodes over all trees.
    pub fn n_nodes(&self) -> usize {
        self.trees.iter().map(|t| t.nodes().len()).sum()
    }

    /// Bytes the trees, and the leaf rows when kept ([`LeafRows::heap_bytes`]),
    /// occupy in memory.
    pub fn heap_bytes(&self) -> usize {
        self.trees.iter().map(Tree::heap_bytes).sum::<usize>()
            + self.leaf_rows.as_ref().map_or(0, LeafRows::heap_bytes)
    }

    /// Checks what a model read from a file must satisfy before it is used: every
    /// tree's nodes name an existing input, children come after their parent and
    /// inside the tree, category sets and (with three or more classes) leaf outputs lie
    /// inside their tables, every leaf's output and weight are sound numbers (see
    /// [`Tree::check`]), and every tree has the model's inputs and outputs. A model
    /// from [`Forest::train`] always passes. A well-formed tree can still hold wrong
    /// numbers, so a file must also be protected by a checksum.
    ///
    /// # Errors
    /// `InvalidModel` naming the tree and node that is inconsistent.
    pub fn check(&self) -> Result<()> {
        let p = self.meta.len();
        let k = self.n_outputs();
        let bad = |t: usize, what: String| {
            Err(Error::new(
                ErrorKind::InvalidModel,
                format!(
                    "the model is inconsistent: tree {t} {what}; retrain or use another model file"
                ),
            ))
        };
        if self.trees.is_empty() {
            return bad(0, "is missing: the model has no trees".into());
        }
        let whole = |what: String| {
            Err(Error::new(
                ErrorKind::InvalidModel,
                format!("the model is inconsistent: {what}; retrain or use another model file"),
            ))
        };
        match self.task {
            Task::Classify if self.classes.is_empty() => {
                return whole("it predicts classes but lists none".into())
            }
            Task::Regress if !self.classes.is_empty() => {
                return whole("it is a regression model with class outputs".into())
            }
            _ => {}
        }
        let bins_fit = self.bins.len() == p
            && self
                .bins
                .iter()
                .all(|b| b.categorical || (b.lo.len() == b.n_bins && b.hi.len() == b.n_bins));
        if !bins_fit {
            return whole("its bin layout does not match its inputs".into());
        }
        if let Err(e) = self.card.check(self.classes.len(), &self.oob) {
            return whole(e.message().to_string());
        }
        if !self.fingerprint.is_sound() {
            return whole("its training-row fingerprint does not fit its row count".into());
        }
        if let Some(shift) = &self.prior_shift {
            let sound = shift.len() == self.classes.len()
                && shift.iter().all(|w| w.is_finite() && *w >= 0.0)
                && shift.iter().sum::<f64>() > 0.0;
            if !sound {
                return whole("its class-share shift does not fit its classes".into());
            }
        }
        for (t, tree) in self.trees.iter().enumerate() {
            if tree.n_features() != p {
                return bad(
                    t,
                    format!(
                        "was grown on {} inputs, the model has {p}",
                        tree.n_features()
                    ),
                );
            }
            if tree.n_outputs() != k {
                return bad(
                    t,
                    format!("has {} outputs, the model {k}", tree.n_outputs()),
                );
            }
            if let Err(e) = tree.check(&self.meta) {
                return bad(t, e.message().to_string());
            }
        }
        if let Some(draws) = &self.draws {
            draws.check(self.training_rows, self.trees.len())?;
        }
        if let Some(rows) = &self.leaf_rows {
            if self.task != Task::Regress {
                return whole("it keeps leaf rows, which only regression models keep".into());
            }
            rows.check(&self.trees)?;
        }
        if let Some(pool) = &self.pool {
            if let Err(e) = pool.check(&self.meta, self.classes.len(), self.trees.len()) {
                return whole(e.message().to_string());
            }
        }
        Ok(())
    }

    /// [`Forest::align`] for an outcome given beside the rows `x`, which it must match
    /// in length.
    pub(crate) fn align_rows(&self, x: ArrayView2<'_, f64>, outcome: &Outcome) -> Result<Outcome> {
        if outcome.len() != x.nrows() {
            return Err(Error::new(
                ErrorKind::LengthMismatch,
                format!(
                    "{} data rows but {} outcomes; they must match",
                    x.nrows(),
                    outcome.len()
                ),
            ));
        }
        self.align(outcome)
    }

    /// Translates an outcome into the model's class codes (by label), or checks a
    /// value outcome fits a regression model.
    pub(crate) fn align(&self, outcome: &Outcome) -> Result<Outcome> {
        outcome.validate()?;
        let classes = &self.classes;
        match (self.task, outcome) {
            (Task::Classify, Outcome::Classes { codes, labels }) => {
                let mut map = Vec::with_capacity(labels.len());
                for l in labels {
                    map.push(classes.iter().position(|c| c == l));
                }
                let mut out = Vec::with_capacity(codes.len());
                for (i, &c) in codes.iter().enumerate() {
                    if c == MISSING {
                        out.push(MISSING);
                        continue;
                    }
                    match map[c as usize] {
                        Some(m) => out.push(m as u32),
                        None => {
                            return Err(Error::new(
                                ErrorKind::OutcomeMismatch,
                                format!(
                                    "row {i}: class '{}' was not seen in training; the model \
                                     knows {}",
                                    labels[c as usize],
                                    classes.join(", ")
                                ),
                            ))
                        }
                    }
                }
                Ok(Outcome::Classes {
                    codes: out,
                    labels: classes.clone(),
                })
            }
            (Task::Regress, Outcome::Values(v)) => Ok(Outcome::Values(v.clone())),
            (Task::Classify, Outcome::Values(_)) => Err(Error::new(
                ErrorKind::OutcomeMismatch,
                "the model predicts classes but the outcome given is numeric; give the class \
                 labels",
            )),
            (Task::Regress, Outcome::Classes { .. }) => Err(Error::new(
                ErrorKind::OutcomeMismatch,
                "the model predicts values but the outcome given is classes; give numbers",
            )),
        }
    }
}
