//! Command-line arguments, parsed with no I/O: the raw values each subcommand accepts.
//! Checks that need no files (ranges, words) happen here, so a bad flag is a usage
//! error (exit 2) before any work starts.
use crate::help::{
    DEMO_EXAMPLES, EFFECT_EXAMPLES, EVALUATE_EXAMPLES, EXPLAIN_EXAMPLES, IMPORTANCE_EXAMPLES,
    INSPECT_EXAMPLES, MAKE_DEMO_DATA_EXAMPLES, MERGE_EXAMPLES, POOL_EXAMPLES, SCORE_EXAMPLES,
    STABILITY_EXAMPLES, TRAIN_EXAMPLES, TUNE_EXAMPLES,
};
use clap::{Args, Parser, Subcommand};
use copse_data::Roles;
use copse_forest::Task;
use copse_forest::{FeaturesPerSplit, Sampling};
use std::path::PathBuf;

mod effect;
mod train;
mod tune;
mod values;
pub use effect::EffectArgs;
pub use train::{MergeArgs, PoolArgs, TrainArgs, TreeRange};
pub use tune::TuneArgs;
pub use values::{CutsArg, DecimalArg, DelimiterArg, ImpurityArg, OutFormat, TaskArg};

/// copse: grow an ensemble of decision trees from a CSV table, check how well it
/// predicts without a holdout (out-of-bag), rank which inputs matter, and score new
/// rows.
///
/// Start with `copse demo`. Model outputs support, and never replace, professional
/// judgement: validate on your own data before relying on them.
#[derive(Debug, Parser)]
#[command(name = "copse", version, max_term_width = 100)]
pub struct Cli {
    /// Threads to use (default: one per core). Results do not depend on it.
    // Listed last in every command's help, after the command's own options.
    #[arg(long, global = true, value_name = "N", value_parser = clap::value_parser!(u16).range(1..), display_order = LAST)]
    pub threads: Option<u16>,

    /// No progress bars and no notes on standard error (errors and warnings still show).
    #[arg(long, short, global = true, display_order = LAST + 1)]
    pub quiet: bool,

    /// What to do.
    #[command(subcommand)]
    pub command: Command,
}

/// Help place of the options every command shares (`--threads`, `-q`): after the
/// command's own.
const LAST: usize = 1000;

/// The subcommands; each help ends with worked examples on the demo register.
#[derive(Debug, Subcommand)]
pub enum Command {
    /// Train a model on a CSV file and print a report.
    #[command(after_help = TRAIN_EXAMPLES)]
    Train(TrainArgs),
    /// Predict for every row of a CSV file, streaming, in input order.
    #[command(after_help = SCORE_EXAMPLES)]
    Score(ScoreArgs),
    /// Say for every row of a CSV file how much each input moved its prediction away
    /// from the model's base value (exact Shapley values), with the largest reasons in
    /// words; streaming, in input order.
    #[command(after_help = EXPLAIN_EXAMPLES)]
    Explain(ExplainArgs),
    /// Measure a model's accuracy on a labelled CSV file it has not seen.
    #[command(after_help = EVALUATE_EXAMPLES)]
    Evaluate(EvaluateArgs),
    /// Rank inputs by permutation importance on a labelled CSV file.
    #[command(after_help = IMPORTANCE_EXAMPLES)]
    Importance(ImportanceArgs),
    /// Draw how the predictions move as one input (or two together) changes: the
    /// average over the rows given and a sample of single rows' curves (CSV and SVG).
    #[command(after_help = EFFECT_EXAMPLES)]
    Effect(EffectArgs),
    /// Compare one tree, bagged trees and a random forest over several seeds: how much
    /// their error, answers and importance ranking move.
    #[command(after_help = STABILITY_EXAMPLES)]
    Stability(StabilityArgs),
    /// Try a small grid of settings (inputs per split, smallest leaf, cut points) judged
    /// by out-of-bag error against the default, and say which 'copse train' line to use.
    #[command(after_help = TUNE_EXAMPLES)]
    Tune(TuneArgs),
    /// Describe a model file: inputs, settings, sizes, out-of-bag accuracy, tree rules.
    #[command(after_help = INSPECT_EXAMPLES)]
    Inspect(InspectArgs),
    /// Merge part files (from 'copse train --tree-range') into the model one run of all
    /// their trees makes, byte for byte; a model file among them is grown by the parts.
    #[command(after_help = MERGE_EXAMPLES)]
    Merge(MergeArgs),
    /// Pool models each trained on one partition of the rows (one file each) into one
    /// model scoring by the mean over all their trees; not the model of one run.
    #[command(after_help = POOL_EXAMPLES)]
    Pool(PoolArgs),
    /// Run the whole job on the bundled, invented water-main register.
    #[command(after_help = DEMO_EXAMPLES)]
    Demo(DemoArgs),
    /// Write the invented water-main register at any size (seeded, reproducible).
    #[command(after_help = MAKE_DEMO_DATA_EXAMPLES)]
    MakeDemoData(MakeDemoDataArgs),
}

/// How to read a CSV file.
#[derive(Debug, Args, Clone)]
pub struct CsvArgs {
    /// Field separator.
    #[arg(long, value_enum, default_value = "comma", value_name = "SEP")]
    pub delimiter: DelimiterArg,

    /// Cell texts that mean "missing", comma-separated; an empty cell is always missing
    /// [default: NA,NaN].
    #[arg(long, value_name = "TOKEN,...", allow_hyphen_values = true)]
    pub missing: Option<String>,

    /// Decimal mark of the numbers: point (5.1) or comma (5,1; usual with --delimiter
    /// semicolon) [default: point; when scoring or checking a model, the model's].
    #[arg(long, value_enum, value_name = "MARK")]
    pub decimal: Option<DecimalArg>,
}

/// `--missing` of the commands that read rows for a model.
pub(crate) const MODEL_MISSING: &str =
    "Cell texts that mean \"missing\", comma-separated; an empty cell is \
always missing [default: the tokens the model was trained with]";

/// The roles of a training file's columns, as `copse train` and `copse stability`
/// take them: the target, the columns left out, forced kinds, and the task.
#[derive(Debug, Args, Clone)]
pub struct ColumnRoles {
    /// The column to predict.
    // Help place 1, right after --data (place 0) and the global options, so that
    // `copse train` can list --out between --target and the other roles.
    #[arg(long, value_name = "COL", display_order = 1)]
    pub target: String,

    /// Columns to leave out (identifiers, free text).
    #[arg(long, value_name = "COL,...", value_delimiter = ',')]
    pub ignore: Vec<String>,

    /// Columns to treat as categories even if they hold numbers.
    #[arg(long, value_name = "COL,...", value_delimiter = ',')]
    pub categorical: Vec<String>,

    /// Columns that must be numbers (a cell that is not one is an error).
    #[arg(long, value_name = "COL,...", value_delimiter = ',')]
    pub numeric: Vec<String>,

    /// Classification or regression [default: classify when the target holds text,
    /// regress when it holds numbers].
    #[arg(long, value_enum)]
    pub task: Option<TaskArg>,

    /// A column of case weights (numbers of 0 or more, not an input): a row of weight 3
    /// counts as three identical rows in the draws and in every figure.
    #[arg(long, value_name = "COL")]
    pub weights: Option<String>,

    /// A column of group labels (not an input): rows of one group (visits of one
    /// patient, inspections of one segment) are drawn together, and judged out of bag
    /// only by trees that saw none of the group.
    #[arg(long, value_name = "COL")]
    pub group: Option<String>,
}

impl From<&ColumnRoles> for Roles {
    fn from(r: &ColumnRoles) -> Self {
        Roles {
            target: r.target.clone(),
            ignore: r.ignore.clone(),
            categorical: r.categorical.clone(),
            numeric: r.numeric.clone(),
            task: r.task.map(Task::from),
            weights: r.weights.clone(),
            group: r.group.clone(),
        }
    }
}

/// `copse score`.
#[derive(Debug, Args)]
#[command(mut_arg("missing", |a| a.help(MODEL_MISSING)))]
pub struct ScoreArgs {
    /// The model file.
    #[arg(long, value_name = "MODEL")]
    pub model: PathBuf,

    /// Rows to score: a CSV file with a header row, or - for standard input.
    #[arg(long, value_name = "FILE")]
    pub data: String,

    /// Where to write the scored CSV [default: standard output].
    #[arg(long, value_name = "FILE")]
    pub out: Option<String>,

    /// Input columns to copy into the output, before the predictions (for example an id).
    #[arg(long, value_name = "COL,...", value_delimiter = ',')]
    pub keep: Vec<String>,

    /// Add a standard error for every output (se_prediction, or se_ and the class name
    /// for each class probability); the model must have been trained with --keep-draws.
    #[arg(long)]
    pub uncertainty: bool,

    /// Add the range the target probably falls in, at this coverage between 0 and 1:
    /// with 0.9, columns low_90 and high_90 (the 5% and 95% quantiles of the training
    /// outcomes sharing the row's leaves); the model must have been trained with
    /// --keep-leaf-rows on a numeric target.
    #[arg(long, value_name = "LEVEL", value_parser = parse_coverage)]
    pub interval: Option<f64>,

    /// Add a column 'unfamiliar': 1 for a row with a value outside the range the model
    /// was trained on or a category it never saw (the forest predicts flat there), else
    /// 0.
    #[arg(long)]
    pub flag_unfamiliar: bool,

    #[command(flatten)]
    pub csv: CsvArgs,

    /// Write a row that cannot be scored (text in a numeric input, a wrong number of
    /// fields, text that is not UTF-8) with an empty prediction and count it on standard
    /// error, instead of stopping with an error.
    #[arg(long)]
    pub blank_unscorable: bool,

    /// The input has no header row: these names its columns, in order, and its first
    /// line is a row (for pieces of a larger file in a pipeline).
    #[arg(long, value_name = "COL,...", value_delimiter = ',')]
    pub columns: Vec<String>,

    /// Leave the header row out of the CSV output (for pieces joined later).
    #[arg(long)]
    pub omit_header: bool,

    /// Output format: csv, json-lines (one JSON object per row, numbers as numbers,
    /// empty cells as null) or parquet (a file: text, 64-bit float and boolean
    /// columns, empty cells null).
    #[arg(long, value_enum, default_value = "csv", value_name = "FORMAT")]
    pub out_format: OutFormat,

    /// Rows read and scored together (memory use grows with it); by default sized
    /// from the model (see `copse_forest::Forest::scoring_block_rows`).
    #[arg(long, value_name = "N", hide = true, value_parser = clap::value_parser!(u32).range(1..))]
    pub block_rows: Option<u32>,
}

/// `copse explain`.
#[derive(Debug, Args)]
#[command(mut_arg("missing", |a| a.help(MODEL_MISSING)))]
pub struct ExplainArgs {
    /// The model file.
    #[arg(long, value_name = "MODEL")]
    pub model: PathBuf,

    /// Rows to explain: a CSV file with a header row, or - for standard input.
    #[arg(long, value_name = "FILE")]
    pub data: String,

    /// Where to write the explained CSV [default: standard output].
    #[arg(long, value_name = "FILE")]
    pub out: Option<String>,

    /// Input columns to copy into the output, first (for example an id).
    #[arg(long, value_name = "COL,...", value_delimiter = ',')]
    pub keep: Vec<String>,

    /// Reasons in words per row: the inputs that moved its prediction most, largest
    /// first (0 for none; at most the model's inputs are given).
    #[arg(long, value_name = "K", default_value_t = 3)]
    pub top: u16,

    #[command(flatten)]
    pub csv: CsvArgs,

    /// Write a row that cannot be read (text in a numeric input, a wrong number of
    /// fields, text that is not UTF-8) with empty cells and count it on standard error,
    /// instead of stopping with an error.
    #[arg(long)]
    pub blank_unscorable: bool,

    /// Rows read and explained together; by default a few hundred per thread.
    #[arg(long, value_name = "N", hide = true, value_parser = clap::value_parser!(u32).range(1..))]
    pub block_rows: Option<u32>,
}

/// `copse evaluate`.
#[derive(Debug, Args)]
#[command(mut_arg("missing", |a| a.help(MODEL_MISSING)))]
pub struct EvaluateArgs {
    /// The model file.
    #[arg(long, value_name = "MODEL")]
    pub model: PathBuf,

    /// Labelled rows (with the target column): a CSV file, or - for standard input.
    #[arg(long, value_name = "FILE")]
    pub data: String,

    #[command(flatten)]
    pub csv: CsvArgs,

    /// Print one JSON object instead of text.
    #[arg(long)]
    pub json: bool,

    /// Also give the figures for each value of this column (an input or any other
    /// column of the file), with intervals, to check the errors across groups.
    #[arg(long, value_name = "COL")]
    pub by: Option<String>,

    /// Also write the whole report, with its charts and decision tables, as one HTML
    /// file that opens offline.
    #[arg(long, value_name = "FILE.html")]
    pub report: Option<PathBuf>,

    /// Also write SVG charts (catch by rank, calibration) here.
    #[arg(long, value_name = "DIR")]
    pub plots: Option<PathBuf>,

    #[command(flatten)]
    pub decision: crate::decision_args::DecisionArgs,
}

/// `copse importance`.
#[derive(Debug, Args)]
#[command(mut_arg("missing", |a| a.help(MODEL_MISSING)))]
pub struct ImportanceArgs {
    /// The model file.
    #[arg(long, value_name = "MODEL")]
    pub model: PathBuf,

    /// Labelled rows the model has not seen: a CSV file, or - for standard input.
    #[arg(long, value_name = "FILE")]
    pub data: String,

    /// Times each input is shuffled (the standard error needs at least 2).
    #[arg(long, default_value_t = 10, value_name = "R", value_parser = clap::value_parser!(u32).range(1..=10_000))]
    pub repeats: u32,

    /// Seed of the shuffles.
    #[arg(long, default_value_t = 1, value_name = "N")]
    pub seed: u64,

    #[command(flatten)]
    pub csv: CsvArgs,

    /// Print one JSON object instead of text.
    #[arg(long)]
    pub json: bool,

    /// Also draw the ranking as an SVG chart in this file.
    #[arg(long, value_name = "FILE")]
    pub plot: Option<PathBuf>,
}

/// `copse stability`.
#[derive(Debug, Args)]
pub struct StabilityArgs {
    /// Data: a CSV file with a header row, or - for standard input.
    #[arg(long, value_name = "FILE")]
    pub data: String,

    #[command(flatten)]
    pub roles: ColumnRoles,

    #[command(flatten)]
    pub csv: CsvArgs,

    /// Seeds: each kind of model is trained once per seed.
    #[arg(long, default_value_t = 5, value_name = "S", value_parser = clap::value_parser!(u32).range(2..=100))]
    pub seeds: u32,

    /// Folds of the single tree's cross-validation.
    #[arg(long, default_value_t = 5, value_name = "K", value_parser = clap::value_parser!(u32).range(2..=100))]
    pub folds: u32,

    /// Trees in each bagged model and random forest.
    #[arg(long, default_value_t = 500, value_name = "N", value_parser = clap::value_parser!(u32).range(1..=1_000_000))]
    pub trees: u32,

    /// Inputs tried at each split by the random forest: a count such as 4, a share such
    /// as 33%, root or log [default: as for 'copse train'].
    #[arg(long, value_name = "RULE", value_parser = parse_features_per_split)]
    pub features_per_split: Option<FeaturesPerSplit>,

    /// Impurity measure for classification splits.
    #[arg(long, value_enum, default_value = "gini")]
    pub impurity: ImpurityArg,

    /// Deepest level a leaf may sit at [default: no limit].
    #[arg(long, value_name = "N", value_parser = clap::value_parser!(u32).range(1..))]
    pub max_depth: Option<u32>,

    /// Fewest training rows a leaf may hold.
    #[arg(long, default_value_t = 1, value_name = "N", value_parser = clap::value_parser!(u32).range(1..))]
    pub min_leaf: u32,

    /// Most value bins per numeric input.
    #[arg(long, default_value_t = 255, value_name = "N", value_parser = clap::value_parser!(u32).range(2..=65535))]
    pub bins: u32,

    /// Master seed: the seeds compared are drawn from it, so the report repeats exactly.
    #[arg(long, default_value_t = 1, value_name = "N")]
    pub seed: u64,

    /// Also draw the comparison as an SVG chart in this file.
    #[arg(long, value_name = "FILE")]
    pub plot: Option<PathBuf>,

    /// Print one JSON object instead of text.
    #[arg(long)]
    pub json: bool,
}

/// `copse inspect`.
#[derive(Debug, Args)]
pub struct InspectArgs {
    /// The model file.
    #[arg(long, value_name = "MODEL")]
    pub model: PathBuf,

    /// Also print the rules of tree K (counting from 0).
    #[arg(long, value_name = "K")]
    pub tree: Option<usize>,

    /// Print one JSON object instead of text.
    #[arg(long)]
    pub json: bool,
}

/// `copse demo`.
#[derive(Debug, Args)]
pub struct DemoArgs {
    /// Folder for every output (created if needed).
    #[arg(long, value_name = "DIR", default_value = "copse-demo-output")]
    pub out: PathBuf,
}

/// `copse make-demo-data`.
#[derive(Debug, Args)]
pub struct MakeDemoDataArgs {
    /// Folder to write water_mains.csv and water_mains_to_score.csv into.
    #[arg(long, value_name = "DIR", default_value = "demo-data")]
    pub out: PathBuf,

    /// Segments in the training register.
    #[arg(long, default_value_t = 2000, value_name = "N", value_parser = clap::value_parser!(u64).range(10..=100_000_000))]
    pub rows: u64,

    /// Segments in the file to score.
    #[arg(long, default_value_t = 500, value_name = "N", value_parser = clap::value_parser!(u64).range(1..=100_000_000))]
    pub score_rows: u64,

    /// Seed of the generator.
    #[arg(long, default_value_t = crate::demo_data::DEFAULT_SEED, value_name = "N")]
    pub seed: u64,
}

fn parse_features_per_split(s: &str) -> Result<FeaturesPerSplit, String> {
    s.parse::<FeaturesPerSplit>()
        .map_err(|e| e.message().to_string())
}

fn parse_coverage(s: &str) -> Result<f64, String> {
    match s.trim().parse::<f64>() {
        Ok(v) if v > 0.0 && v < 1.0 => Ok(v),
        _ => Err(format!(
            "'{s}' is not a coverage strictly between 0 and 1; give one such as 0.9 (for a range \
             from the 5% to the 95% quantile)"
        )),
    }
}

fn parse_sampling(s: &str) -> Result<Sampling, String> {
    s.parse::<Sampling>().map_err(|e| e.message().to_string())
}

#[cfg(test)]
mod tests {
    use super::*;
    use clap::CommandFactory;

    #[test]
    fn the_argument_definitions_are_consistent() {
        Cli::command().debug_assert();
    }

    /// Where the help lists an option (the byte offset of its spelling in the long help).
    fn help_place(command: &str, option: &str) -> usize {
        let mut cli = Cli::command();
        let help = cli
            .find_subcommand_mut(command)
            .expect("the subcommand exists")
            .render_long_help()
            .to_string();
        help.find(&format!("{option} <"))
            .unwrap_or_else(|| panic!("{command} --help lists {option}"))
    }

    #[test]
    fn help_lists_the_column_roles_in_the_documented_order() {
        // The order of README.md's option table for `copse train`: --target, --out, then
        // the other column roles; `copse stability` has no --out.
        let order = [
            "--data",
            "--target",
            "--out",
            "--ignore",
            "--categorical",
            "--delimiter",
        ];
        let places: Vec<usize> = order.iter().map(|o| help_place("train", o)).collect();
        assert!(places.windows(2).all(|w| w[0] < w[1]), "{places:?}");
        let order = [
            "--data",
            "--target",
            "--ignore",
            "--numeric",
            "--delimiter",
            "--seeds",
        ];
        let places: Vec<usize> = order.iter().map(|o| help_place("stability", o)).collect();
        assert!(places.windows(2).all(|w| w[0] < w[1]), "{places:?}");
    }

    #[test]
    fn bad_values_are_refused_at_parse_time() {
        let base = [
            "copse", "train", "--data", "d.csv", "--target", "y", "--out", "m",
        ];
        for extra in [
            ["--trees", "0"],
            ["--min-leaf", "0"],
            ["--features-per-split", "0"],
            ["--features-per-split", "1.5"],
            ["--features-per-split", "0.5"],
            ["--features-per-split", "sqrt"],
            ["--sampling", "subsample:2"],
        ] {
            let args: Vec<&str> = base.iter().copied().chain(extra).collect();
            assert!(Cli::try_parse_from(&args).is_err(), "{extra:?}");
        }
        let ok: Vec<&str> = base
            .iter()
            .copied()
            .chain(["--features-per-split", "50%", "--ignore", "a,b"])
            .collect();
        let cli = Cli::try_parse_from(&ok).unwrap();
        match cli.command {
            Command::Train(t) => {
                assert_eq!(t.features_per_split, Some(FeaturesPerSplit::Share(0.5)));
                assert_eq!(t.roles.ignore, vec!["a".to_string(), "b".to_string()]);
            }
            _ => panic!("parsed as another command"),
        }
    }
}
