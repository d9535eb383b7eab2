//! Columns held in memory by another program (a data frame, an array with names), read
//! by the very reader that reads CSV files, so that column kinds, notes, messages and
//! encodings follow the command's rules exactly.
//!
//! Each row is written as one CSV record, as the program would write the data to a
//! file, and handed to [`CsvInput`] as it is read: numbers in their shortest form that
//! reads back as the same number (`0.1`, `3`, `-0`), a missing number (NaN) as an
//! empty cell, text as it is (quoted where CSV needs it), a missing text as an empty
//! cell. Lines are counted as in that file: the header is line 1, so the row at
//! position `i` (from 0) is line `i + 2`. Only one row's text exists at a time.
use crate::csv_input::{CsvInput, Delimiter};
use crate::error::{Error, ErrorKind, Result};
use std::io::{self, Read};

/// One column's cells.
#[derive(Debug, Clone, PartialEq)]
pub enum Column {
    /// Numbers; NaN is a missing cell. Infinite values are written as `inf` and
    /// `-inf`, which are not finite numbers, as a CSV file's would be.
    Numbers(Vec<f64>),
    /// Texts; `None` is a missing cell.
    Texts(Vec<Option<String>>),
}

impl Column {
    /// Cells in the column.
    pub fn len(&self) -> usize {
        match self {
            Column::Numbers(v) => v.len(),
            Column::Texts(v) => v.len(),
        }
    }

    /// True for a column without cells.
    pub fn is_empty(&self) -> bool {
        self.len() == 0
    }

    /// Cell `row` as CSV field text, before quoting.
    fn cell(&self, row: usize, out: &mut String) {
        use std::fmt::Write as _;
        out.clear();
        match self {
            Column::Numbers(v) => {
                let x = v[row];
                if !x.is_nan() {
                    // `Display` of an f64 is the shortest text that parses back to it.
                    let _ = write!(out, "{x}");
                }
            }
            Column::Texts(v) => {
                if let Some(t) = &v[row] {
                    out.push_str(t);
                }
            }
        }
    }
}

/// Named columns of equal length, with a name for the whole (used in messages and
/// recorded as a model's source).
#[derive(Debug, Clone)]
pub struct Frame {
    name: String,
    names: Vec<String>,
    columns: Vec<Column>,
    rows: usize,
}

impl Frame {
    /// Columns `columns` named `names`, the whole called `name`.
    ///
    /// # Errors
    /// `Columns` when the names and columns differ in number; `Malformed` when the
    /// columns differ in length.
    ///
    /// # Example
    /// ```
    /// use copse_data::frame::{Column, Frame};
    /// use copse_data::{Missing, Roles, TrainingTable};
    /// let f = Frame::new(
    ///     "pipes".into(),
    ///     vec!["age".into(), "burst".into()],
    ///     vec![
    ///         Column::Numbers(vec![40.0, 5.0, f64::NAN, 9.0]),
    ///         Column::Texts(vec![Some("yes".into()), Some("no".into()), Some("yes".into()), None]),
    ///     ],
    /// )?;
    /// let t = TrainingTable::from_csv(f.into_input()?, &Roles::target("burst"), Missing::standard())?;
    /// assert_eq!(t.classes(), ["no", "yes"]);
    /// assert_eq!(t.rows_without_outcome, 1);
    /// assert!(t.x[[2, 0]].is_nan());
    /// # Ok::<(), copse_data::Error>(())
    /// ```
    pub fn new(name: String, names: Vec<String>, columns: Vec<Column>) -> Result<Frame> {
        if names.len() != columns.len() {
            return Err(Error::new(
                ErrorKind::Columns,
                format!(
                    "{name}: {} column names for {} columns; give one name per column",
                    names.len(),
                    columns.len()
                ),
            ));
        }
        let rows = columns.first().map_or(0, Column::len);
        if let Some((j, c)) = columns.iter().enumerate().find(|(_, c)| c.len() != rows) {
            return Err(Error::new(
                ErrorKind::Malformed,
                format!(
                    "{name}: column '{}' has {} rows but column '{}' has {rows}; give every column the same rows",
                    names[j],
                    c.len(),
                    names[0]
                ),
            ));
        }
        Ok(Frame {
            name,
            names,
            columns,
            rows,
        })
    }

    /// Rows in the frame.
    pub fn rows(&self) -> usize {
        self.rows
    }

    /// The frame as a CSV input named after it, numbers read with a decimal point.
    ///
    /// # Errors
    /// As for [`CsvInput::from_reader`]: a column without a name, or a name used
    /// twice.
    pub fn into_input(self) -> Result<CsvInput> {
        let name = self.name.clone();
        let reader = FrameReader {
            frame: self,
            next: None,
            text: Vec::new(),
            at: 0,
            cell: String::new(),
        };
        CsvInput::from_reader(name, Box::new(reader), None, Delimiter::Comma)
    }
}

/// Writes a frame as CSV text one record at a time, as it is read.
struct FrameReader {
    frame: Frame,
    /// The next row to write; `None` before the header.
    next: Option<usize>,
    /// The current record's text and how much of it has been handed out.
    text: Vec<u8>,
    at: usize,
    cell: String,
}

impl FrameReader {
    /// Fills `text` with the next record; false at the end.
    fn refill(&mut self) -> bool {
        self.text.clear();
        self.at = 0;
        let row = match self.next {
            None => {
                for (j, n) in self.frame.names.iter().enumerate() {
                    push_field(&mut self.text, n, j == 0, self.frame.names.len());
                }
                self.next = Some(0);
                self.text.push(b'\n');
                return true;
            }
            Some(r) if r >= self.frame.rows => return false,
            Some(r) => r,
        };
        let width = self.frame.columns.len();
        for (j, c) in self.frame.columns.iter().enumerate() {
            c.cell(row, &mut self.cell);
            push_field(&mut self.text, &self.cell, j == 0, width);
        }
        self.text.push(b'\n');
        self.next = Some(row + 1);
        true
    }
}

/// Appends one field, quoted when CSV needs it: a delimiter, quote or line break
/// inside, or the lone field of a one-column record being empty (which would
/// otherwise be a blank line).
fn push_field(out: &mut Vec<u8>, field: &str, first: bool, width: usize) {
    if !first {
        out.push(b',');
    }
    let quote = field
        .bytes()
        .any(|b| matches!(b, b',' | b'"' | b'\n' | b'\r'))
        || (width == 1 && field.is_empty());
    if quote {
        out.push(b'"');
        for b in field.bytes() {
            if b == b'"' {
                out.push(b'"');
            }
            out.push(b);
        }
        out.push(b'"');
    } else {
        out.extend_from_slice(field.as_bytes());
    }
}

impl Read for FrameReader {
    fn read(&mut self, buf: &mut [u8]) -> io::Result<usize> {
        if self.at == self.text.len() && !self.refill() {
            return Ok(0);
        }
        let n = buf.len().min(self.text.len() - self.at);
        buf[..n].copy_from_slice(&self.text[self.at..self.at + n]);
        self.at += n;
        Ok(n)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::{Missing, Roles, TrainingTable};

    fn text_of(f: Frame) -> String {
        let mut r = FrameReader {
            frame: f,
            next: None,
            text: Vec::new(),
            at: 0,
            cell: String::new(),
        };
        let mut s = String::new();
        r.read_to_string(&mut s).unwrap();
        s
    }

    #[test]
    fn cells_are_written_as_a_csv_file_would_hold_them() {
        let f = Frame::new(
            "f".into(),
            vec!["x".into(), "a, b".into()],
            vec![
                Column::Numbers(vec![0.1, 3.0, f64::NAN, -0.0, f64::INFINITY, 1e-7]),
                Column::Texts(vec![
                    Some("plain".into()),
                    Some("say \"hi\"".into()),
                    None,
                    Some("two\nlines".into()),
                    Some(String::new()),
                    Some("NA".into()),
                ]),
            ],
        )
        .unwrap();
        assert_eq!(
            text_of(f),
            "x,\"a, b\"\n0.1,plain\n3,\"say \"\"hi\"\"\"\n,\n-0,\"two\nlines\"\ninf,\n0.0000001,NA\n"
        );
    }

    /// Numbers read back bit for bit, and kinds follow the file rules: a column with
    /// an infinite value is categorical (with the command's note), text "NA" is missing.
    #[test]
    fn a_frame_reads_as_its_csv_file() {
        let xs = vec![0.1, 1.0 / 3.0, 2.5e300, -7.0, f64::NAN, 4.0];
        let f = Frame::new(
            "frame".into(),
            vec!["x".into(), "odd".into(), "y".into()],
            vec![
                Column::Numbers(xs.clone()),
                Column::Numbers(vec![1.0, 2.0, 3.0, f64::INFINITY, 5.0, 6.0]),
                Column::Texts(
                    ["a", "b", "a", "NA", "b", "a"]
                        .iter()
                        .map(|s| Some(s.to_string()))
                        .collect(),
                ),
            ],
        )
        .unwrap();
        let t = TrainingTable::from_csv(
            f.into_input().unwrap(),
            &Roles::target("y"),
            Missing::standard(),
        )
        .unwrap();
        assert_eq!(t.rows_without_outcome, 1);
        assert_eq!(t.lines, [2, 3, 4, 6, 7]);
        let kept: Vec<f64> = t.x.column(0).to_vec();
        for (a, b) in kept.iter().zip([0.1, 1.0 / 3.0, 2.5e300, f64::NAN, 4.0]) {
            assert!(a.to_bits() == b.to_bits(), "{a} {b}");
        }
        assert!(t.notes.iter().any(
            |n| n.contains("column 'odd' is read as categorical") && n.contains("line 5 'inf'")
        ));
    }

    #[test]
    fn columns_of_different_lengths_are_refused() {
        let e = Frame::new(
            "f".into(),
            vec!["a".into(), "b".into()],
            vec![Column::Numbers(vec![1.0]), Column::Numbers(vec![])],
        )
        .unwrap_err();
        assert_eq!(e.kind(), ErrorKind::Malformed);
        assert!(e
            .message()
            .contains("column 'b' has 0 rows but column 'a' has 1"));
    }
}
