//! The arguments of `copse tune`: the data and column roles as for `copse train`, the
//! grid of settings to try, and the settings held fixed while judging.
use super::{parse_features_per_split, parse_sampling, ColumnRoles, CsvArgs, CutsArg, ImpurityArg};
use clap::Args;
use copse_forest::{FeaturesPerSplit, Sampling};
use std::path::PathBuf;

/// `copse tune`.
#[derive(Debug, Args)]
pub struct TuneArgs {
    /// Training data: a CSV file with a header row, or - for standard input.
    #[arg(long, value_name = "FILE")]
    pub data: String,

    #[command(flatten)]
    pub roles: ColumnRoles,

    #[command(flatten)]
    pub csv: CsvArgs,

    /// Trees in each forest tried.
    #[arg(long, default_value_t = 200, value_name = "N", value_parser = clap::value_parser!(u32).range(10..=100_000))]
    pub trees: u32,

    /// Inputs per split to try, comma-separated (counts, shares such as 33%, or root,
    /// log, every) [default: half, once and twice the default count, and every input].
    #[arg(long, value_name = "RULE,...", value_delimiter = ',', value_parser = parse_features_per_split)]
    pub try_features: Vec<FeaturesPerSplit>,

    /// Smallest leaves to try, comma-separated [default: 1,5,20].
    #[arg(long, value_name = "N,...", value_delimiter = ',', value_parser = clap::value_parser!(u32).range(1..))]
    pub try_min_leaf: Vec<u32>,

    /// Cut choices to try, comma-separated [default: best,random].
    #[arg(long, value_enum, value_name = "CHOICE,...", value_delimiter = ',')]
    pub try_cuts: Vec<CutsArg>,

    /// How each tree's rows are drawn while judging: bootstrap or subsample:F (the
    /// out-of-bag error needs rows left out, so not none).
    #[arg(long, default_value = "bootstrap", value_name = "SCHEME", value_parser = parse_sampling)]
    pub sampling: Sampling,

    /// Impurity measure for classification splits.
    #[arg(long, value_enum, default_value = "gini")]
    pub impurity: ImpurityArg,

    /// Deepest level a leaf may sit at [default: no limit].
    #[arg(long, value_name = "N", value_parser = clap::value_parser!(u32).range(1..))]
    pub max_depth: Option<u32>,

    /// Most value bins per numeric input.
    #[arg(long, default_value_t = 255, value_name = "N", value_parser = clap::value_parser!(u32).range(2..=65535))]
    pub bins: u32,

    /// Seed of every forest (all draw the same resamples, so they compare row by row).
    #[arg(long, default_value_t = 1, value_name = "N")]
    pub seed: u64,

    /// Also draw each setting's difference from the default as an SVG chart in this file.
    #[arg(long, value_name = "FILE")]
    pub plot: Option<PathBuf>,

    /// Print one JSON object instead of text.
    #[arg(long)]
    pub json: bool,
}
