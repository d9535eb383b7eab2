//! The arguments of `copse train` (whole forests and `--tree-range` parts) and `copse
//! merge`.
use super::{
    parse_features_per_split, parse_sampling, ColumnRoles, CsvArgs, CutsArg, DelimiterArg,
    ImpurityArg,
};
use clap::Args;
use copse_forest::{FeaturesPerSplit, Sampling};
use std::path::PathBuf;

/// `copse train`.
#[derive(Debug, Args)]
pub struct TrainArgs {
    /// Training data: a CSV file with a header row, or - for standard input.
    #[arg(long, value_name = "FILE")]
    pub data: String,

    // Help lists --target, then --out, then the other roles: --target is pinned to place
    // 1 (see `ColumnRoles`), --out to place 2, and the other roles follow from place 3.
    #[command(flatten, next_display_order = 3)]
    pub roles: ColumnRoles,

    /// Where to write the model file.
    #[arg(long, value_name = "MODEL", display_order = 2)]
    pub out: PathBuf,

    #[command(flatten)]
    pub csv: CsvArgs,

    /// Number of trees.
    #[arg(long, default_value_t = 500, value_name = "N", value_parser = clap::value_parser!(u32).range(1..=1_000_000))]
    pub trees: u32,

    /// Inputs tried at each split: a count such as 4, a share such as 33%, or root (square
    /// root of the inputs), log (log2 of the inputs) or every [default: root for classes,
    /// a third of the inputs for numbers, at least 2 with 3 or more inputs].
    #[arg(long, value_name = "RULE", value_parser = parse_features_per_split, conflicts_with = "bagging")]
    pub features_per_split: Option<FeaturesPerSplit>,

    /// Bagged trees: every input is tried at every split (same as --features-per-split every).
    #[arg(long)]
    pub bagging: bool,

    /// How each tree's rows are drawn: bootstrap, subsample:F (F in (0,1]) or none
    /// [default: bootstrap; none with --cuts random].
    #[arg(long, value_name = "SCHEME", value_parser = parse_sampling)]
    pub sampling: Option<Sampling>,

    /// Draw the same number of rows from every class for each tree (for rare classes).
    #[arg(long)]
    pub balanced: bool,

    /// Impurity measure for classification splits.
    #[arg(long, value_enum, default_value = "gini")]
    pub impurity: ImpurityArg,

    /// Cut point on each input tried: the best one, or one drawn at random (randomized
    /// cut points: faster, smoother; every row in every tree unless --sampling is given,
    /// so no out-of-bag check).
    #[arg(long, value_enum, default_value = "best", value_name = "CHOICE")]
    pub cuts: CutsArg,

    /// Deepest level a leaf may sit at (the root is level 0, so 1 allows a single split)
    /// [default: no limit].
    #[arg(long, value_name = "N", value_parser = clap::value_parser!(u32).range(1..))]
    pub max_depth: Option<u32>,

    /// Fewest training rows a leaf may hold.
    #[arg(long, default_value_t = 1, value_name = "N", value_parser = clap::value_parser!(u32).range(1..))]
    pub min_leaf: u32,

    /// Most value bins per numeric input (more bins: finer thresholds, slower training).
    #[arg(long, default_value_t = 255, value_name = "N", value_parser = clap::value_parser!(u32).range(2..=65535))]
    pub bins: u32,

    /// Seed of every random draw: the same seed, data and settings give the same model.
    #[arg(long, default_value_t = 1, value_name = "N")]
    pub seed: u64,

    /// Also write each training row's out-of-bag prediction to this CSV file.
    #[arg(long, value_name = "FILE")]
    pub oob_out: Option<PathBuf>,

    /// Also write SVG charts (importance, out-of-bag error by number of trees) here.
    #[arg(long, value_name = "DIR")]
    pub plots: Option<PathBuf>,

    /// Keep in the model how many times each tree drew each row (rows x trees bytes),
    /// so that 'copse score --uncertainty' can give standard errors.
    #[arg(long)]
    pub keep_draws: bool,

    /// Keep in the model the rows each leaf was grown on and the training outcomes
    /// (about 3 bytes per row and tree under the bootstrap, plus 4 per node), so that
    /// 'copse score --interval' can give ranges of a numeric target; the report then
    /// says how often outcomes fell inside their out-of-bag 90% range.
    #[arg(long)]
    pub keep_leaf_rows: bool,

    /// Test each input's importance against N forests trained on a shuffled target and
    /// report p-values (costs N more forests; 199 gives p-values down to 0.005).
    #[arg(long, value_name = "N", value_parser = clap::value_parser!(u32).range(1..=100_000))]
    pub shuffled_target_runs: Option<u32>,

    /// The option's former spelling, refused with the new one.
    #[arg(long = "null-permutations", hide = true, value_name = "N", num_args = 0..=1,
          default_missing_value = "", value_parser = renamed_shuffled_target_runs)]
    pub renamed_shuffled_target_runs: Option<u32>,

    /// Print the report as one JSON object instead of text.
    #[arg(long)]
    pub json: bool,

    /// Also write the whole report, with its charts and decision tables, as one HTML
    /// file that opens offline.
    #[arg(long, value_name = "FILE.html")]
    pub report: Option<PathBuf>,

    #[command(flatten)]
    pub decision: crate::decision_args::DecisionArgs,

    /// Train even when the model would obviously not fit in the memory available.
    #[arg(long)]
    pub allow_large: bool,

    /// Grow only trees A..B of the --trees in all (counting from 0, B left out) and
    /// write them to --out as a part file, to merge with the other parts by 'copse
    /// merge' (one task of a job array each).
    #[arg(long, value_name = "A..B", value_parser = parse_tree_range)]
    pub tree_range: Option<TreeRange>,
}

/// `copse merge`.
#[derive(Debug, Args)]
pub struct MergeArgs {
    /// Part files from 'copse train --tree-range', in any order, and at most one model
    /// file whose trees come first (to grow it).
    #[arg(required = true, value_name = "PART")]
    pub parts: Vec<PathBuf>,

    /// Where to write the merged model file.
    #[arg(long, value_name = "MODEL")]
    pub out: PathBuf,

    /// The training data the parts were grown on (the out-of-bag figures and importance
    /// are computed from it again) [default: the file the parts name].
    #[arg(long, value_name = "FILE")]
    pub data: Option<String>,

    /// Field separator of the training data.
    #[arg(long, value_enum, default_value = "comma", value_name = "SEP")]
    pub delimiter: DelimiterArg,

    /// Print the report as one JSON object instead of text.
    #[arg(long)]
    pub json: bool,
}

/// `copse pool`.
#[derive(Debug, Args)]
pub struct PoolArgs {
    /// Model files, one per partition of the rows, each from 'copse train' on its own
    /// partition file with the same settings (the seed and --trees may differ); their
    /// trees come in this order.
    #[arg(required = true, num_args = 2.., value_name = "MODEL")]
    pub models: Vec<PathBuf>,

    /// Where to write the pooled model file.
    #[arg(long, value_name = "MODEL")]
    pub out: PathBuf,

    /// Print the report as one JSON object instead of text.
    #[arg(long)]
    pub json: bool,
}

/// Trees `start..end` of a forest (counting from 0, `end` left out), as
/// `--tree-range` gives them (kept small: the arguments of every command share one
/// enum).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct TreeRange {
    /// The first tree.
    pub start: u32,
    /// One past the last tree.
    pub end: u32,
}

impl TreeRange {
    /// As a range of indices.
    pub fn indices(self) -> std::ops::Range<usize> {
        self.start as usize..self.end as usize
    }
}

/// Reads `A..B` (tree indices counting from 0, B left out, A < B).
fn parse_tree_range(s: &str) -> Result<TreeRange, String> {
    let bad = || {
        format!(
            "'{s}' is not a range of trees; write A..B with whole numbers A < B, for example \
             0..100 for the first hundred trees"
        )
    };
    let (a, b) = s.trim().split_once("..").ok_or_else(bad)?;
    let (a, b) = (a.trim().parse::<u32>(), b.trim().parse::<u32>());
    match (a, b) {
        (Ok(start), Ok(end)) if start < end => Ok(TreeRange { start, end }),
        _ => Err(bad()),
    }
}

fn renamed_shuffled_target_runs(_: &str) -> Result<u32, String> {
    Err("this option is now written --shuffled-target-runs N".to_string())
}
