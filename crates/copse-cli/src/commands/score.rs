//! `copse score`: stream rows through a model in blocks and write one output row per
//! input row, in input order: the kept columns, `prediction`, and for classes one
//! `prob_<class>` column per class; with `--uncertainty`, a standard error per output
//! (`se_prediction`, or `se_<class>` per class probability) by the bias-corrected
//! infinitesimal jackknife. Memory stays bounded by the block size (two blocks: one read
//! ahead while the other is scored, when more than one thread runs) whatever the length
//! of the input.
use crate::args::ScoreArgs;
use crate::commands::train::compact;
use crate::error::{forest_error, CliError, CliResult};
use crate::output::{refuse_overwrite, Output};
use crate::ui::Ui;
use copse_data::Missing;
use copse_data::RowEncoder;
use copse_data::{CsvInput, Row};
use ndarray::ArrayView2;
use rayon::prelude::*;
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
    refuse_overwrite(&a.data, a.out.as_deref(), "output file")?;
    if let Some(out) = &a.out {
        if out != "-" && std::path::Path::new(out) == a.model.as_path() {
            return Err(CliError::input(
                "--out names the model file itself; choose another output path",
            ));
        }
    }
    let model = crate::commands::load_model(&a.model)?;
    let forest = &model;
    if a.uncertainty && forest.draws().is_none() {
        return Err(CliError::input(format!(
            "{} holds no record of which rows each tree drew, which --uncertainty needs; \
             retrain it with 'copse train ... --keep-draws'",
            a.model.display()
        )));
    }
    let mut input = CsvInput::open(&a.data, a.csv.delimiter.into())?;
    let missing = a
        .csv
        .missing
        .as_deref()
        .map_or_else(|| Missing::of_model(&model), Missing::from_list);
    let mut enc = RowEncoder::new(&input, &model, missing, false)?;

    let keep: Vec<usize> = a
        .keep
        .iter()
        .map(|k| {
            input.column(k).ok_or_else(|| {
                CliError::input(format!(
                    "--keep names the column '{k}', but {} has no such column; its columns are: {}",
                    input.name(),
                    input.headers().join(", ")
                ))
            })
        })
        .collect::<CliResult<_>>()?;
    let classes = forest.classes().to_vec();
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
    for (i, h) in header.iter().enumerate() {
        if header[..i].contains(h) {
            return Err(CliError::input(format!(
                "the output would have two columns named '{h}'; drop '{h}' from --keep"
            )));
        }
    }

    let mut out = Output::create(a.out.as_deref())?;
    let out_name = out.name().to_string();
    let to_stdout = matches!(out, Output::Stdout(_));
    let delimiter = copse_data::Delimiter::from(a.csv.delimiter).byte();
    let header_text = csv_text(delimiter, 256, |w| w.write_record(&header))?;
    // The header goes out with the first block, so a fault in the first rows leaves
    // standard output empty.
    let mut header_written = false;

    let block = a
        .block_rows
        .map_or_else(|| forest.scoring_block_rows(), |b| b as usize);
    let p = forest.n_features();
    let source = input.name().to_string();
    let size = input.size();
    let mut rows: u64 = 0;
    // Prediction columns per row: the prediction, plus one probability per class.
    let out_fields = if classes.is_empty() {
        1
    } else {
        classes.len() + 1
    };
    let mut skipped = Unscorable::default();
    let mut clamped = 0usize;
    let bar = ui.bytes_bar(size, "scoring");
    let mut reader = BlockReader {
        input: &mut input,
        enc: &mut enc,
        skipped: &mut skipped,
        blank_unscorable: a.blank_unscorable,
        p,
    };
    let mut emit = |b: &Block| -> CliResult<()> {
        let m = b.m;
        let x = ArrayView2::from_shape((m, p), &b.x[..m * p])
            .map_err(|e| CliError::failure(format!("internal: {e}")))?;
        let fail = |e: copse_forest::Error| forest_error(&e, &format!("cannot score {source}"));
        let (preds, se) = if a.uncertainty {
            let u = forest.prediction_uncertainty(x).map_err(fail)?;
            clamped += u.clamped;
            // A standard error the engine could not estimate stays an empty cell.
            let se = u.std_errors().mapv(|s| s.unwrap_or(f64::NAN));
            (u.predictions, Some(se))
        } else {
            (forest.predict(x).map_err(fail)?, None)
        };
        // The rows' text is made in parallel, in pieces written in order.
        let texts: Vec<CliResult<Vec<u8>>> = (0..m.div_ceil(TEXT_ROWS))
            .into_par_iter()
            .map(|c| {
                let part = c * TEXT_ROWS..((c + 1) * TEXT_ROWS).min(m);
                csv_text(delimiter, part.len() * 64, |w| {
                    let mut fields = csv::StringRecord::new();
                    let mut probs: Vec<f64> = Vec::with_capacity(classes.len());
                    for i in part {
                        fields.clear();
                        for &c in &keep {
                            fields.push_field(b.records[i].get(c).unwrap_or(""));
                        }
                        if b.blank[i] {
                            // An empty prediction and empty probabilities: the row is
                            // kept in its place, never dropped.
                            for _ in 0..out_fields {
                                fields.push_field("");
                            }
                        } else if classes.is_empty() {
                            fields.push_field(&compact(preds[[i, 0]]));
                        } else {
                            probs.clear();
                            probs.extend(preds.row(i).iter());
                            fields.push_field(forest.class_label(&probs).unwrap_or(""));
                            for &v in &probs {
                                fields.push_field(&compact(v));
                            }
                        }
                        if let Some(se) = &se {
                            for &v in se.row(i) {
                                // An unscorable row gets no standard error either.
                                let cell = if b.blank[i] {
                                    String::new()
                                } else {
                                    compact(v)
                                };
                                fields.push_field(&cell);
                            }
                        }
                        w.write_record(&fields)?;
                    }
                    Ok(())
                })
            })
            .collect();
        let put = |out: &mut Output, text: &[u8]| {
            out.write_all(text)
                .map_err(|e| CliError::write(&out_name, &e))
        };
        if !header_written {
            put(&mut out, &header_text)?;
            header_written = true;
        }
        for text in texts {
            put(&mut out, &text?)?;
        }
        rows += m as u64;
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
    if !header_written {
        out.write_all(&header_text)
            .map_err(|e| CliError::write(&out_name, &e))?;
    }
    out.finish()?;
    if let Some(warning) = enc.unseen_warning() {
        ui.warn(&warning);
    }
    if skipped.count > 0 {
        ui.warn(&skipped.warning(input.name(), rows));
    }
    if let Some(note) = input.blank_lines_note() {
        ui.note(&note);
    }
    if a.uncertainty {
        ui.note(
            "standard errors: how much each prediction would move if the model were trained \
             on another sample of the same size from the same source (bias-corrected \
             infinitesimal jackknife, Wager, Hastie & Efron 2014); they do not describe the \
             spread of the outcome itself",
        );
        if clamped > 0 {
            ui.note(&format!(
                "{clamped} standard error(s) could not be estimated and are left empty: the \
                 bias correction exceeded the raw estimate, which happens when the trees are \
                 few compared with the training rows ({} trees for {} rows here); more trees \
                 leave fewer unknown (in our checks, ten times as many trees as rows left \
                 almost none)",
                forest.trees().len(),
                forest.draws().map_or(0, copse_forest::Draws::population)
            ));
        }
    }
    Ok(ScoreRun {
        rows,
        output: out_name,
        unscorable: skipped.count,
    })
}

/// Output rows whose text one task makes (the text of a block is made in parallel).
const TEXT_ROWS: usize = 2048;

/// The CSV text of what `write` puts out, with `delimiter` and quoting as needed.
///
/// # Errors
/// None in practice (the text goes to memory); a failure of the CSV writer is reported
/// as an internal fault.
fn csv_text(
    delimiter: u8,
    capacity: usize,
    write: impl FnOnce(&mut csv::Writer<Vec<u8>>) -> csv::Result<()>,
) -> CliResult<Vec<u8>> {
    let mut w = csv::WriterBuilder::new()
        .delimiter(delimiter)
        .from_writer(Vec::with_capacity(capacity));
    write(&mut w).map_err(|e| CliError::failure(format!("internal: {e}")))?;
    w.into_inner()
        .map_err(|e| CliError::failure(format!("internal: {}", e.error())))
}

/// A block of input rows: their records (for the kept columns), their encoded input
/// values (row-major), which of them cannot be scored, how many it holds, and the
/// bytes of input read by the time it was filled (for progress).
struct Block {
    records: Vec<csv::StringRecord>,
    x: Vec<f64>,
    blank: Vec<bool>,
    m: usize,
    bytes: u64,
}

impl Block {
    fn new(rows: usize, p: usize) -> Self {
        Self {
            records: (0..rows).map(|_| csv::StringRecord::new()).collect(),
            x: vec![0.0; rows * p],
            blank: vec![false; rows],
            m: 0,
            bytes: 0,
        }
    }
}

/// Reads and encodes rows into blocks.
struct BlockReader<'a> {
    input: &'a mut CsvInput,
    enc: &'a mut RowEncoder,
    skipped: &'a mut Unscorable,
    blank_unscorable: bool,
    p: usize,
}

impl BlockReader<'_> {
    /// Fills `b` with the next rows, as many as it holds unless the input ends first.
    ///
    /// # Errors
    /// A row that cannot be read or encoded, unless `--blank-unscorable` keeps it as a
    /// blank row.
    fn fill(&mut self, b: &mut Block) -> CliResult<()> {
        let p = self.p;
        b.m = 0;
        while b.m < b.blank.len() {
            let m = b.m;
            let record = &mut b.records[m];
            let x = &mut b.x[m * p..(m + 1) * p];
            let fault = match self.input.read_row(record)? {
                Row::End => break,
                Row::Record => match self.enc.encode(record, x) {
                    Ok(()) => None,
                    Err(e) => Some((record.position().map_or(0, |p| p.line()), e)),
                },
                Row::Fault(line, e) => {
                    // The fields of a malformed row may be shifted: keep none of them.
                    record.clear();
                    Some((line, e))
                }
            };
            b.blank[m] = fault.is_some();
            if let Some((line, e)) = fault {
                if !self.blank_unscorable {
                    return Err(CliError::input(format!(
                        "{}; or add --blank-unscorable to write such rows with an empty prediction \
                         (they are counted on standard error)",
                        e.message()
                    )));
                }
                x.fill(f64::NAN);
                self.skipped.add(line, e);
            }
            b.m += 1;
        }
        b.bytes = self.input.bytes_read();
        Ok(())
    }
}

/// Passes blocks filled by `fill` (each like `first`, whose row count is the block
/// size), in order, to `emit`, which scores and writes them; a block with fewer rows
/// than the size is the last. With `ahead`, a second thread fills the next block while
/// `emit` works on the current one (two blocks circulate), so the serial reading hides
/// behind the parallel scoring; without it (one thread), blocks are filled in turn. An
/// error from `fill` reaches the caller after every block before it was emitted, as
/// when filling in turn; an error from `emit` stops the filling.
fn each_block(
    fill: &mut (dyn FnMut(&mut Block) -> CliResult<()> + Send),
    first: Block,
    ahead: bool,
    emit: &mut dyn FnMut(&Block) -> CliResult<()>,
) -> CliResult<()> {
    let size = first.blank.len();
    if !ahead {
        let mut b = first;
        loop {
            fill(&mut b)?;
            if b.m > 0 {
                emit(&b)?;
            }
            if b.m < size {
                return Ok(());
            }
        }
    }
    std::thread::scope(|s| {
        let (full_tx, full_rx) = std::sync::mpsc::sync_channel::<CliResult<Block>>(1);
        let (empty_tx, empty_rx) = std::sync::mpsc::channel::<Block>();
        let second = Block::new(size, first.x.len() / size.max(1));
        s.spawn(move || {
            let mut spares = vec![second, first];
            loop {
                // A block handed back by the scorer, once both spares are in use; the
                // scorer gone (it met an error) ends the filling.
                let Some(mut b) = spares.pop().or_else(|| empty_rx.recv().ok()) else {
                    return;
                };
                let filled = fill(&mut b);
                let last = filled.is_err() || b.m < size;
                if full_tx.send(filled.map(|()| b)).is_err() || last {
                    return;
                }
            }
        });
        // Ends when the filler has sent its last block (or an error) and returned.
        for filled in full_rx {
            let b = filled?;
            if b.m > 0 {
                emit(&b)?;
            }
            // The filler may have finished already; then the block is not needed.
            let _ = empty_tx.send(b);
        }
        Ok(())
    })
}

/// Rows written with an empty prediction: how many, the first few lines, and the first
/// reason in full.
#[derive(Default)]
struct Unscorable {
    count: u64,
    lines: Vec<u64>,
    first: Option<String>,
}

impl Unscorable {
    const SHOWN: usize = 10;

    fn add(&mut self, line: u64, e: copse_data::Error) {
        self.count += 1;
        if self.lines.len() < Self::SHOWN {
            self.lines.push(line);
        }
        if self.first.is_none() {
            self.first = Some(e.message().to_string());
        }
    }

    fn warning(&self, source: &str, rows: u64) -> String {
        let mut lines: Vec<String> = self.lines.iter().map(u64::to_string).collect();
        if self.count > self.lines.len() as u64 {
            lines.push(format!("and {} more", self.count - self.lines.len() as u64));
        }
        format!(
            "{} of {rows} rows of {source} could not be scored and were written with an empty \
             prediction (lines {}); the first: {}",
            self.count,
            lines.join(", "),
            self.first.as_deref().unwrap_or("")
        )
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A filler of `rows` rows in blocks, row `r` holding the value `r`; with `fault`,
    /// filling the block that holds that row fails.
    fn numbered(
        rows: usize,
        fault: Option<usize>,
    ) -> impl FnMut(&mut Block) -> CliResult<()> + Send {
        let mut next = 0;
        move |b: &mut Block| {
            b.m = 0;
            while b.m < b.blank.len() && next < rows {
                if Some(next) == fault {
                    return Err(CliError::input(format!("row {next} is bad")));
                }
                b.x[b.m] = next as f64;
                b.m += 1;
                next += 1;
            }
            Ok(())
        }
    }

    /// The rows `emit` saw, in order, and the result.
    fn run(
        rows: usize,
        size: usize,
        ahead: bool,
        fault: Option<usize>,
        stop: Option<usize>,
    ) -> (Vec<f64>, CliResult<()>) {
        let mut seen = Vec::new();
        let mut fill = numbered(rows, fault);
        let result = each_block(&mut fill, Block::new(size, 1), ahead, &mut |b: &Block| {
            if stop.is_some_and(|s| seen.len() >= s) {
                return Err(CliError::failure("the output is full"));
            }
            seen.extend_from_slice(&b.x[..b.m]);
            Ok(())
        });
        (seen, result)
    }

    #[test]
    fn reading_ahead_emits_the_blocks_in_turn_order() {
        for (rows, size) in [(0, 4), (3, 4), (4, 4), (9, 4), (1000, 7)] {
            let (ahead, r) = run(rows, size, true, None, None);
            assert!(r.is_ok());
            let (turn, r) = run(rows, size, false, None, None);
            assert!(r.is_ok());
            let want: Vec<f64> = (0..rows).map(|r| r as f64).collect();
            assert_eq!(ahead, want, "{rows} rows, blocks of {size}");
            assert_eq!(turn, want, "{rows} rows, blocks of {size}");
        }
    }

    #[test]
    fn a_reading_error_comes_after_the_blocks_before_it() {
        for ahead in [true, false] {
            // Row 10 is in the third block of 4: the first two blocks are emitted.
            let (seen, r) = run(100, 4, ahead, Some(10), None);
            assert_eq!(seen, (0..8).map(f64::from).collect::<Vec<_>>());
            let e = r.expect_err("the bad row stops scoring");
            assert!(e.message().contains("row 10 is bad"), "{}", e.message());
        }
    }

    #[test]
    fn an_emit_error_stops_the_reading_without_waiting_forever() {
        for ahead in [true, false] {
            let (seen, r) = run(100_000, 4, ahead, None, Some(8));
            assert_eq!(seen.len(), 8);
            assert!(r.is_err());
        }
    }
}
