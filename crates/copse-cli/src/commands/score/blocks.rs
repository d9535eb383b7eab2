//! Input rows in blocks: reading and encoding them into a block, and passing full
//! blocks in order to the scorer, with the next block read ahead on a second thread
//! while the current one is scored.
//!
//! A block keeps of each row only what the output needs: the model's input values and
//! the `--keep` cells. The whole record is read into one reused row, so a file of
//! 20,000 columns costs one row of text, not a block of them.
use crate::error::{CliError, CliResult};
use crate::numbers::count;
use copse_data::plain::{LineBlock, Taken};
use copse_data::{CsvInput, Row, RowEncoder};

/// Most bytes of kept cells one block gathers: a block ends early when its `--keep`
/// cells reach this, so long kept texts cannot grow a block beyond bounds.
const KEPT_BYTES: usize = 8 << 20;

/// A block of input rows: their kept cells (in `--keep` order), their encoded input
/// values (row-major), which of them cannot be scored, which hold a category the model
/// never saw, how many it holds, whether the
/// input ended with it, and the bytes of input read by the time it was filled (for
/// progress).
pub(crate) struct Block {
    pub(crate) kept: Vec<csv::StringRecord>,
    pub(crate) x: Vec<f64>,
    pub(crate) blank: Vec<bool>,
    pub(crate) unseen: Vec<bool>,
    pub(crate) m: usize,
    pub(crate) last: bool,
    pub(crate) bytes: u64,
}

impl Block {
    pub(crate) fn new(rows: usize, p: usize) -> Self {
        Self {
            kept: (0..rows).map(|_| csv::StringRecord::new()).collect(),
            x: vec![0.0; rows * p],
            blank: vec![false; rows],
            unseen: vec![false; rows],
            m: 0,
            last: false,
            bytes: 0,
        }
    }
}

/// Reads and encodes rows into blocks.
pub(crate) struct BlockReader<'a> {
    pub(crate) input: &'a mut CsvInput,
    pub(crate) enc: &'a mut RowEncoder,
    pub(crate) skipped: &'a mut Unscorable,
    pub(crate) blank_unscorable: bool,
    pub(crate) p: usize,
    /// The input columns copied to the output, by position.
    pub(crate) keep: &'a [usize],
    /// The row being read (all its fields).
    pub(crate) record: csv::StringRecord,
    /// Lines of plain text taken to be read in parallel (reused from block to block).
    pub(crate) lines: LineBlock,
}

impl BlockReader<'_> {
    /// Fills `b` with the next rows, as many as it holds unless the input ends first
    /// or its kept cells reach [`KEPT_BYTES`]. Lines without quotes are read in pieces
    /// on the threads of the current pool ([`super::plain_rows`]); other lines row by
    /// row, with the same rows, faults and counts either way.
    ///
    /// # Errors
    /// A row that cannot be read or encoded, unless `--blank-unscorable` keeps it as a
    /// blank row.
    pub(crate) fn fill(&mut self, b: &mut Block) -> CliResult<()> {
        b.m = 0;
        b.last = false;
        let mut kept_bytes = 0;
        while b.m < b.blank.len() && kept_bytes < KEPT_BYTES {
            let room = b.blank.len() - b.m;
            let bytes = (KEPT_BYTES - kept_bytes).min(PLAIN_BYTES);
            match self.input.take_plain_lines(room, bytes, &mut self.lines)? {
                Taken::Lines => kept_bytes += self.read_plain(b)?,
                Taken::End => {
                    b.last = true;
                    break;
                }
                Taken::NotPlain => {
                    if !self.read_one(b, &mut kept_bytes)? {
                        b.last = true;
                        break;
                    }
                }
            }
        }
        b.bytes = self.input.bytes_read();
        Ok(())
    }

    /// Reads the next row into place `b.m` of `b`; false at the end of the input.
    fn read_one(&mut self, b: &mut Block, kept_bytes: &mut usize) -> CliResult<bool> {
        let (p, m) = (self.p, b.m);
        let record = &mut self.record;
        let x = &mut b.x[m * p..(m + 1) * p];
        let unseen_before: u64 = self.enc.unseen_counts().iter().sum();
        let fault = match self.input.read_row(record)? {
            Row::End => return Ok(false),
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
        *kept_bytes += keep_cells(&mut b.kept[m], record, self.keep);
        b.blank[m] = fault.is_some();
        b.unseen[m] = self.enc.unseen_counts().iter().sum::<u64>() > unseen_before;
        if let Some((line, e)) = fault {
            self.fault(line, e, x)?;
        }
        b.m += 1;
        Ok(true)
    }

    /// A row that cannot be scored: the error, or with `--blank-unscorable` a blank
    /// row (its inputs missing) counted for the warning.
    pub(crate) fn fault(
        &mut self,
        line: u64,
        e: copse_data::Error,
        x: &mut [f64],
    ) -> CliResult<()> {
        if !self.blank_unscorable {
            return Err(unscorable(&e));
        }
        x.fill(f64::NAN);
        self.skipped.add(line, e);
        Ok(())
    }
}

/// Most bytes of plain text taken at a time to be read in parallel: enough for every
/// thread to get pieces of some hundreds of kilobytes, few enough to stay in cache.
const PLAIN_BYTES: usize = 4 << 20;

/// The error for a row that cannot be scored, with the way to keep going.
pub(crate) fn unscorable(e: &copse_data::Error) -> CliError {
    CliError::input(format!(
        "{}; or add --blank-unscorable to write such rows with an empty prediction \
         (they are counted on standard error)",
        e.message()
    ))
}

/// Copies the `keep` cells of `record` into `kept`; returns their bytes.
pub(crate) fn keep_cells(
    kept: &mut csv::StringRecord,
    record: &csv::StringRecord,
    keep: &[usize],
) -> usize {
    kept.clear();
    for &c in keep {
        kept.push_field(record.get(c).unwrap_or(""));
    }
    kept.as_byte_record().as_slice().len()
}

/// Passes blocks filled by `fill` (each like `first`, whose row count is the block
/// size), in order, to `emit`, which scores and writes them, until a block marked as
/// the last. With `ahead`, a second thread fills the next block while
/// `emit` works on the current one (two blocks circulate), so the serial reading hides
/// behind the parallel scoring; without it (one thread), blocks are filled in turn. An
/// error from `fill` reaches the caller after every block before it was emitted, as
/// when filling in turn; an error from `emit` stops the filling.
pub(crate) fn each_block(
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
            if b.last {
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
                let last = filled.is_err() || b.last;
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
pub(crate) struct Unscorable {
    pub(crate) count: u64,
    lines: Vec<u64>,
    first: Option<String>,
}

impl Unscorable {
    const SHOWN: usize = 10;

    pub(crate) fn add(&mut self, line: u64, e: copse_data::Error) {
        self.count += 1;
        if self.lines.len() < Self::SHOWN {
            self.lines.push(line);
        }
        if self.first.is_none() {
            self.first = Some(e.message().to_string());
        }
    }

    /// The warning for the rows written blank, naming them as `place` does.
    pub(crate) fn warning(&self, place: &copse_data::Place, rows: u64) -> String {
        let were = if self.count == 1 { "was" } else { "were" };
        format!(
            "{} of {} of {} could not be scored and {were} written with an empty \
             prediction ({}); the first: {}",
            self.count,
            count(rows as usize, "row", "rows"),
            place.name(),
            place.list(&self.lines, self.count - self.lines.len() as u64),
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
            b.last = false;
            while b.m < b.blank.len() {
                if next == rows {
                    b.last = true;
                    break;
                }
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
