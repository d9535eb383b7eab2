//! Plain CSV text read in parallel: whole lines taken from a [`CsvInput`] when none of
//! them holds a quote (so every line break ends a record), split into pieces at line
//! ends, each piece read on its own thread with the same rows, blank lines, faults and
//! messages as [`CsvInput::read_row`] gives line by line.
//!
//! Only text without a quote character is taken: a quoted field may hold a line break,
//! and where a piece starts inside one cannot be told without reading from the start.
//! Lines that are not plain (a quote, a CR alone, a line near
//! [`MAX_RECORD_BYTES`](crate::MAX_RECORD_BYTES)) stay in the input, to be read record
//! by record; the next lines may be plain again.
//!
//! # Example
//! ```
//! use copse_data::plain::{LineBlock, PlainLine, Taken};
//! use copse_data::{CsvInput, Delimiter};
//! let text = "a,b\n1,2\n\n3,4\r\n5\n";
//! let source = Box::new(std::io::Cursor::new(text.as_bytes().to_vec()));
//! let mut input = CsvInput::from_reader("t.csv".into(), source, None, Delimiter::Comma)?;
//! let mut block = LineBlock::new();
//! assert_eq!(input.take_plain_lines(100, 1 << 20, &mut block)?, Taken::Lines);
//! let shape = input.shape();
//! let mut record = csv::StringRecord::new();
//! let mut seen = Vec::new();
//! for piece in block.pieces(2) {
//!     let mut lines = piece.reader(&shape);
//!     while let Some(line) = lines.next(&mut record) {
//!         seen.push(match line {
//!             PlainLine::Record => format!("row {}", &record[1]),
//!             PlainLine::Blank(n) => format!("blank line {n}"),
//!             PlainLine::Fault(n, _) => format!("fault on line {n}"),
//!         });
//!     }
//! }
//! assert_eq!(seen, ["row 2", "blank line 3", "row 4", "fault on line 5"]);
//! # Ok::<(), copse_data::Error>(())
//! ```
use crate::csv_input::{fill_record, width_error, CsvInput, Delimiter};
use crate::error::Result;

/// Whole lines of plain text taken from an input, and the file line of the first.
#[derive(Debug, Default)]
pub struct LineBlock {
    text: Vec<u8>,
    first_line: u64,
}

/// What [`CsvInput::take_plain_lines`] did.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Taken {
    /// Lines were taken into the block.
    Lines,
    /// The next lines are not plain: read at least one row with
    /// [`CsvInput::read_row`] before asking again.
    NotPlain,
    /// The input has no more lines.
    End,
}

/// What a reader needs to know of its input to read lines as [`CsvInput::read_row`]
/// does: its name, header and delimiter.
#[derive(Debug, Clone)]
pub struct Shape {
    name: String,
    headers: Vec<String>,
    delimiter: u8,
    delimiter_kind: Delimiter,
    /// How width errors name the expected width (`CsvInput::header_words`).
    header_words: &'static str,
}

impl CsvInput {
    /// Takes up to `max_lines` whole lines of plain text (no more once `max_bytes`
    /// are taken and a line ends) into `block`, for reading in pieces; see the module
    /// documentation. `NotPlain` takes nothing.
    ///
    /// # Errors
    /// An input error when the input cannot be read.
    pub fn take_plain_lines(
        &mut self,
        max_lines: usize,
        max_bytes: usize,
        block: &mut LineBlock,
    ) -> Result<Taken> {
        let found = self
            .records
            .take_lines(max_lines, max_bytes, &mut block.text)
            .map_err(|e| self.read_failure(&e))?;
        Ok(match found {
            crate::records::Lines::Taken { first_line } => {
                block.first_line = first_line;
                Taken::Lines
            }
            crate::records::Lines::Refused => Taken::NotPlain,
            crate::records::Lines::End => Taken::End,
        })
    }

    /// The name, header and delimiter, for reading lines on other threads.
    pub fn shape(&self) -> Shape {
        Shape {
            name: self.name().to_string(),
            headers: self.headers().to_vec(),
            delimiter: self.delimiter_kind().byte(),
            delimiter_kind: self.delimiter_kind(),
            header_words: self.header_words(),
        }
    }
}

impl LineBlock {
    /// An empty block, to be filled by [`CsvInput::take_plain_lines`] (and reused).
    pub fn new() -> Self {
        LineBlock::default()
    }

    /// The block cut at line ends into at most `n` pieces of about equal size, in file
    /// order; empty for an empty block.
    pub fn pieces(&self, n: usize) -> Vec<Piece<'_>> {
        let text = &self.text[..];
        let mut pieces = Vec::with_capacity(n.max(1));
        let (mut start, mut line, mut index) = (0, self.first_line, 0);
        let target = text.len().div_ceil(n.max(1)).max(1);
        while start < text.len() {
            let want = (start + target).min(text.len());
            // The end of the line that holds byte `want - 1`.
            let end = memchr::memchr(b'\n', &text[want - 1..]).map_or(text.len(), |k| want + k);
            let part = &text[start..end];
            let lines = count_lines(part);
            pieces.push(Piece {
                text: part,
                first_line: line,
                first_index: index,
                lines,
            });
            line += line_ends(part) as u64;
            index += lines;
            start = end;
        }
        pieces
    }
}

/// Lines in a piece of whole lines: its line ends, and one more for a last line the
/// input ended without a line end.
fn count_lines(part: &[u8]) -> usize {
    line_ends(part) + usize::from(part.last() != Some(&b'\n'))
}

/// LF bytes in `text`.
fn line_ends(text: &[u8]) -> usize {
    memchr::memchr_iter(b'\n', text).count()
}

/// Whole lines of a [`LineBlock`], to be read on their own.
#[derive(Debug, Clone, Copy)]
pub struct Piece<'a> {
    text: &'a [u8],
    first_line: u64,
    first_index: usize,
    lines: usize,
}

impl<'a> Piece<'a> {
    /// Lines in the piece (each gives at most one row).
    pub fn lines(&self) -> usize {
        self.lines
    }

    /// The position of the piece's first line among the block's lines.
    pub fn first_index(&self) -> usize {
        self.first_index
    }

    /// A reader of the piece's lines.
    pub fn reader(&self, shape: &'a Shape) -> PlainLines<'a> {
        PlainLines {
            text: self.text,
            utf8: std::str::from_utf8(self.text).ok(),
            at: 0,
            line: self.first_line,
            shape,
            ends: Vec::new(),
        }
    }
}

/// What one line of a piece holds.
#[derive(Debug)]
pub enum PlainLine {
    /// A row was read into the record (with its file line as position).
    Record,
    /// A blank line, passed over (the header has several columns), on this file line.
    Blank(u64),
    /// The row on this line cannot be read (the error says why, as
    /// [`CsvInput::read_row`] would).
    Fault(u64, crate::Error),
}

/// Reads the lines of a [`Piece`] one by one.
#[derive(Debug)]
pub struct PlainLines<'a> {
    text: &'a [u8],
    /// The text, when all of it is UTF-8 (else each line's fields are checked).
    utf8: Option<&'a str>,
    at: usize,
    line: u64,
    shape: &'a Shape,
    /// Where each field of the current line ends.
    ends: Vec<usize>,
}

impl PlainLines<'_> {
    /// The next line, with a row read into `record`; `None` after the last. A blank
    /// line is a row with one empty field when the header has one column, as
    /// [`CsvInput::read_row`] reads it.
    #[allow(clippy::should_implement_trait)] // it fills a record the caller reuses
    pub fn next(&mut self, record: &mut csv::StringRecord) -> Option<PlainLine> {
        let rest = &self.text[self.at..];
        if rest.is_empty() {
            return None;
        }
        let from = self.at;
        let len = memchr::memchr(b'\n', rest);
        self.at += len.map_or(rest.len(), |k| k + 1);
        let mut body = &rest[..len.unwrap_or(rest.len())];
        // Plain text has a CR only before an LF (or at the very end of the input).
        if body.last() == Some(&b'\r') {
            body = &body[..body.len() - 1];
        }
        let line = self.line;
        self.line += 1;
        let shape = self.shape;
        let width = shape.headers.len();
        if body.is_empty() {
            if width != 1 {
                return Some(PlainLine::Blank(line));
            }
            record.clear();
            record.push_field("");
            record.set_position(Some(crate::csv_input::position(line)));
            return Some(PlainLine::Record);
        }
        self.ends.clear();
        self.ends.extend(memchr::memchr_iter(shape.delimiter, body));
        self.ends.push(body.len());
        let n = self.ends.len();
        if n != width {
            return Some(PlainLine::Fault(
                line,
                width_error(
                    &shape.name,
                    line,
                    n,
                    width,
                    shape.header_words,
                    shape.delimiter_kind,
                ),
            ));
        }
        let ends = &self.ends;
        let start = |i: usize| if i == 0 { 0 } else { ends[i - 1] + 1 };
        if let Some(text) = self.utf8 {
            // Fields end at ASCII delimiters, so each is a slice of UTF-8 text.
            let text = &text[from..from + body.len()];
            record.clear();
            for i in 0..n {
                record.push_field(&text[start(i)..ends[i]]);
            }
            record.set_position(Some(crate::csv_input::position(line)));
            return Some(PlainLine::Record);
        }
        let field = |i: usize| &body[start(i)..ends[i]];
        Some(
            match fill_record(&shape.name, &shape.headers, line, n, field, record) {
                Ok(()) => PlainLine::Record,
                Err(e) => PlainLine::Fault(line, e),
            },
        )
    }
}

#[cfg(test)]
mod tests;
