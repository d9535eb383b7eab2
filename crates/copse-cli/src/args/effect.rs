//! The arguments of `copse effect`, parsed with no I/O.
use super::{CsvArgs, MODEL_MISSING};
use clap::Args;
use std::path::PathBuf;

/// `copse effect`.
#[derive(Debug, Args)]
#[command(mut_arg("missing", |a| a.help(MODEL_MISSING)))]
pub struct EffectArgs {
    /// The model file.
    #[arg(long, value_name = "MODEL")]
    pub model: PathBuf,

    /// Rows to average over (the training file or rows like those the model will
    /// score): a CSV file with a header row, or - for standard input. The target column
    /// is not needed.
    #[arg(long, value_name = "FILE")]
    pub data: String,

    /// An input whose effect to draw (repeat for several).
    #[arg(long = "input", value_name = "NAME")]
    pub inputs: Vec<String>,

    /// Two inputs whose joint effect to draw as a heat map, as A,B (repeat for
    /// several pairs).
    #[arg(long = "pair", value_name = "A,B")]
    pub pairs: Vec<String>,

    /// Folder for the CSV and SVG files (created if needed).
    #[arg(long, value_name = "DIR", default_value = "copse-effects")]
    pub out_dir: PathBuf,

    /// Points along a numeric input: quantiles of its values in the data from the 5th
    /// to the 95th percentile (a categorical input gets one point per category; a heat
    /// map at most 30 by 30).
    #[arg(long, default_value_t = 20, value_name = "N", value_parser = clap::value_parser!(u32).range(2..=200))]
    pub grid: u32,

    /// Rows whose own curves are drawn faint and written to the CSV file.
    #[arg(long, default_value_t = 40, value_name = "K", value_parser = clap::value_parser!(u32).range(0..=10_000))]
    pub curves: u32,

    /// Average over at most N rows, drawn at random with --seed [default: every row].
    #[arg(long, value_name = "N", value_parser = clap::value_parser!(u32).range(1..))]
    pub sample: Option<u32>,

    /// Seed of the draw of the rows whose curves are drawn (and of --sample).
    #[arg(long, default_value_t = 1, value_name = "N")]
    pub seed: u64,

    /// The class whose chance is drawn [default: for two classes the second in the
    /// model's order, else the first]; the CSV files hold every class.
    #[arg(long, value_name = "CLASS")]
    pub class: Option<String>,

    #[command(flatten)]
    pub csv: CsvArgs,

    /// Print the report as one JSON object instead of text.
    #[arg(long)]
    pub json: bool,
}
