//! How messages name where a row stands in its input: a CSV file by its line (the
//! header is line 1), a Parquet file by its row group, the row within that group and
//! the row counted from the file's start, as a user opening the file with a Parquet
//! tool finds it.
//!
//! A Parquet file is read as the CSV text of the same data (see `parquet_input`), so
//! rows come with the line of that text; a text cell holding line breaks makes its row
//! span several lines, which the Parquet reader notes here so that later rows are still
//! named right.
use std::sync::{Arc, Mutex};

/// Names places in one input for messages. Cheap to clone; shared by the threads
/// that read one input.
#[derive(Debug, Clone)]
pub struct Place {
    name: String,
    rows: Option<Arc<ParquetRows>>,
}

/// What turns a line of a Parquet file's text into a row.
#[derive(Debug)]
pub(crate) struct ParquetRows {
    /// Rows in each row group, in file order.
    group_rows: Vec<u64>,
    /// Lines that rows spanning several lines added, as `(line, extra)`: rows starting
    /// on `line` or later start `extra` lines further down than their number says.
    /// Kept only where it grows, so it stays empty for text without line breaks.
    extra_lines: Mutex<Vec<(u64, u64)>>,
}

impl ParquetRows {
    pub(crate) fn new(group_rows: Vec<u64>) -> Self {
        ParquetRows {
            group_rows,
            extra_lines: Mutex::new(Vec::new()),
        }
    }

    /// Notes that rows starting on `line` or later start `extra` lines further down
    /// than one line per row (and one for the header) puts them.
    pub(crate) fn shifted_from(&self, line: u64, extra: u64) {
        let mut v = self
            .extra_lines
            .lock()
            .unwrap_or_else(std::sync::PoisonError::into_inner);
        v.push((line, extra));
    }

    /// The row (counted from 1 at the file's first row) that starts on `line`.
    fn row_of(&self, line: u64) -> u64 {
        let v = self
            .extra_lines
            .lock()
            .unwrap_or_else(std::sync::PoisonError::into_inner);
        let k = v.partition_point(|&(l, _)| l <= line);
        let extra = if k == 0 { 0 } else { v[k - 1].1 };
        line.saturating_sub(1 + extra)
    }

    /// The row group (from 1) that holds file row `row` (from 1), and the row within
    /// it (from 1).
    fn group_of(&self, row: u64) -> (usize, u64) {
        let mut before = 0u64;
        for (g, &n) in self.group_rows.iter().enumerate() {
            if row <= before + n {
                return (g + 1, row - before);
            }
            before += n;
        }
        (self.group_rows.len().max(1), row.saturating_sub(before))
    }
}

impl Place {
    /// Places of a text file named `name`, named by line.
    pub fn lines(name: impl Into<String>) -> Self {
        Place {
            name: name.into(),
            rows: None,
        }
    }

    /// Places of a Parquet file named `name`, read as text, named by row group and row.
    pub(crate) fn parquet(name: impl Into<String>, rows: Arc<ParquetRows>) -> Self {
        Place {
            name: name.into(),
            rows: Some(rows),
        }
    }

    /// The input's name as messages give it.
    pub fn name(&self) -> &str {
        &self.name
    }

    /// Whether rows are named by row group and row (a Parquet file) rather than line.
    pub fn by_row(&self) -> bool {
        self.rows.is_some()
    }

    /// Where the row that starts on line `line` stands, without the input's name:
    /// `line 12`, or for a Parquet file `row group 2, row 5 of the group (row 8197 of
    /// the file)`.
    pub fn spot(&self, line: u64) -> String {
        match &self.rows {
            None => format!("line {line}"),
            Some(rows) => {
                let row = rows.row_of(line);
                let (group, within) = rows.group_of(row);
                format!("row group {group}, row {within} of the group (row {row} of the file)")
            }
        }
    }

    /// Where the row that starts on line `line` stands, after the input's name, as
    /// messages begin: `data.csv line 12`, `data.parquet row group 2, row 5 of the group
    /// (row 8197 of the file)`.
    pub fn at(&self, line: u64) -> String {
        format!("{} {}", self.name, self.spot(line))
    }

    /// A short list of the rows starting on `lines`, with `more` further ones not
    /// shown: `line 4`, `lines 4, 9, and 3 more`; for a Parquet file `file row 3`,
    /// `file rows 3, 8, and 3 more` (counted from the file's first row).
    pub fn list(&self, lines: &[u64], more: u64) -> String {
        let mut shown: Vec<String> = lines
            .iter()
            .map(|&l| match &self.rows {
                None => l.to_string(),
                Some(rows) => rows.row_of(l).to_string(),
            })
            .collect();
        if more > 0 {
            shown.push(format!("and {more} more"));
        }
        let one = lines.len() as u64 + more == 1;
        let word = match (&self.rows, one) {
            (None, true) => "line",
            (None, false) => "lines",
            (Some(_), true) => "file row",
            (Some(_), false) => "file rows",
        };
        format!("{word} {}", shown.join(", "))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn lines_name_the_line() {
        let p = Place::lines("a.csv");
        assert_eq!(p.at(12), "a.csv line 12");
        assert_eq!(p.list(&[4], 0), "line 4");
        assert_eq!(p.list(&[4, 9], 3), "lines 4, 9, and 3 more");
    }

    /// Groups of 3, 4 and 5 rows; the header is line 1, so row 1 is on line 2 until
    /// row 2 spans three lines: rows from 3 on start two lines further down.
    #[test]
    fn parquet_rows_name_the_group_the_row_in_it_and_the_file_row() {
        let rows = Arc::new(ParquetRows::new(vec![3, 4, 5]));
        let p = Place::parquet("b.parquet", rows.clone());
        assert_eq!(
            p.at(2),
            "b.parquet row group 1, row 1 of the group (row 1 of the file)"
        );
        assert_eq!(
            p.spot(5),
            "row group 2, row 1 of the group (row 4 of the file)"
        );
        assert_eq!(
            p.spot(13),
            "row group 3, row 5 of the group (row 12 of the file)"
        );
        rows.shifted_from(6, 2);
        assert_eq!(
            p.spot(3),
            "row group 1, row 2 of the group (row 2 of the file)"
        );
        assert_eq!(
            p.spot(6),
            "row group 1, row 3 of the group (row 3 of the file)"
        );
        assert_eq!(
            p.spot(9),
            "row group 2, row 3 of the group (row 6 of the file)"
        );
        assert_eq!(p.list(&[6], 0), "file row 3");
        assert_eq!(p.list(&[6, 9], 1), "file rows 3, 6, and 1 more");
    }
}
