//! Lines without quotes read in parallel into a block: the lines taken from the input
//! are cut into pieces at line ends, each piece is read and encoded on a thread of the
//! current pool into its own stretch of the block, and what the pieces found (blank
//! lines, unseen categories, rows that cannot be scored) is then joined in file order,
//! so the block, the counts and the first error are those of reading row by row.
use super::blocks::{keep_cells, unscorable, Block, BlockReader};
use crate::error::CliResult;
use copse_data::plain::{Piece, PlainLine, Shape};
use copse_data::{RowEncoder, UnseenTally};
use rayon::prelude::*;

/// Pieces per thread: a few, so that a thread slowed by other work does not hold up
/// the block.
const PIECES_PER_THREAD: usize = 4;

/// A piece's lines and the stretch of the block they are read into (a row per line at
/// most).
struct Stretch<'b, 'p> {
    piece: Piece<'p>,
    x: &'b mut [f64],
    kept: &'b mut [csv::StringRecord],
    blank: &'b mut [bool],
    unseen: &'b mut [bool],
}

/// What reading one piece found, to be joined in file order.
struct PieceRead {
    /// Rows written, from the start of the piece's stretch.
    rows: usize,
    kept_bytes: usize,
    blank_lines: Vec<u64>,
    /// Rows that cannot be scored: their line and why.
    faults: Vec<(u64, copse_data::Error)>,
    tally: UnseenTally,
}

/// How every piece is read.
struct Reading<'a> {
    shape: &'a Shape,
    enc: &'a RowEncoder,
    keep: &'a [usize],
    blank_unscorable: bool,
    p: usize,
}

impl BlockReader<'_> {
    /// Reads the lines just taken into `self.lines` into `b` from row `b.m` on; returns
    /// the bytes of the kept cells.
    ///
    /// # Errors
    /// The first row (in file order) that cannot be read or encoded, unless
    /// `--blank-unscorable` keeps it as a blank row.
    pub(super) fn read_plain(&mut self, b: &mut Block) -> CliResult<usize> {
        let pieces = self
            .lines
            .pieces(rayon::current_num_threads() * PIECES_PER_THREAD);
        let (p, start) = (self.p, b.m);
        let mut stretches = Vec::with_capacity(pieces.len());
        let (mut x, mut kept) = (&mut b.x[start * p..], &mut b.kept[start..]);
        let (mut blank, mut unseen) = (&mut b.blank[start..], &mut b.unseen[start..]);
        for &piece in &pieces {
            let n = piece.lines();
            let (x0, x1) = std::mem::take(&mut x).split_at_mut(n * p);
            let (k0, k1) = std::mem::take(&mut kept).split_at_mut(n);
            let (b0, b1) = std::mem::take(&mut blank).split_at_mut(n);
            let (u0, u1) = std::mem::take(&mut unseen).split_at_mut(n);
            (x, kept, blank, unseen) = (x1, k1, b1, u1);
            stretches.push(Stretch {
                piece,
                x: x0,
                kept: k0,
                blank: b0,
                unseen: u0,
            });
        }
        let shape = self.input.shape();
        let reading = Reading {
            shape: &shape,
            enc: self.enc,
            keep: self.keep,
            blank_unscorable: self.blank_unscorable,
            p,
        };
        let reads: Vec<PieceRead> = stretches
            .into_par_iter()
            .map(|s| reading.piece(s))
            .collect();
        let mut kept_bytes = 0;
        for (read, piece) in reads.into_iter().zip(&pieces) {
            for &line in &read.blank_lines {
                self.input.pass_over_blank_line(line);
            }
            self.enc.add_tally(&read.tally);
            for (line, e) in read.faults {
                if !self.blank_unscorable {
                    return Err(unscorable(&e));
                }
                self.skipped.add(line, e);
            }
            // Blank lines give no row: close the gap they left before this piece.
            let from = start + piece.first_index();
            if from != b.m {
                for r in 0..read.rows {
                    let (src, dst) = (from + r, b.m + r);
                    b.x.copy_within(src * p..(src + 1) * p, dst * p);
                    b.kept.swap(src, dst);
                    b.blank[dst] = b.blank[src];
                    b.unseen[dst] = b.unseen[src];
                }
            }
            b.m += read.rows;
            kept_bytes += read.kept_bytes;
        }
        Ok(kept_bytes)
    }
}

impl Reading<'_> {
    /// Reads the lines of one piece into its stretch, as [`BlockReader::fill`] reads
    /// rows one by one; without `--blank-unscorable` it stops at the first row that
    /// cannot be scored.
    fn piece(&self, s: Stretch<'_, '_>) -> PieceRead {
        let p = self.p;
        let mut record = csv::StringRecord::new();
        let mut lines = s.piece.reader(self.shape);
        let mut read = PieceRead {
            rows: 0,
            kept_bytes: 0,
            blank_lines: Vec::new(),
            faults: Vec::new(),
            tally: self.enc.new_tally(),
        };
        while let Some(line) = lines.next(&mut record) {
            let m = read.rows;
            let x = &mut s.x[m * p..(m + 1) * p];
            let before = read.tally.total();
            let fault = match line {
                PlainLine::Blank(at) => {
                    read.blank_lines.push(at);
                    continue;
                }
                PlainLine::Record => match self.enc.encode_tallied(&record, x, &mut read.tally) {
                    Ok(()) => None,
                    Err(e) => Some((record.position().map_or(0, |p| p.line()), e)),
                },
                PlainLine::Fault(at, e) => {
                    // The fields of a malformed row may be shifted: keep none of them.
                    record.clear();
                    Some((at, e))
                }
            };
            read.kept_bytes += keep_cells(&mut s.kept[m], &record, self.keep);
            s.blank[m] = fault.is_some();
            s.unseen[m] = read.tally.total() > before;
            read.rows += 1;
            if let Some(f) = fault {
                x.fill(f64::NAN);
                read.faults.push(f);
                if !self.blank_unscorable {
                    break;
                }
            }
        }
        read
    }
}
