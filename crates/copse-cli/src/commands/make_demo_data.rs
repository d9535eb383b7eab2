//! `copse make-demo-data`: write the invented water-main register and the batch to
//! score, at any size, from the seeded generator in [`crate::demo_data`].
use crate::args::MakeDemoDataArgs;
use crate::commands::make_folder;
use crate::demo_data::{
    score_header, scoring_segments, training_segments, write_line, SCORE_FILE, TRAIN_FILE,
    TRAIN_HEADER,
};
use crate::error::{CliError, CliResult};
use crate::output::Output;
use crate::ui::Ui;
use std::io::Write;
use std::path::{Path, PathBuf};

/// Runs `copse make-demo-data`.
///
/// # Errors
/// Failures when the folder or files cannot be written.
pub fn run(a: &MakeDemoDataArgs, ui: &Ui) -> CliResult<()> {
    let (train, score) = write_demo_files(&a.out, a.rows, a.score_rows, a.seed)?;
    crate::output::commit_all()?;
    ui.wrote(&format!(
        "invented register of {} segments: {}",
        a.rows,
        train.display()
    ));
    ui.wrote(&format!(
        "{} further segments to score: {}",
        a.score_rows,
        score.display()
    ));
    Ok(())
}

/// Writes both demo files into `dir` (created if needed) and returns their paths.
///
/// # Errors
/// As for [`run`].
pub fn write_demo_files(
    dir: &Path,
    rows: u64,
    score_rows: u64,
    seed: u64,
) -> CliResult<(PathBuf, PathBuf)> {
    make_folder(dir)?;
    let train = dir.join(TRAIN_FILE);
    write_csv(&train, TRAIN_HEADER, training_segments(rows, seed), true)?;
    let score = dir.join(SCORE_FILE);
    write_csv(
        &score,
        score_header(),
        scoring_segments(score_rows, rows, seed),
        false,
    )?;
    Ok((train, score))
}

fn write_csv(
    path: &Path,
    header: &str,
    segments: impl Iterator<Item = crate::demo_data::Segment>,
    with_target: bool,
) -> CliResult<()> {
    let p = path.to_string_lossy().to_string();
    let mut out = Output::create(Some(&p))?;
    let name = out.name().to_string();
    let werr = |e: std::io::Error| CliError::write(&name, &e);
    writeln!(out, "{header}").map_err(werr)?;
    let mut line = String::with_capacity(128);
    for s in segments {
        line.clear();
        write_line(&mut line, &s, with_target);
        out.write_all(line.as_bytes()).map_err(werr)?;
    }
    out.finish()
}
