//! `copse score`: stream rows through a model in blocks and write one output row per
//! input row, in input order: the kept columns, `prediction`, and for classes one
//! `prob_<class>` column per class; with `--uncertainty`, a standard error per output
//! (`se_prediction`, or `se_<class>` per class probability) by the bias-corrected
//! infinitesimal jackknife; with `--flag-unfamiliar`, `unfamiliar` (1 for a row outside
//! the training ranges, else 0); with `--interval C`, `low_<C>` and `high_<C>` (the
//! range at coverage C from the training outcomes sharing the row's leaves, as
//! percentages: `low_90`, `high_90`). Memory stays bounded by the block size (two blocks: one read
//! ahead while the other is scored, when more than one thread runs) whatever the length
//! of the input; blocks are sized by bytes as well as rows, and keep only the model's
//! inputs and the kept cells of each row, so the width of the input does not matter
//! either.
pub(crate) mod blocks;
mod plain_rows;
pub(crate) mod rows;
pub mod unfamiliar;

use crate::args::{OutFormat, ScoreArgs};
use crate::error::{CliError, CliResult};
use crate::numbers::count;
use crate::output::{refuse_overwrite, Output};
use crate::ui::Ui;
use blocks::{each_block, Block, BlockReader, Unscorable};
use copse_data::{CsvInput, Missing, RowEncoder};
use copse_forest::{Forest, Unfamiliar};
pub(crate) use rows::target_size;
use rows::{csv_text, Cell, RowWriter};
use std::io::Write;

/// What a scoring run did.
pub struct ScoreRun {
    /// Rows scored (equal to rows read).
    pub rows: u64,
    /// Where the output went.
    pub output: String,
    /// Rows written with an empty prediction (`--blank-unscorable`).
    pub unscorable: u64,
}

/// Runs `copse score`.
///
/// # Errors
/// Input errors for a bad model, a missing column or a bad cell; failures when writing.
pub fn run(a: &ScoreArgs, ui: &Ui) -> CliResult<()> {
    let r = score(a, ui)?;
    crate::output::commit_all()?;
    if r.output != "standard output" {
        ui.wrote(&format!("{} scored rows: {}", r.rows, r.output));
    }
    Ok(())
}

/// Scores and writes; the caller reports.
///
/// # Errors
/// As for [`run`].
pub fn score(a: &ScoreArgs, ui: &Ui) -> CliResult<ScoreRun> {
    let model = open_model(a)?;
    let mut src = open_input(&a.data, &a.csv, &a.columns, &model)?;
    let keep = kept_columns(&a.keep, &src.input)?;
    let header = output_header(a, model.classes())?;
    check_interval(a, &model)?;
    let mut out = Output::create(a.out.as_deref())?;
    let output = out.name().to_string();
    let written = write_blocks(a, ui, &model, &mut src, &keep, &header, &mut out)?;
    out.finish()?;
    tell(a, ui, &model, &src, &written);
    if let Some(warning) = unfamiliar::warning(
        &model,
        &written.unfamiliar,
        src.enc.unseen_counts().iter().sum(),
        written.unfamiliar_rows,
        written.rows,
    ) {
        ui.warn(&warning);
    }
    Ok(ScoreRun {
        rows: written.rows,
        output,
        unscorable: written.skipped.count,
    })
}

/// Checks the output path against the inputs and reads the model: with
/// `--uncertainty`, it must hold its row draws.
///
/// # Errors
/// Input errors for an output over an input, a bad model file or a model without draws.
fn open_model(a: &ScoreArgs) -> CliResult<Forest> {
    refuse_overwrite(&a.data, a.out.as_deref(), "output file")?;
    if a.out_format == OutFormat::Parquet && a.out.as_deref().is_none_or(|o| o == "-") {
        return Err(CliError::input(
            "--out-format parquet writes a file, not standard output; give --out FILE",
        ));
    }
    if let Some(out) = &a.out {
        if out != "-" && std::path::Path::new(out) == a.model.as_path() {
            return Err(CliError::input(
                "--out names the model file itself; choose another output path",
            ));
        }
    }
    let model = crate::commands::load_model(&a.model)?;
    if a.uncertainty && model.draws().is_none() {
        return Err(CliError::input(format!(
            "{} holds no record of which rows each tree drew, which --uncertainty needs; \
             retrain it with 'copse train ... --keep-draws'",
            a.model.display()
        )));
    }
    Ok(model)
}

/// Refuses `--interval` for a class model or a model without its leaf rows.
///
/// # Errors
/// An input error saying how to retrain.
fn check_interval(a: &ScoreArgs, model: &Forest) -> CliResult<()> {
    if a.interval.is_none() {
        return Ok(());
    }
    if !model.classes().is_empty() {
        return Err(CliError::input(format!(
            "--interval gives ranges of a numeric target, but {} predicts classes of '{}'; its \
             class probabilities already say how sure it is: drop --interval",
            a.model.display(),
            model.card().target
        )));
    }
    if model.leaf_rows().is_none() {
        return Err(CliError::input(format!(
            "{} did not keep the rows of its leaves, which --interval needs; retrain it with \
             'copse train ... --keep-leaf-rows'",
            a.model.display()
        )));
    }
    Ok(())
}

/// The name of a range column: `low` or `high`, then the coverage as a percentage
/// (`low_90`, `high_97.5`).
fn range_column(end: &str, coverage: f64) -> String {
    format!("{end}_{}", crate::numbers::trim_num(100.0 * coverage, 6))
}

/// The rows to score and their encoder into the model's inputs.
pub(crate) struct Source {
    pub(crate) input: CsvInput,
    pub(crate) enc: RowEncoder,
}

/// Opens the rows to score (a headerless input when `columns` names its columns), with
/// missing tokens as given or else the model's.
///
/// # Errors
/// Input errors for a file that cannot be read or lacks the model's columns.
pub(crate) fn open_input(
    data: &str,
    csv: &crate::args::CsvArgs,
    columns: &[String],
    model: &Forest,
) -> CliResult<Source> {
    let input = if columns.is_empty() {
        crate::commands::open_for_model(data, csv, model)?
    } else {
        let mark = csv.decimal.map_or(model.card().decimal_mark, Into::into);
        CsvInput::open_headerless(data, csv.delimiter.into(), columns)?.with_decimal(mark)
    };
    let missing = csv
        .missing
        .as_deref()
        .map_or_else(|| Missing::of_model(model), Missing::from_list);
    let enc = RowEncoder::new(&input, model, missing, false)?;
    Ok(Source { input, enc })
}

/// The positions of the `--keep` columns in the input.
///
/// # Errors
/// An input error naming a column the input does not have.
pub(crate) fn kept_columns(keep: &[String], input: &CsvInput) -> CliResult<Vec<usize>> {
    keep.iter()
        .map(|k| {
            input.column(k).ok_or_else(|| {
                CliError::input(format!(
                    "--keep names the column '{k}', but {} has no such column; its columns are: {}",
                    input.name(),
                    input.headers().join(", ")
                ))
            })
        })
        .collect()
}

/// The output's column names: the kept columns, `prediction`, a `prob_<class>` per
/// class, with `--uncertainty` the standard errors, and with `--flag-unfamiliar`
/// `unfamiliar`.
///
/// # Errors
/// An input error when two columns would have the same name.
fn output_header(a: &ScoreArgs, classes: &[String]) -> CliResult<Vec<String>> {
    let mut header: Vec<String> = a.keep.clone();
    header.push("prediction".to_string());
    header.extend(classes.iter().map(|c| format!("prob_{c}")));
    if a.uncertainty {
        if classes.is_empty() {
            header.push("se_prediction".to_string());
        } else {
            header.extend(classes.iter().map(|c| format!("se_{c}")));
        }
    }
    if let Some(c) = a.interval {
        header.push(range_column("low", c));
        header.push(range_column("high", c));
    }
    if a.flag_unfamiliar {
        header.push("unfamiliar".to_string());
    }
    for (i, h) in header.iter().enumerate() {
        if header[..i].contains(h) {
            return Err(CliError::input(format!(
                "the output would have two columns named '{h}'; drop '{h}' from --keep"
            )));
        }
    }
    Ok(header)
}

/// What each output column holds: text (kept cells, class labels), a number, or the
/// unfamiliar flag.
fn cell_kinds(a: &ScoreArgs, classes: &[String], header: &[String]) -> Vec<Cell> {
    let kept = a.keep.len();
    (0..header.len())
        .map(|j| {
            if j < kept || (j == kept && !classes.is_empty()) {
                Cell::Text
            } else if a.flag_unfamiliar && j == header.len() - 1 {
                Cell::Flag
            } else {
                Cell::Number
            }
        })
        .collect()
}

/// With JSON lines, each output column's name as JSON text and what it holds.
fn json_columns(
    a: &ScoreArgs,
    classes: &[String],
    header: &[String],
) -> Option<Vec<(String, Cell)>> {
    (a.out_format == OutFormat::JsonLines).then(|| {
        header
            .iter()
            .zip(cell_kinds(a, classes, header))
            .map(|(h, k)| (serde_json::Value::from(h.as_str()).to_string(), k))
            .collect()
    })
}

/// With Parquet output, the writer of its row groups.
///
/// # Errors
/// When the writer cannot start.
fn parquet_sink(
    a: &ScoreArgs,
    classes: &[String],
    header: &[String],
    name: &str,
) -> CliResult<Option<copse_data::parquet_output::ScoredWriter>> {
    use copse_data::parquet_output::{ColumnKind, ScoredWriter};
    if a.out_format != OutFormat::Parquet {
        return Ok(None);
    }
    let columns: Vec<(String, ColumnKind)> = header
        .iter()
        .zip(cell_kinds(a, classes, header))
        .map(|(h, k)| {
            let kind = match k {
                Cell::Text => ColumnKind::Text,
                Cell::Number => ColumnKind::Number,
                Cell::Flag => ColumnKind::Flag,
            };
            (h.clone(), kind)
        })
        .collect();
    Ok(Some(ScoredWriter::new(name, &columns)?))
}

/// What writing the rows did.
struct Written {
    /// Rows written, one per row read.
    rows: u64,
    /// Standard errors that could not be estimated.
    clamped: usize,
    /// Rows written with an empty prediction.
    skipped: Unscorable,
    /// Cells and rows outside the training ranges (unseen categories aside).
    unfamiliar: Unfamiliar,
    /// Rows outside the training ranges or holding an unseen category.
    unfamiliar_rows: u64,
}

/// Reads, scores and writes every row in blocks, the header first.
///
/// # Errors
/// A row that cannot be read or encoded (unless `--blank-unscorable`), or a write
/// failure.
fn write_blocks(
    a: &ScoreArgs,
    ui: &Ui,
    forest: &Forest,
    src: &mut Source,
    keep: &[usize],
    header: &[String],
    out: &mut Output,
) -> CliResult<Written> {
    let out_name = out.name().to_string();
    let to_stdout = matches!(out, Output::Stdout(_));
    let delimiter = copse_data::Delimiter::from(a.csv.delimiter).byte();
    let json = json_columns(a, forest.classes(), header);
    let header_text = if a.omit_header || json.is_some() || a.out_format == OutFormat::Parquet {
        Vec::new()
    } else {
        csv_text(delimiter, 256, |w| w.write_record(header))?
    };
    // The header goes out with the first block, so a fault in the first rows leaves
    // standard output empty.
    let mut header_written = false;
    let block = a.block_rows.map_or_else(
        || forest.scoring_block_rows_for(row_bytes(a, forest, keep.len())),
        |b| b as usize,
    );
    let p = forest.n_features();
    let source = src.input.name().to_string();
    let masks = copse_forest::leaf_masks::LeafMasks::for_scoring(forest);
    let writer = RowWriter {
        forest,
        masks: masks.as_ref(),
        source: &source,
        keep,
        uncertainty: a.uncertainty,
        interval: a.interval,
        delimiter,
        json: json.as_deref(),
    };
    let mut written = Written {
        rows: 0,
        clamped: 0,
        skipped: Unscorable::default(),
        unfamiliar: Unfamiliar::of(forest),
        unfamiliar_rows: 0,
    };
    let bar = ui.bytes_bar(src.input.size(), "scoring");
    let mut reader = BlockReader {
        input: &mut src.input,
        enc: &mut src.enc,
        skipped: &mut written.skipped,
        blank_unscorable: a.blank_unscorable,
        p,
        keep,
        record: csv::StringRecord::new(),
        lines: copse_data::plain::LineBlock::new(),
    };
    let (mut rows, mut clamped) = (0u64, 0usize);
    let (ranges, unfamiliar_rows) = (&mut written.unfamiliar, &mut written.unfamiliar_rows);
    let mut flags: Vec<bool> = Vec::new();
    let put = |out: &mut Output, text: &[u8]| {
        out.write_all(text)
            .map_err(|e| CliError::write(&out_name, &e))
    };
    let mut parquet = parquet_sink(a, forest.classes(), header, &out_name)?;
    let mut emit = |b: &Block| -> CliResult<()> {
        *unfamiliar_rows += unfamiliar::flag_block(ranges, b, p, &mut flags)?;
        let (texts, c) = writer.block_text(b, a.flag_unfamiliar.then_some(&flags[..]))?;
        clamped += c;
        if let Some(sink) = parquet.as_mut() {
            let mut text = Vec::new();
            for t in texts {
                text.extend(t?);
            }
            sink.write_csv_block(&text, delimiter)?;
            put(out, &sink.take_bytes())?;
            rows += b.m as u64;
            bar.advance_to(b.bytes as usize);
            return Ok(());
        }
        if !header_written {
            put(out, &header_text)?;
            header_written = true;
        }
        for text in texts {
            put(out, &text?)?;
        }
        rows += b.m as u64;
        if to_stdout {
            // So that an interruption can say how many rows went out.
            out.flush().map_err(|e| CliError::write(&out_name, &e))?;
            crate::interrupt::rows_to_stdout(rows);
        }
        bar.advance_to(b.bytes as usize);
        Ok(())
    };
    each_block(
        &mut |b: &mut Block| reader.fill(b),
        Block::new(block, p),
        rayon::current_num_threads() > 1,
        &mut emit,
    )?;
    bar.finish();
    if let Some(sink) = parquet {
        put(out, &sink.finish()?)?;
    } else if !header_written {
        put(out, &header_text)?;
    }
    written.rows = rows;
    written.clamped = clamped;
    Ok(written)
}

/// Bytes a block holds for each row besides the model's input values and outputs, for
/// sizing blocks by bytes: the kept cells (taken as 16 bytes of text and 8 of bounds
/// each; a block also stops when its kept text reaches its own cap), the output row's
/// text (about 24 bytes a field) and the row's own bookkeeping.
fn row_bytes(a: &ScoreArgs, forest: &Forest, kept: usize) -> usize {
    let fields = (forest.n_outputs() + 1) * if a.uncertainty { 2 } else { 1 }
        + usize::from(a.flag_unfamiliar)
        + if a.interval.is_some() { 2 } else { 0 };
    24 * kept + 24 * fields + 64
}

/// Tells on standard error about unseen categories, unscorable rows and, with
/// `--uncertainty`, what the standard errors mean and how many are unknown.
fn tell(a: &ScoreArgs, ui: &Ui, forest: &Forest, src: &Source, written: &Written) {
    if let Some(warning) = src.enc.unseen_warning() {
        ui.warn(&warning);
    }
    if written.skipped.count > 0 {
        ui.warn(&written.skipped.warning(src.input.place(), written.rows));
    }
    if let Some(note) = src.input.blank_lines_note() {
        ui.note(&note);
    }
    if let Some(c) = a.interval {
        let oob = forest
            .leaf_rows()
            .and_then(|r| r.oob_check())
            .map_or(String::new(), |k| {
                format!(
                    "; at training, {} of the training outcomes fell inside their out-of-bag \
                     {} range",
                    crate::numbers::pct(k.share_inside()),
                    crate::numbers::pct_short(k.level)
                )
            });
        ui.note(&format!(
            "{} and {}: about {} of outcomes like the training rows' fall in such ranges, on \
             average over rows, not for each row{oob}; a row unlike the training rows gets the \
             range of the nearest ones",
            range_column("low", c),
            range_column("high", c),
            crate::numbers::pct_short(c)
        ));
    }
    if a.uncertainty {
        ui.note(
            "standard errors: how much each prediction would move if the model were trained \
             on another sample of the same size from the same source (bias-corrected \
             infinitesimal jackknife, Wager, Hastie & Efron 2014); they do not describe the \
             spread of the outcome itself",
        );
        if written.clamped > 0 {
            ui.note(&format!(
                "{} could not be estimated and {} left empty: the \
                 bias correction exceeded the raw estimate, which happens when the trees are \
                 few compared with the training rows ({} trees for {} rows here); more trees \
                 leave fewer unknown (in our checks, ten times as many trees as rows left \
                 almost none)",
                count(written.clamped, "standard error", "standard errors"),
                if written.clamped == 1 { "is" } else { "are" },
                forest.trees().len(),
                forest.draws().map_or(0, copse_forest::Draws::population)
            ));
        }
    }
}
