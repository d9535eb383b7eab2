//! `copse train --tree-range A..B`: grow trees A..B of the forest the other options
//! describe and write them as a part file, one task of a job array; `copse merge`
//! joins the parts into the model one run would have made.
use crate::args::TrainArgs;
use crate::commands::train::resolve_settings;
use crate::commands::{check_output, emit, read_training};
use crate::error::{forest_error, CliError, CliResult};
use crate::numbers::decimal_bytes;
use crate::output::write_file;
use crate::ui::Ui;
use copse_forest::{Progress, TrainOptions};
use serde::Serialize;
use std::ops::Range;
use std::time::Instant;

/// What the command prints, as text or JSON.
#[derive(Serialize)]
struct PartView {
    part_file: String,
    bytes: u64,
    first_tree: usize,
    end_tree: usize,
    forest_trees: usize,
    seed: u64,
    data: String,
    seconds: f64,
}

/// Grows the part and writes it.
///
/// # Errors
/// Input errors for bad data, options that only a whole forest has, or a range past
/// `--trees`; failures when writing.
pub fn run(a: &TrainArgs, range: Range<usize>, ui: &Ui) -> CliResult<()> {
    let started = Instant::now();
    let whole_only = [
        ("--oob-out", a.oob_out.is_some()),
        ("--plots", a.plots.is_some()),
        ("--report", a.report.is_some()),
        ("--shuffled-target-runs", a.shuffled_target_runs.is_some()),
    ];
    if let Some((flag, _)) = whole_only.iter().find(|(_, given)| *given) {
        return Err(CliError::input(format!(
            "{flag} needs the whole forest, and --tree-range grows a part of it; leave {flag} \
             out here and use it with the merged model"
        )));
    }
    if range.end > a.trees as usize {
        return Err(CliError::input(format!(
            "--tree-range {}..{} reaches past the {} trees of the forest (--trees); the last \
             part ends at {}",
            range.start, range.end, a.trees, a.trees
        )));
    }
    check_output(&a.data, &a.out, "part file")?;
    let data = read_training(&a.data, &a.roles, &a.csv, ui)?;
    let settings = resolve_settings(a, &data, ui)?;
    let bar = ui.bar(range.len() as u64, "growing trees");
    let progress = |p: Progress| bar.advance_to(p.done);
    let options = TrainOptions {
        keep_draws: a.keep_draws,
        keep_leaf_rows: a.keep_leaf_rows,
        progress: Some(&progress),
        ..TrainOptions::default()
    };
    let part = data.train_part(&settings, range.clone(), &options);
    bar.finish();
    let part = part.map_err(|e| forest_error(&e, &format!("cannot train on {}", data.source)))?;
    let bytes = part
        .to_bytes()
        .map_err(|e| CliError::failure(format!("{}; nothing was written", e.message())))?;
    write_file(&a.out, &bytes)?;
    crate::output::commit_all()?;
    ui.wrote(&format!("part file: {}", a.out.display()));
    let view = PartView {
        part_file: a.out.display().to_string(),
        bytes: bytes.len() as u64,
        first_tree: range.start,
        end_tree: range.end,
        forest_trees: settings.trees,
        seed: settings.seed,
        data: data.source.clone(),
        seconds: started.elapsed().as_secs_f64(),
    };
    if a.json {
        let json = serde_json::to_string(&view)
            .map_err(|e| CliError::failure(format!("could not write the report: {e}")))?;
        emit(&format!("{json}\n"))
    } else {
        emit(&format!(
            "Part of a forest\n  trees          {}..{} of {} (seed {})\n  data           {}\n  \
             part file      {} ({})\n  time           {:.1} s\nMerge every part into the \
             model with 'copse merge PART... --out MODEL'.\n",
            view.first_tree,
            view.end_tree,
            view.forest_trees,
            view.seed,
            view.data,
            view.part_file,
            decimal_bytes(view.bytes),
            view.seconds
        ))
    }
}
