//! What importance results are: how each input's importance was computed and measured,
//! its mean and standard error over replicates, and its rank. The computations live
//! beside: [`crate::oob_importance`] (each tree's out-of-bag rows, Breiman 2001,
//! section 10), [`crate::held_out`] (a labelled set the model has not seen), and
//! impurity decrease below (with its known bias, Strobl et al. 2007).
use crate::outcome::Outcome;
use copse_tree::{FeatureMeta, Impurity, Tree};
use serde::{Deserialize, Serialize};
use std::fmt;

/// Caution printed with impurity-decrease importance.
pub const IMPURITY_CAUTION: &str = "impurity-decrease importance favours inputs with many \
distinct values or categories, even when they carry no information (Strobl, Boulesteix, \
Zeileis & Hothorn 2007); prefer permutation importance to rank inputs";

/// How an importance was computed.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
pub enum ImportanceMethod {
    /// Per tree, the increase in error on its out-of-bag rows when the input is
    /// permuted among them; replicates are trees.
    OutOfBagPermutation,
    /// The increase in the forest's error on a labelled set the model has not seen when
    /// the input is permuted among its rows; replicates are repeats.
    HeldOutPermutation,
    /// Per tree, the weighted impurity decrease of the splits on the input, divided by
    /// the tree's total case weight; replicates are trees.
    ImpurityDecrease,
}

/// The quantity whose change is measured.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
pub enum ImportanceMeasure {
    /// Misclassification rate.
    Misclassification,
    /// Brier score (multi-class sum form).
    Brier,
    /// Mean squared error.
    MeanSquaredError,
    /// Gini impurity.
    Gini,
    /// Entropy in bits.
    Entropy,
    /// Variance (squared-error) impurity.
    Variance,
}

impl fmt::Display for ImportanceMethod {
    /// A stable name: `out_of_bag_permutation`, `held_out_permutation` or
    /// `impurity_decrease`.
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(match self {
            ImportanceMethod::OutOfBagPermutation => "out_of_bag_permutation",
            ImportanceMethod::HeldOutPermutation => "held_out_permutation",
            ImportanceMethod::ImpurityDecrease => "impurity_decrease",
        })
    }
}

impl ImportanceMeasure {
    /// A short stable name for machine-read output: `misclassification`, `brier`,
    /// `mse`, `gini`, `entropy` or `variance`.
    pub fn key(self) -> &'static str {
        match self {
            ImportanceMeasure::Misclassification => "misclassification",
            ImportanceMeasure::Brier => "brier",
            ImportanceMeasure::MeanSquaredError => "mse",
            ImportanceMeasure::Gini => "gini",
            ImportanceMeasure::Entropy => "entropy",
            ImportanceMeasure::Variance => "variance",
        }
    }
}

impl fmt::Display for ImportanceMeasure {
    /// The measure in words: "misclassification rate", "Brier score", "mean squared
    /// error", "Gini impurity", "entropy" or "variance".
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(match self {
            ImportanceMeasure::Misclassification => "misclassification rate",
            ImportanceMeasure::Brier => "Brier score",
            ImportanceMeasure::MeanSquaredError => "mean squared error",
            ImportanceMeasure::Gini => "Gini impurity",
            ImportanceMeasure::Entropy => "entropy",
            ImportanceMeasure::Variance => "variance",
        })
    }
}

/// Importance of one input.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct FeatureImportance {
    /// Input index (column).
    pub feature: usize,
    /// Input name.
    pub name: String,
    /// Mean over replicates.
    pub mean: f64,
    /// Standard error of the mean: sample standard deviation over replicates divided
    /// by the square root of their number; `None` with fewer than two replicates.
    /// It measures how much the trees (or repeats) vary for this one data set; it does
    /// not include the variation from drawing another training set, so `mean / std_error`
    /// overstates how surely an input matters, increasingly so with more trees.
    pub std_error: Option<f64>,
    /// Rank, 1 = most important (highest mean; ties to the lower input index).
    pub rank: usize,
}

/// One importance measure for every input.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Importance {
    /// How it was computed.
    pub method: ImportanceMethod,
    /// What was measured.
    pub measure: ImportanceMeasure,
    /// Number of replicates averaged (trees or repeats).
    pub replicates: usize,
    /// One entry per input, in input order.
    pub features: Vec<FeatureImportance>,
}

impl Importance {
    /// Entries from most to least important.
    pub fn ranked(&self) -> Vec<&FeatureImportance> {
        let mut v: Vec<&FeatureImportance> = self.features.iter().collect();
        v.sort_by_key(|f| f.rank);
        v
    }

    /// A caution to show beside this measure, if it has one.
    pub fn caution(&self) -> Option<&'static str> {
        (self.method == ImportanceMethod::ImpurityDecrease).then_some(IMPURITY_CAUTION)
    }

    /// Summarizes replicates (each a value per input).
    pub(crate) fn from_replicates(
        method: ImportanceMethod,
        measure: ImportanceMeasure,
        meta: &[FeatureMeta],
        reps: &[Vec<f64>],
    ) -> Importance {
        let r = reps.len();
        let mut features: Vec<FeatureImportance> = meta
            .iter()
            .enumerate()
            .map(|(j, m)| {
                let mean = reps.iter().map(|v| v[j]).sum::<f64>() / r.max(1) as f64;
                let std_error = (r >= 2).then(|| {
                    let ss = reps
                        .iter()
                        .map(|v| (v[j] - mean) * (v[j] - mean))
                        .sum::<f64>();
                    (ss / (r - 1) as f64).sqrt() / (r as f64).sqrt()
                });
                FeatureImportance {
                    feature: j,
                    name: m.name.clone(),
                    mean,
                    std_error,
                    rank: 0,
                }
            })
            .collect();
        let mut order: Vec<usize> = (0..features.len()).collect();
        order.sort_by(|&a, &b| {
            features[b]
                .mean
                .total_cmp(&features[a].mean)
                .then(a.cmp(&b))
        });
        for (rank, &j) in order.iter().enumerate() {
            features[j].rank = rank + 1;
        }
        Importance {
            method,
            measure,
            replicates: r,
            features,
        }
    }
}

/// Permutation importance: the headline error measure, and for classes also the
/// Brier score (which sees changes in probability that do not flip a prediction).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct PermutationImportance {
    /// Increase in misclassification rate (classes) or mean squared error (regression).
    pub error: Importance,
    /// Increase in Brier score (classes only).
    pub brier: Option<Importance>,
}

/// The permutation importance tables of an outcome from per-replicate increases in
/// error and Brier score.
pub(crate) fn permutation_tables(
    method: ImportanceMethod,
    outcome: &Outcome,
    meta: &[FeatureMeta],
    errs: &[Vec<f64>],
    briers: &[Vec<f64>],
) -> PermutationImportance {
    match outcome {
        Outcome::Classes { .. } => PermutationImportance {
            error: Importance::from_replicates(
                method,
                ImportanceMeasure::Misclassification,
                meta,
                errs,
            ),
            brier: Some(Importance::from_replicates(
                method,
                ImportanceMeasure::Brier,
                meta,
                briers,
            )),
        },
        Outcome::Values(_) => PermutationImportance {
            error: Importance::from_replicates(
                method,
                ImportanceMeasure::MeanSquaredError,
                meta,
                errs,
            ),
            brier: None,
        },
    }
}

/// Impurity-decrease importance: per tree, the weighted impurity decrease of the splits
/// on each input divided by the tree's total case weight (so a tree contributes the
/// decrease per case); mean and standard error over trees.
pub(crate) fn impurity_importance(
    trees: &[Tree],
    bag_weights: &[f64],
    meta: &[FeatureMeta],
    outcome: &Outcome,
    impurity: Impurity,
) -> Importance {
    let reps: Vec<Vec<f64>> = trees
        .iter()
        .zip(bag_weights)
        .map(|(t, &w)| t.impurity_decrease().iter().map(|d| d / w).collect())
        .collect();
    let measure = match (outcome, impurity) {
        (Outcome::Values(_), _) => ImportanceMeasure::Variance,
        (_, Impurity::Gini) => ImportanceMeasure::Gini,
        (_, Impurity::Entropy) => ImportanceMeasure::Entropy,
    };
    Importance::from_replicates(ImportanceMethod::ImpurityDecrease, measure, meta, &reps)
}
