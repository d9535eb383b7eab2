//! What a model file holds: the schema for reading new files, the trained forest, and
//! a record of the training run, plus loading with every consistency check a file
//! from elsewhere must pass.
use crate::error::{CliError, CliResult};
use crate::model_file;
use crate::schema::{Schema, Task};
use copse_forest::Forest;
use serde::{Deserialize, Serialize};
use std::path::Path;

/// A record of how the model was made (no clock times, so the same run gives the
/// same file byte for byte).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct TrainingRecord {
    /// Version of copse that trained it.
    pub copse_version: String,
    /// The training file's name as given.
    pub source: String,
    /// Data rows read.
    pub rows_read: usize,
    /// Rows left out because the target was missing.
    pub rows_without_outcome: usize,
    /// Columns left out with `--ignore`.
    pub ignored: Vec<String>,
    /// Rows per class in the training data (classification; model order).
    pub class_counts: Vec<u64>,
    /// The rule for inputs per split as given (`sqrt`, `0.5`, ...).
    pub features_rule: String,
    /// Smallest, mean and largest target value (regression).
    pub value_range: Option<[f64; 3]>,
}

/// The content of a model file.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Model {
    /// How to read new files.
    pub schema: Schema,
    /// The trees and their summaries.
    pub forest: Forest,
    /// How it was made.
    pub training: TrainingRecord,
}

impl Model {
    /// Writes the model through a temporary file and a rename.
    ///
    /// # Errors
    /// A failure when encoding or writing fails.
    pub fn save(&self, path: &Path) -> CliResult<()> {
        // A model that would be refused when read back is never written.
        self.check(&path.display().to_string()).map_err(|e| {
            CliError::failure(format!(
                "the model just trained fails the checks it would meet when read back ({}); \
                 nothing was written; this is a fault in copse, please report it with the data",
                e.message()
            ))
        })?;
        model_file::write(path, self)
    }

    /// Reads a model file and checks it is internally consistent.
    ///
    /// # Errors
    /// An input error (exit 2) for a missing, damaged, foreign, newer or inconsistent
    /// file, naming it and saying what to do.
    pub fn load(path: &Path) -> CliResult<Model> {
        let model: Model = model_file::read(path).map_err(|e| CliError::input(e.to_string()))?;
        model.verified(&path.display().to_string())
    }

    /// Decodes a model from the complete bytes of a model file and checks it.
    ///
    /// # Errors
    /// As for [`Model::load`].
    pub fn from_bytes(bytes: &[u8], name: &str) -> CliResult<Model> {
        let model: Model =
            model_file::decode(bytes, name).map_err(|e| CliError::input(e.to_string()))?;
        model.verified(name)
    }

    /// Checks a decoded model hangs together: trees well formed, the schema's inputs
    /// and classes the trees' own.
    fn verified(self, name: &str) -> CliResult<Model> {
        self.check(name)?;
        Ok(self)
    }

    /// The checks of [`Model::verified`], on a borrowed model.
    fn check(&self, name: &str) -> CliResult<()> {
        let model = self;
        let bad = |what: String| {
            CliError::input(format!(
                "{name} is not a usable model: {what}; retrain it with 'copse train'"
            ))
        };
        model
            .forest
            .check()
            .map_err(|e| bad(e.message().to_string()))?;
        if model.schema.features != model.forest.meta() {
            return Err(bad("its input list does not match its trees".into()));
        }
        let bins_fit = model.schema.bins.len() == model.schema.features.len()
            && model
                .schema
                .bins
                .iter()
                .all(|b| b.categorical || (b.lo.len() == b.n_bins && b.hi.len() == b.n_bins));
        if !bins_fit {
            return Err(bad("its bin layout does not match its inputs".into()));
        }
        let classes = model.forest.classes();
        match model.schema.target.task {
            Task::Classify
                if classes != model.schema.target.classes.as_slice() || classes.is_empty() =>
            {
                return Err(bad("its class list does not match its trees".into()));
            }
            Task::Regress if model.forest.n_outputs() != 1 || !classes.is_empty() => {
                return Err(bad("it is a regression model with class outputs".into()));
            }
            _ => {}
        }
        model.check_counts().map_err(|what| bad(what.to_string()))
    }

    /// The counts of the training record and the out-of-bag summary fit together (the
    /// reports subtract and add them): nothing counts more rows than were read, and
    /// per-class tables have one entry per class.
    fn check_counts(&self) -> Result<(), &'static str> {
        let t = &self.training;
        let read = t.rows_read as u64;
        let within = |n: u64| n <= read;
        // The sum of `v` when it does not overflow and stays within the rows read.
        fn total(mut v: impl Iterator<Item = u64>, read: u64) -> Option<u64> {
            v.try_fold(0u64, |a, b| a.checked_add(b))
                .filter(|&s| s <= read)
        }
        if !within(t.rows_without_outcome as u64) {
            return Err("its record leaves out more rows than it read");
        }
        let k = self.forest.classes().len();
        if self.schema.target.task == Task::Classify
            && (t.class_counts.len() != k || total(t.class_counts.iter().copied(), read).is_none())
        {
            return Err("its class counts do not fit its classes and rows");
        }
        let oob = self.forest.oob();
        if ![
            oob.rows_labelled,
            oob.rows_never_oob,
            oob.rows_missing_outcome,
        ]
        .iter()
        .all(|&n| within(n as u64))
        {
            return Err("its out-of-bag summary counts more rows than were read");
        }
        match &oob.metrics {
            Some(copse_forest::Metrics::Classes(m)) => {
                let square = m.confusion.len() == k && m.confusion.iter().all(|r| r.len() == k);
                let cells = total(m.confusion.iter().flatten().copied(), read);
                if !square || cells.is_none() || m.class_error.len() != k || !within(m.rows as u64)
                {
                    return Err("its out-of-bag confusion table does not fit its classes and rows");
                }
            }
            Some(copse_forest::Metrics::Values(m)) if !within(m.rows as u64) => {
                return Err("its out-of-bag summary counts more rows than were read");
            }
            _ => {}
        }
        Ok(())
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::schema::{Missing, TargetSchema};
    use copse_forest::{synth, ForestSettings};
    use ndarray::Array2;
    use rand::{Rng, SeedableRng};

    /// A small real model: 3 trees on 200 rows of the twonorm problem, with one
    /// categorical input added so category bit sets are present.
    fn small_model() -> Model {
        let data = synth::twonorm(200, 5);
        let (n, p) = data.x.dim();
        let x = Array2::from_shape_fn((n, p + 1), |(i, j)| {
            if j < p {
                data.x[[i, j]]
            } else {
                (i % 3) as f64
            }
        });
        let mut meta = data.meta.clone();
        meta.push(copse_tree::FeatureMeta::categorical(
            "shade",
            vec!["a".into(), "b".into(), "c".into()],
        ));
        let settings = ForestSettings {
            trees: 3,
            seed: 2,
            ..ForestSettings::default()
        };
        let trained = copse_forest::Forest::train(
            x.view(),
            &meta,
            &data.outcome,
            &settings,
            &copse_forest::TrainOptions::default(),
        )
        .unwrap();
        let classes = trained.forest.classes().to_vec();
        let bins = copse_tree::BinnedData::new(x.view(), &meta, 256)
            .unwrap()
            .bins()
            .to_vec();
        Model {
            schema: Schema {
                features: meta,
                target: TargetSchema {
                    name: "class".into(),
                    classes,
                    task: Task::Classify,
                },
                missing: Missing::standard(),
                bins,
            },
            forest: trained.forest,
            training: TrainingRecord {
                copse_version: "test".into(),
                source: "twonorm".into(),
                rows_read: n,
                rows_without_outcome: 0,
                ignored: Vec::new(),
                class_counts: vec![100, 100],
                features_rule: "auto".into(),
                value_range: None,
            },
        }
    }

    /// A hostile file can carry a valid checksum over altered contents. Whatever single
    /// byte is changed (checksum recomputed), reading either refuses the file or gives
    /// a model that predicts and renders without a panic.
    #[test]
    fn altered_contents_with_a_valid_checksum_never_panic() {
        let model = small_model();
        let bytes = model_file::encode(&model).unwrap();
        let n = bytes.len();
        let rows = Array2::from_shape_fn((20, model.forest.n_features()), |(i, j)| {
            if j + 1 == model.forest.n_features() {
                (i % 5) as f64 - 1.0
            } else {
                (i as f64 - 10.0) / 4.0
            }
        });
        let mut rng = rand::rngs::StdRng::seed_from_u64(11);
        for _ in 0..400 {
            let mut b = bytes.clone();
            let at = rng.gen_range(model_file::HEADER_LEN..n - model_file::TRAILER_LEN);
            b[at] ^= 1 << rng.gen_range(0..8);
            let crc = crc32fast::hash(&b[..n - 4]);
            b[n - 4..].copy_from_slice(&crc.to_le_bytes());
            if let Ok(m) = Model::from_bytes(&b, "hostile") {
                let _ = m.forest.predict(rows.view());
                for t in m.forest.trees() {
                    let _ =
                        copse_tree::render::render(t, m.forest.meta(), Some(m.forest.classes()));
                }
            }
        }
    }
}
