//! copse-forest: bagged trees and random forests grown in parallel on one shared,
//! binned copy of the data, with out-of-bag error estimates, permutation importance
//! and class probabilities.
//!
//! The pieces, one concept per file:
//! - [`outcome`]: what is modelled ([`Outcome`]: classes with labels, or values);
//! - [`settings`]: how the forest is trained ([`ForestSettings`]);
//! - [`train`]: parallel training ([`Forest::train`]) and progress reports;
//! - [`forest`]: the model ([`Forest`]) and what training returns ([`Trained`]);
//! - [`part`], [`merge`]: trees `a..b` of a forest grown apart ([`ForestPart`]) and
//!   merged into the model of one run, byte for byte ([`Forest::merge_parts`]);
//! - [`pool`], [`pool_record`]: whole forests trained on separate partitions of the
//!   rows pooled into one model ([`Forest::pool`]), each partition's own figures kept;
//! - [`oob`]: out-of-bag predictions, error curve and summary;
//! - [`predict`]: batch prediction and evaluation on labelled data;
//! - [`metrics`]: error, confusion matrix, log loss, Brier score, ROC AUC, MSE;
//! - [`importance`]: permutation and impurity-decrease importance;
//! - [`decision`]: from two-class scores to decisions: catch by rank, cut-offs,
//!   calibration, intervals, no-skill baselines;
//! - [`card`]: what a model file records about how the model was made ([`ModelCard`]);
//! - [`case_weights`]: case weights and row groups given to training;
//! - [`model_file`]: the model file: save, load, bytes, checks on reading;
//! - [`task`]: classes or numbers ([`Task`]);
//! - [`draws`]: how many times each tree drew each row, kept on request ([`Draws`]);
//! - [`contributions`]: exact Shapley values of each row's prediction ([`Contributions`]);
//! - [`effects`]: effect curves of one input, mean and per row ([`EffectCurve`]);
//! - [`effect_surface`]: effect surfaces of two inputs and their interaction
//!   ([`EffectSurface`]);
//! - [`leaf_rows`]: the training rows of every leaf, kept on request ([`LeafRows`]);
//! - [`intervals`]: outcome quantiles and ranges of numeric outcomes (quantile
//!   regression forests) and their out-of-bag check ([`IntervalCheck`]);
//! - [`significance`]: p-values for permutation importance;
//! - [`stability`]: how one tree, bagged trees and a forest vary over seeds;
//! - [`tune`]: settings chosen by out-of-bag error over a small grid ([`tune::tune`]);
//! - [`uncertainty`]: standard errors of predictions (infinitesimal jackknife);
//! - [`unfamiliar`]: rows outside the training ranges ([`Unfamiliar`]);
//! - `synth` (feature `synth`): seeded generators of published synthetic problems.
//!
//! Determinism: every random draw comes from a generator seeded by the master seed
//! and the index of the tree (or input and repeat), and results are combined in index
//! order, so a model is the same, byte for byte, for any number of threads.
//!
//! # Example
//! ```
//! use copse_forest::{synth, Forest, ForestSettings, TrainOptions};
//!
//! // 300 cases of the twonorm problem (two overlapping 20-dimensional normals).
//! let data = synth::twonorm(300, 42);
//! let settings = ForestSettings { trees: 100, seed: 7, ..Default::default() };
//! let trained = Forest::train(data.x.view(), &data.meta, &data.outcome, &settings, &TrainOptions::default())?;
//! let oob = trained.forest.oob().metrics.as_ref().expect("rows were out of bag");
//! println!("out-of-bag error: {:.3}", oob.error());
//! // The best possible error on twonorm is 0.023; one tree gets about 0.2.
//! assert!(oob.error() < 0.12);
//! # Ok::<(), copse_forest::Error>(())
//! ```
#![deny(missing_docs)]
#![forbid(unsafe_code)]
// Tests may unwrap: a panic there is a failed test, not a user-facing crash.
#![cfg_attr(test, allow(clippy::unwrap_used))]

/// The `ndarray` this crate is built with, so that callers use the matching version.
pub use ndarray;

pub mod card;
pub mod case_weights;
pub mod contributions;
pub mod decision;
pub mod draws;
pub mod effect_surface;
pub mod effects;
pub mod error;
pub mod fingerprint;
pub mod forest;
pub mod held_out;
pub mod importance;
pub mod intervals;
mod leaf_paths;
// Scoring layout for the benchmark and the engine; not part of the stable API.
#[doc(hidden)]
pub mod leaf_masks;
pub mod leaf_rows;
mod loss;
pub mod merge;
pub mod metrics;
pub mod model_file;
pub mod oob;
pub mod oob_importance;
pub mod oob_summary;
pub mod outcome;
pub mod part;
mod plan;
pub mod pool;
pub mod pool_record;
pub mod predict;
mod priors;
pub mod progress;
mod reuse;
mod rng;
mod row_block;
mod sample;
pub mod settings;
pub mod significance;
pub mod stability;
#[cfg(feature = "synth")]
pub mod synth;
pub mod task;
pub mod train;
mod train_options;
pub mod tune;
mod turn_walk;
pub mod uncertainty;
pub mod unfamiliar;

pub use card::{DecimalMark, ModelCard, STANDARD_MISSING_TOKENS};
pub use case_weights::{GroupsRecord, WeightsRecord};
pub use contributions::{ContributionRanking, ContributionWalk, Contributions, RANKING_ROWS};
pub use copse_tree::{CutChoice, FeatureKind, FeatureMeta, Impurity, TreeSettings};
pub use draws::Draws;
pub use effect_surface::{EffectSurface, SurfaceSettings};
pub use effects::{EffectCurve, EffectGrid, EffectSettings};
pub use error::{io_reason, Error, ErrorKind, Result};
pub use fingerprint::RowFingerprint;
pub use forest::{Forest, Trained, NODE_BYTES};
pub use importance::{
    FeatureImportance, Importance, ImportanceMeasure, ImportanceMethod, PermutationImportance,
    IMPURITY_CAUTION,
};
pub use intervals::IntervalCheck;
pub use leaf_rows::LeafRows;
pub use metrics::{predicted_class, ClassMetrics, Metrics, ValueMetrics, WeightedTable};
pub use oob_summary::{OobReport, OobSummary};
pub use outcome::{natural_order, Outcome, MISSING};
pub use part::{ForestPart, PART_FORMAT_VERSION, PART_MAGIC};
pub use pool_record::{Pool, PoolMember, POOLED_CAUTION};
pub use predict::{Evaluation, SCORING_BLOCK_BYTES};
pub use progress::{Progress, Stage};
pub use settings::{FeaturesPerSplit, ForestSettings, Sampling, TreeRules};
pub use significance::{
    holdout_importance, mirrored_null_test, response_permutation_test, PermutationSignificance,
    Significance, SignificanceTest, MIRROR_FEW_NULL, MIRROR_MIN_NULL,
};
pub use stability::{
    stability_report, stability_report_grouped, KindStability, ModelKind, StabilityReport,
    StabilitySettings,
};
pub use task::Task;
pub use train::{Prepared, TrainOptions};
pub use uncertainty::Uncertainty;
pub use unfamiliar::{Familiar, Unfamiliar};
