//! `train` on named columns: read as the command reads a training file (kinds, notes,
//! the task), checked and grown with the command's settings and rules, on copse's
//! own threads with the interpreter let go; the model file it makes is the one
//! `copse train` writes for the same data, source name and settings.
use crate::columns::{frame, PyColumn};
use crate::errors::{self, Kind};
use crate::model::NativeModel;
use crate::parts::NativePart;
use crate::pool;
use copse_cli::args::ImpurityArg;
use copse_cli::decision_args::DecisionArgs;
use copse_cli::report::judged::{Judged, Scores};
use copse_cli::report::train::{TrainFacts, TrainView};
use copse_data::{Missing, Roles, TrainingTable};
use copse_forest::{CutChoice, FeaturesPerSplit, ForestSettings, Sampling, Task, TrainOptions};
use pyo3::prelude::*;
use std::time::Instant;

/// The roles and settings of a training run, as the Python half passes them (already
/// checked for type; ranges and combinations are checked here).
#[derive(FromPyObject)]
pub struct TrainSettings {
    #[pyo3(item)]
    target: String,
    #[pyo3(item)]
    ignore: Vec<String>,
    #[pyo3(item)]
    categorical: Vec<String>,
    #[pyo3(item)]
    numeric: Vec<String>,
    #[pyo3(item)]
    task: Option<String>,
    #[pyo3(item)]
    trees: usize,
    #[pyo3(item)]
    features_per_split: String,
    #[pyo3(item)]
    sampling: Option<String>,
    #[pyo3(item)]
    balanced: bool,
    #[pyo3(item)]
    impurity: String,
    #[pyo3(item)]
    min_leaf: u32,
    #[pyo3(item)]
    max_depth: Option<u32>,
    #[pyo3(item)]
    bins: u32,
    #[pyo3(item)]
    seed: u64,
    #[pyo3(item)]
    keep_draws: bool,
    #[pyo3(item)]
    threads: Option<usize>,
    #[pyo3(item)]
    allow_large: bool,
    #[pyo3(item)]
    cuts: String,
    #[pyo3(item)]
    keep_leaf_rows: bool,
    #[pyo3(item)]
    weights: Option<String>,
    #[pyo3(item)]
    group: Option<String>,
}

fn usage(message: impl Into<String>) -> PyErr {
    errors::raise(Kind::Usage, message)
}

impl TrainSettings {
    /// The roles of the columns.
    fn roles(&self) -> PyResult<Roles> {
        let task = match self.task.as_deref() {
            None => None,
            Some("classify") => Some(Task::Classify),
            Some("regress") => Some(Task::Regress),
            Some(other) => {
                return Err(usage(format!(
                    "task '{other}' is not known; use 'classify', 'regress' or None (read from the target)"
                )))
            }
        };
        Ok(Roles {
            target: self.target.clone(),
            ignore: self.ignore.clone(),
            categorical: self.categorical.clone(),
            numeric: self.numeric.clone(),
            task,
            weights: self.weights.clone(),
            group: self.group.clone(),
        })
    }

    /// The forest's settings, in the command's ranges.
    fn forest(&self) -> PyResult<ForestSettings> {
        if !(1..=1_000_000).contains(&self.trees) {
            return Err(usage(format!(
                "trees={} is out of range; use 1 to 1000000",
                self.trees
            )));
        }
        if self.min_leaf == 0 {
            return Err(usage("min_leaf must be at least 1"));
        }
        if self.max_depth == Some(0) {
            return Err(usage(
                "max_depth must be at least 1 (1 allows a single split), or None for no limit",
            ));
        }
        if !(2..=65535).contains(&self.bins) {
            return Err(usage(format!(
                "bins={} is out of range; use 2 to 65535",
                self.bins
            )));
        }
        let fps: FeaturesPerSplit = self
            .features_per_split
            .parse()
            .map_err(|e: copse_forest::Error| usage(e.message()))?;
        let cuts = match self.cuts.as_str() {
            "best" => CutChoice::Best,
            "random" => CutChoice::Random,
            other => {
                return Err(usage(format!(
                    "cuts '{other}' is not known; use 'best' or 'random'"
                )))
            }
        };
        // As the command: without a sampling given, the usual one for the cut choice.
        let sampling: Sampling = match self.sampling.as_deref() {
            Some(text) => text
                .parse()
                .map_err(|e: copse_forest::Error| usage(e.message()))?,
            None if self.balanced => Sampling::Bootstrap,
            None => Sampling::usual_for(cuts),
        };
        let impurity = match self.impurity.as_str() {
            "gini" => ImpurityArg::Gini,
            "entropy" => ImpurityArg::Entropy,
            other => {
                return Err(usage(format!(
                    "impurity '{other}' is not known; use 'gini' or 'entropy'"
                )))
            }
        };
        if self.keep_draws && (sampling != Sampling::Bootstrap || self.balanced) {
            return Err(usage(
                "keep_draws is for standard errors, which assume plain bootstrap samples; use \
                 sampling='bootstrap' without balanced=True, or drop keep_draws",
            ));
        }
        Ok(ForestSettings {
            trees: self.trees,
            features_per_split: fps,
            sampling,
            balanced: self.balanced,
            tree: copse_forest::TreeRules {
                cuts,
                ..copse_cli::commands::tree_settings(impurity, self.max_depth, self.min_leaf)
            },
            bins: self.bins as usize,
            seed: self.seed,
        })
    }
}

/// Trains a forest on the columns `columns` named `names` (the whole called
/// `source`) with `settings`. Returns the model, the notes about the data, and the
/// `copse train --json` report.
///
/// # Errors
/// `UsageError` for settings out of range or contradicting each other or the data;
/// `BadInputError` for data that cannot be trained on; `KeyboardInterrupt` when
/// interrupted.
#[pyfunction]
pub fn train(
    py: Python<'_>,
    source: String,
    names: Vec<String>,
    columns: Vec<PyColumn<'_>>,
    settings: TrainSettings,
) -> PyResult<(NativeModel, Vec<String>, String)> {
    let started = Instant::now();
    let (table, forest_settings, pool) = prepare(py, source, names, columns, &settings)?;
    let keep_draws = settings.keep_draws;
    let keep_leaf_rows = settings.keep_leaf_rows;
    let (trained, raised) = pool::run_stoppable(py, &pool, |stop| {
        let options = TrainOptions {
            keep_draws,
            keep_leaf_rows,
            stop: Some(stop),
            ..TrainOptions::default()
        };
        table.train(&forest_settings, &options)
    })?;
    if let Some(interruption) = raised {
        // The exception says, through its cause, that training stopped unfinished.
        if let Err(e) = &trained {
            interruption.set_cause(py, Some(errors::forest(e)));
        }
        return Err(interruption);
    }
    let trained = trained.map_err(|e| errors::forest(&e))?;
    let training_seconds = started.elapsed().as_secs_f64();
    let model = trained.forest;
    let model_bytes = model.to_bytes().map_err(|e| errors::forest(&e))?.len() as u64;
    let judged = Judged::new(
        &model,
        Scores {
            preds: trained.oob.predictions.view(),
            outcome: &table.outcome,
            kind: "out-of-bag",
            training_rows: None,
            by: None,
        },
        &DecisionArgs::default(),
    )
    .map_err(|e| errors::command(&e))?;
    let missing_cells = table.missing_cells();
    let view = TrainView::new(
        &model,
        &TrainFacts {
            shuffle: None,
            model_bytes,
            outputs: &[],
            threads: pool.current_num_threads(),
            seconds: started.elapsed().as_secs_f64(),
            training_seconds,
            notes: &table.notes,
            missing_cells: &missing_cells,
            judged: Some(&judged),
        },
    );
    let json = copse_cli::report::json_text(&view).map_err(|e| errors::command(&e))?;
    drop(view);
    drop(judged);
    Ok((NativeModel::new(model), table.notes.clone(), json))
}

/// Reads the columns as the command reads a training file and resolves the settings,
/// with the command's checks; returns the table, the forest's settings and the pool.
fn prepare(
    py: Python<'_>,
    source: String,
    names: Vec<String>,
    columns: Vec<PyColumn<'_>>,
    settings: &TrainSettings,
) -> PyResult<(
    TrainingTable,
    ForestSettings,
    std::sync::Arc<rayon::ThreadPool>,
)> {
    let roles = settings.roles()?;
    let forest_settings = settings.forest()?;
    let frame = frame(&source, names, columns)?;
    let pool = pool::pool(settings.threads)?;
    let table = py
        .detach(|| {
            let input = frame.into_input()?;
            TrainingTable::from_csv(input, &roles, Missing::standard())
        })
        .map_err(|e| errors::data(&e))?;
    if settings.balanced && table.task == Task::Regress {
        return Err(usage(format!(
            "balanced=True draws the same number of rows from each class, so it needs a class \
             target, but '{}' is read as numbers; drop balanced or use task='classify'",
            table.target
        )));
    }
    copse_cli::commands::check_features_per_split(forest_settings.features_per_split, &table)
        .map_err(|e| usage(e.message()))?;
    if !settings.allow_large {
        check_memory(&table, &forest_settings, settings)?;
    }
    if settings.balanced && settings.group.is_some() {
        return Err(usage(
            "balanced=True draws rows by class, and the groups of group= may mix classes; use \
             one or the other",
        ));
    }
    Ok((table, forest_settings, pool))
}

/// Grows trees `start..end` of the forest `settings` describe on the columns, as
/// `copse train --tree-range` does; the part merges with the others into the model of
/// one run ([`crate::parts::merge`]).
///
/// # Errors
/// As for [`train`], and `UsageError` for a range that is empty or ends past `trees`.
#[pyfunction]
pub fn train_part(
    py: Python<'_>,
    source: String,
    names: Vec<String>,
    columns: Vec<PyColumn<'_>>,
    settings: TrainSettings,
    start: usize,
    end: usize,
) -> PyResult<(NativePart, Vec<String>)> {
    if start >= end || end > settings.trees {
        return Err(usage(format!(
            "tree_range=({start}, {end}) is not a part of a forest of {} trees; give (a, b) \
             with a < b <= trees",
            settings.trees
        )));
    }
    let (table, forest_settings, pool) = prepare(py, source, names, columns, &settings)?;
    let (part, raised) = pool::run_stoppable(py, &pool, |stop| {
        let options = TrainOptions {
            keep_draws: settings.keep_draws,
            keep_leaf_rows: settings.keep_leaf_rows,
            stop: Some(stop),
            ..TrainOptions::default()
        };
        table.train_part(&forest_settings, start..end, &options)
    })?;
    if let Some(interruption) = raised {
        if let Err(e) = &part {
            interruption.set_cause(py, Some(errors::forest(e)));
        }
        return Err(interruption);
    }
    let part = part.map_err(|e| errors::forest(&e))?;
    Ok((NativePart::new(part), table.notes.clone()))
}

/// Refuses, before growing anything, a model that obviously would not fit in the
/// memory available, by the command's estimate (`copse_cli::memory`).
fn check_memory(
    table: &TrainingTable,
    forest: &ForestSettings,
    settings: &TrainSettings,
) -> PyResult<()> {
    use copse_cli::memory;
    let Some(available) = memory::available_bytes() else {
        return Ok(());
    };
    let request = memory::Request::new(table, forest, settings.keep_draws);
    let need = memory::peak_bytes(&request);
    if need > available as f64 {
        return Err(usage(format!(
            "training {} trees on the {} rows of {} with min_leaf={} could need about {} of \
             memory at its peak, but only {} is available; use fewer trees, a larger min_leaf \
             or a max_depth (or allow_large=True to try anyway)",
            settings.trees,
            request.rows,
            table.source,
            settings.min_leaf,
            copse_cli::numbers::binary_bytes(need),
            copse_cli::numbers::binary_bytes(available as f64)
        )));
    }
    Ok(())
}
