//! What a pooled model ([`crate::pool`]) keeps of each partition's own model: where
//! its rows came from, its seed and trees, its own out-of-bag summary and importance,
//! its training-row fingerprint, and how the pooled category codes map to its own.
//! A pooled model has no out-of-bag figures of its own: each tree saw a bootstrap of
//! its partition only, so its out-of-bag rows are rows of that partition, and the
//! figures stay per partition.
use crate::card::ModelCard;
use crate::error::{Error, ErrorKind, Result};
use crate::fingerprint::RowFingerprint;
use crate::importance::PermutationImportance;
use crate::oob_summary::OobSummary;
use copse_tree::{FeatureKind, FeatureMeta};
use serde::{Deserialize, Serialize};

/// The sentence every report on a pooled model shows.
pub const POOLED_CAUTION: &str = "this model pools forests trained apart, each on one \
     partition of the rows; it is not the same model as one trained on all rows: each tree \
     saw a bootstrap of its own partition only, so there is no out-of-bag figure for the \
     whole, only each partition's own";

/// One partition's model as a pooled model keeps it.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct PoolMember {
    /// The name the model was given to the pool under (its file, as given).
    pub name: String,
    /// The model's own card: source, rows read, class counts or value range.
    pub card: ModelCard,
    /// Its seed.
    pub seed: u64,
    /// Its trees, which come in this order among the pooled model's trees.
    pub trees: usize,
    /// Its training rows.
    pub training_rows: usize,
    /// Its own out-of-bag summary (over its own partition's rows).
    pub oob: OobSummary,
    /// Its own out-of-bag permutation importance, when it had one.
    pub oob_importance: Option<PermutationImportance>,
    /// Its training-row fingerprint, over its own category codes.
    pub fingerprint: RowFingerprint,
    /// For each input, for a categorical one: the model's own code of each pooled
    /// category (`None` for a category its partition never had); `None` for numeric
    /// inputs.
    pub codes: Vec<Option<Vec<Option<u32>>>>,
}

/// The partitions a pooled model was made of, in the order their trees come.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Pool {
    /// One entry per partition's model.
    pub members: Vec<PoolMember>,
}

impl Pool {
    /// Whether a row of pooled codes may have been a training row of some partition:
    /// the row is read in each member's own codes and looked up in its fingerprint (a
    /// category the member never had cannot be in its rows).
    pub fn contains(&self, row: &[f64], scratch: &mut Vec<f64>) -> bool {
        self.members.iter().any(|m| {
            scratch.clear();
            for (j, &v) in row.iter().enumerate() {
                match m.codes.get(j).and_then(Option::as_ref) {
                    Some(map) if !v.is_nan() => match map.get(v as usize) {
                        Some(Some(own)) if v >= 0.0 && v.fract() == 0.0 => {
                            scratch.push(f64::from(*own))
                        }
                        _ => return false,
                    },
                    _ => scratch.push(v),
                }
            }
            m.fingerprint.contains(scratch.iter().copied())
        })
    }

    /// The chance a row that was no training row matches some partition's
    /// fingerprint: one minus the chance it matches none.
    pub fn false_match_rate(&self) -> f64 {
        1.0 - self
            .members
            .iter()
            .map(|m| 1.0 - m.fingerprint.false_match_rate())
            .product::<f64>()
    }

    /// Checks a record read from a file fits the model: tree counts add up, code maps
    /// fit the inputs, and each member's card fits its summary.
    pub(crate) fn check(&self, meta: &[FeatureMeta], n_classes: usize, trees: usize) -> Result<()> {
        let bad = |what: String| {
            Err(Error::new(
                ErrorKind::InvalidModel,
                format!("its record of pooled partitions {what}"),
            ))
        };
        if self.members.len() < 2 {
            return bad("holds fewer than two partitions".into());
        }
        if self.members.iter().map(|m| m.trees).sum::<usize>() != trees {
            return bad("does not add up to its trees".into());
        }
        for (k, m) in self.members.iter().enumerate() {
            if m.codes.len() != meta.len() || !m.fingerprint.is_sound() {
                return bad(format!("does not fit its inputs (partition {})", k + 1));
            }
            for (f, map) in meta.iter().zip(&m.codes) {
                let fits = match (&f.kind, map) {
                    (FeatureKind::Categorical { levels }, Some(map)) => map.len() == levels.len(),
                    (FeatureKind::Numeric, None) => true,
                    _ => false,
                };
                if !fits {
                    return bad(format!(
                        "has a category map that does not fit input '{}' (partition {})",
                        f.name,
                        k + 1
                    ));
                }
            }
            if let Err(e) = m.card.check(n_classes, &m.oob) {
                return bad(format!("partition {}: {}", k + 1, e.message()));
            }
        }
        Ok(())
    }
}
