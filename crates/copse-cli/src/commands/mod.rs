//! One module per subcommand; each takes its parsed arguments and the terminal
//! settings, does its work on the current rayon pool, and returns an error to `main`.
pub mod demo;
pub mod effect;
pub mod evaluate;
pub mod explain;
pub mod importance;
pub mod inspect;
pub mod make_demo_data;
pub mod merge;
pub mod pool;
pub mod report_page;
pub mod score;
pub mod stability;
pub mod train;
pub mod train_part;
pub mod tune;

use crate::args::{Cli, Command};
use crate::error::{CliError, CliResult};
use crate::ui::Ui;
use std::io::Write;

/// Runs the chosen subcommand inside a thread pool of the requested size.
///
/// # Errors
/// Whatever the subcommand reports.
pub fn run(cli: Cli) -> CliResult<()> {
    let ui = Ui::detect(cli.quiet);
    let mut builder = rayon::ThreadPoolBuilder::new();
    if let Some(n) = cli.threads {
        builder = builder.num_threads(crate::ui::thread_count(usize::from(n), &ui));
    }
    let pool = builder
        .build()
        .map_err(|e| CliError::failure(format!("could not start worker threads: {e}")))?;
    pool.install(|| match cli.command {
        Command::Train(a) => match &a.tree_range {
            Some(range) => train_part::run(&a, range.indices(), &ui),
            None => train::run(&a, &ui),
        },
        Command::Score(a) => score::run(&a, &ui),
        Command::Explain(a) => explain::run(&a, &ui),
        Command::Evaluate(a) => evaluate::run(&a, &ui),
        Command::Importance(a) => importance::run(&a, &ui),
        Command::Effect(a) => effect::run(&a, &ui),
        Command::Stability(a) => stability::run(&a, &ui),
        Command::Tune(a) => tune::run(&a, &ui),
        Command::Inspect(a) => inspect::run(&a, &ui),
        Command::Merge(a) => merge::run(&a, &ui),
        Command::Pool(a) => pool::run(&a, &ui),
        Command::Demo(a) => demo::run(&a, &ui),
        Command::MakeDemoData(a) => make_demo_data::run(&a, &ui),
    })
}

/// Writes report text to standard output; a closed pipe ends quietly.
///
/// # Errors
/// A write failure.
pub fn emit(text: &str) -> CliResult<()> {
    let mut out = std::io::stdout().lock();
    out.write_all(text.as_bytes())
        .and_then(|()| out.flush())
        .map_err(|e| CliError::write("standard output", &e))
}

/// Creates a folder for outputs (and its parents).
///
/// # Errors
/// A failure naming the folder when it cannot be created.
pub fn make_folder(dir: &std::path::Path) -> CliResult<()> {
    if dir.is_dir() {
        return Ok(());
    }
    if dir.exists() {
        return Err(CliError::input(format!(
            "{} exists and is not a folder; choose another folder for the outputs",
            dir.display()
        )));
    }
    std::fs::create_dir_all(dir).map_err(|e| {
        CliError::failure(format!(
            "could not create the folder {}: {}",
            dir.display(),
            copse_forest::io_reason(&e)
        ))
    })
}

/// Checks, before long work starts, that a file can later be written at `path`: its
/// folder exists and it is not a folder itself.
///
/// # Errors
/// An input error saying what is wrong.
pub fn check_destination(path: &std::path::Path) -> CliResult<()> {
    crate::output::check_file_name(path)?;
    let dir = match path.parent() {
        Some(d) if !d.as_os_str().is_empty() => d,
        _ => std::path::Path::new("."),
    };
    if !dir.is_dir() {
        return Err(CliError::input(format!(
            "cannot write {}: the folder {} does not exist; create it first or choose another path",
            path.display(),
            dir.display()
        )));
    }
    if path.is_dir() {
        return Err(CliError::input(format!(
            "cannot write {}: it is a folder; give a file name",
            path.display()
        )));
    }
    Ok(())
}

/// Reads a model file with every check a file from elsewhere must pass.
///
/// # Errors
/// An input error (exit 2) for a missing, damaged, foreign, newer or inconsistent
/// file, naming it and saying what to do.
pub fn load_model(path: &std::path::Path) -> CliResult<copse_forest::Forest> {
    copse_forest::Forest::load(path).map_err(|e| CliError::input(e.message()))
}

/// Opens new rows for `model`: numbers read with the decimal mark given, or else the
/// one the model's training file had (its card).
///
/// # Errors
/// An input error for a file that cannot be opened or whose header is bad.
pub fn open_for_model(
    data: &str,
    csv: &crate::args::CsvArgs,
    model: &copse_forest::Forest,
) -> CliResult<copse_data::CsvInput> {
    let mark = csv.decimal.map_or(model.card().decimal_mark, Into::into);
    Ok(copse_data::CsvInput::open(data, csv.delimiter.into())?.with_decimal(mark))
}

/// Loads a model and reads labelled rows it has not seen, the common start of
/// `evaluate` and `importance`: missing tokens default to the model's, and categories
/// the model never saw are warned about. Returns the model, the data's name and rows.
///
/// # Errors
/// Input errors for a bad model file or data.
pub fn load_labelled(
    model: &std::path::Path,
    data: &str,
    csv: &crate::args::CsvArgs,
    ui: &Ui,
) -> CliResult<(copse_forest::Forest, String, copse_data::Labelled)> {
    load_labelled_by(model, data, csv, ui, None).map(|(m, s, l, _)| (m, s, l))
}

/// As [`load_labelled`], and also the cells of column `by` (any column of the file),
/// one per row, when asked.
///
/// # Errors
/// Input errors for a bad model file or data, or a file without column `by`.
pub fn load_labelled_by(
    model: &std::path::Path,
    data: &str,
    csv: &crate::args::CsvArgs,
    ui: &Ui,
    by: Option<&str>,
) -> CliResult<(
    copse_forest::Forest,
    String,
    copse_data::Labelled,
    Option<copse_data::ColumnCells>,
)> {
    let model = load_model(model)?;
    let input = open_for_model(data, csv, &model)?;
    let source = input.name().to_string();
    let missing = csv.missing.as_deref().map_or_else(
        || copse_data::Missing::of_model(&model),
        copse_data::Missing::from_list,
    );
    let (labelled, cells) = copse_data::read_labelled_with_column(input, &model, missing, by)?;
    if let Some(w) = labelled.encoder.unseen_warning() {
        ui.warn(&w);
    }
    for n in &labelled.notes {
        ui.note(n);
    }
    Ok((model, source, labelled, cells))
}

/// Reads a training file, the common start of `train` and `stability`: the columns in
/// the roles given, missing tokens as given or else the standard list; notes about the
/// data go to standard error.
///
/// # Errors
/// Input errors naming the file, line and column, as from [`copse_data::TrainingTable::from_csv`].
pub fn read_training(
    data: &str,
    roles: &crate::args::ColumnRoles,
    csv: &crate::args::CsvArgs,
    ui: &Ui,
) -> CliResult<copse_data::TrainingTable> {
    let input = copse_data::CsvInput::open(data, csv.delimiter.into())?
        .with_decimal(csv.decimal.map_or_else(Default::default, Into::into));
    let missing = csv.missing.as_deref().map_or_else(
        copse_data::Missing::standard,
        copse_data::Missing::from_list,
    );
    let training = copse_data::TrainingTable::from_csv(input, &roles.into(), missing)?;
    for n in &training.notes {
        ui.note(n);
    }
    Ok(training)
}

/// Refuses a `--features-per-split` count larger than the number of inputs read.
///
/// # Errors
/// An input error naming the file and the counts allowed.
pub fn check_features_per_split(
    rule: copse_forest::FeaturesPerSplit,
    data: &copse_data::TrainingTable,
) -> CliResult<()> {
    let p = data.features.len();
    match rule {
        copse_forest::FeaturesPerSplit::Count(k) if k > p => Err(CliError::input(format!(
            "--features-per-split {k} is more than the {p} inputs in {}; choose 1 to {p}",
            data.source
        ))),
        _ => Ok(()),
    }
}

/// Checks, before long work starts, a file that will be written at `path`: it must not
/// be the input file `data`, and its folder must exist (see [`check_destination`]).
///
/// # Errors
/// An input error naming the file and what is wrong.
pub fn check_output(data: &str, path: &std::path::Path, what: &str) -> CliResult<()> {
    crate::output::refuse_overwrite(data, Some(&path.to_string_lossy()), what)?;
    check_destination(path)
}

/// The settings of each tree from the options `train` and `stability` share.
pub fn tree_settings(
    impurity: crate::args::ImpurityArg,
    max_depth: Option<u32>,
    min_leaf: u32,
) -> copse_forest::TreeRules {
    copse_forest::TreeRules {
        impurity: impurity.into(),
        max_depth: max_depth.map(|d| d as usize),
        min_leaf: f64::from(min_leaf),
        ..copse_forest::TreeRules::default()
    }
}
