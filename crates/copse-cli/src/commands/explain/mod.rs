//! `copse explain`: stream rows through a model in blocks, as `copse score` does (its
//! block reader and read-ahead), and write for every row, in input order, the kept
//! columns, the prediction, and for each explained output its probability (classes),
//! the base value and one part per input (exact Shapley values,
//! `copse_forest::Forest::contributions`), then the largest reasons in words.
//!
//! Explained outputs: the value for numbers; the second class for two classes (the
//! first moves by exactly the opposite); every class for three or more, whose reasons
//! speak of the row's predicted class. Columns: `base` and `part_<input>` for numbers,
//! `prob_<class>`, `base_<class>` and `part_<class>_<input>` for classes, then
//! `reason_1` to `reason_K`.
mod text;

use crate::args::ExplainArgs;
use crate::commands::score::blocks::{each_block, Block, BlockReader, Unscorable};
use crate::commands::score::rows::csv_text;
use crate::commands::score::{kept_columns, open_input, Source};
use crate::error::{forest_error, CliError, CliResult};
use crate::output::{refuse_overwrite, Output};
use crate::ui::Ui;
use copse_forest::Forest;
use ndarray::Array2;
use std::io::Write;
use text::Layout;

/// Rows per thread in a block by default: contributions cost far more per row than
/// scoring, so blocks stay small and the output flows.
const ROWS_PER_THREAD: usize = 256;

/// Runs `copse explain`.
///
/// # Errors
/// Input errors for a bad model, a missing column or a bad cell; failures when writing.
pub fn run(a: &ExplainArgs, ui: &Ui) -> CliResult<()> {
    refuse_overwrite(&a.data, a.out.as_deref(), "output file")?;
    if let Some(out) = &a.out {
        if out != "-" && std::path::Path::new(out) == a.model.as_path() {
            return Err(CliError::input(
                "--out names the model file itself; choose another output path",
            ));
        }
    }
    let model = crate::commands::load_model(&a.model)?;
    // A model whose contributions cannot add up is refused before any output.
    model
        .contributions(Array2::zeros((0, model.n_features())).view())
        .map_err(|e| forest_error(&e, &format!("cannot explain with {}", a.model.display())))?;
    let mut src = open_input(&a.data, &a.csv, &[], &model)?;
    let keep = kept_columns(&a.keep, &src.input)?;
    let layout = Layout::new(&model, &a.keep, usize::from(a.top))?;
    let mut out = Output::create(a.out.as_deref())?;
    let name = out.name().to_string();
    let (rows, skipped) = write_blocks(a, ui, &model, &mut src, &keep, &layout, &mut out)?;
    out.finish()?;
    if let Some(warning) = src.enc.unseen_warning() {
        ui.warn(&warning);
    }
    if skipped.count > 0 {
        ui.warn(&skipped.warning(src.input.place(), rows));
    }
    if let Some(note) = src.input.blank_lines_note() {
        ui.note(&note);
    }
    crate::output::commit_all()?;
    if name != "standard output" {
        ui.wrote(&format!("{rows} explained rows: {name}"));
    }
    ui.note(
        "each part says how much an input moved the row's prediction from the base value \
         (the model's mean); parts describe the model, not causes in the world",
    );
    Ok(())
}

/// Reads, explains and writes every row in blocks, the header first; returns the rows
/// written and those left blank.
///
/// # Errors
/// A row that cannot be read (unless `--blank-unscorable`), or a write failure.
fn write_blocks(
    a: &ExplainArgs,
    ui: &Ui,
    forest: &Forest,
    src: &mut Source,
    keep: &[usize],
    layout: &Layout<'_>,
    out: &mut Output,
) -> CliResult<(u64, Unscorable)> {
    let out_name = out.name().to_string();
    let to_stdout = matches!(out, Output::Stdout(_));
    let delimiter = copse_data::Delimiter::from(a.csv.delimiter).byte();
    let header_text = csv_text(delimiter, 1024, |w| w.write_record(layout.header()))?;
    let mut header_written = false;
    let threads = rayon::current_num_threads();
    let block = a
        .block_rows
        .map_or(ROWS_PER_THREAD * threads, |b| b as usize);
    let p = forest.n_features();
    let source = src.input.name().to_string();
    let mut skipped = Unscorable::default();
    let bar = ui.bytes_bar(src.input.size(), "explaining");
    let mut reader = BlockReader {
        input: &mut src.input,
        enc: &mut src.enc,
        skipped: &mut skipped,
        blank_unscorable: a.blank_unscorable,
        p,
        keep,
        record: csv::StringRecord::new(),
        lines: copse_data::plain::LineBlock::new(),
    };
    let mut rows = 0u64;
    let put = |out: &mut Output, text: &[u8]| {
        out.write_all(text)
            .map_err(|e| CliError::write(&out_name, &e))
    };
    let mut emit = |b: &Block| -> CliResult<()> {
        let texts = layout.block_text(b, delimiter, &source)?;
        if !header_written {
            put(out, &header_text)?;
            header_written = true;
        }
        for text in texts {
            put(out, &text?)?;
        }
        rows += b.m as u64;
        if to_stdout {
            out.flush().map_err(|e| CliError::write(&out_name, &e))?;
            crate::interrupt::rows_to_stdout(rows);
        }
        bar.advance_to(b.bytes as usize);
        Ok(())
    };
    each_block(
        &mut |b: &mut Block| reader.fill(b),
        Block::new(block, p),
        threads > 1,
        &mut emit,
    )?;
    bar.finish();
    if !header_written {
        put(out, &header_text)?;
    }
    Ok((rows, skipped))
}
