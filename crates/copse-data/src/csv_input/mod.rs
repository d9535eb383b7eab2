//! Reading CSV input: a file or standard input (`-`), a header row, one of three
//! delimiters, with or without a UTF-8 byte-order mark, CRLF or LF line ends, quoted
//! fields. Every fault is reported with the file name, line and column and a hint.
use crate::error::{Error, ErrorKind, Result};
use crate::place::Place;
use crate::records::{Framed, Records, MAX_RECORD_BYTES};
use copse_forest::{io_reason, DecimalMark};
use std::fs::File;
use std::io::{self, Read};
use std::path::Path;
use std::sync::atomic::{AtomicU64, Ordering};
use std::sync::Arc;

/// The field separator of a CSV file.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Delimiter {
    /// `,` (the default).
    Comma,
    /// A tab character.
    Tab,
    /// `;` (common where the decimal mark is a comma).
    Semicolon,
}

impl Delimiter {
    /// The byte that separates fields.
    pub fn byte(self) -> u8 {
        match self {
            Delimiter::Comma => b',',
            Delimiter::Tab => b'\t',
            Delimiter::Semicolon => b';',
        }
    }

    /// The name used on the command line.
    pub fn name(self) -> &'static str {
        match self {
            Delimiter::Comma => "comma",
            Delimiter::Tab => "tab",
            Delimiter::Semicolon => "semicolon",
        }
    }
}

/// What [`CsvInput::read_row`] found.
#[derive(Debug)]
pub enum Row {
    /// A row was read into the record.
    Record,
    /// The input has no more rows.
    End,
    /// The row on this line cannot be read (the error says why); the next can.
    Fault(u64, Error),
}

/// An open CSV input with its header read and checked.
pub struct CsvInput {
    name: String,
    pub(crate) records: Records,
    headers: Vec<String>,
    size: Option<u64>,
    delimiter: Delimiter,
    decimal: DecimalMark,
    consumed: Arc<AtomicU64>,
    blank: BlankLines,
    /// True when the columns were named by the caller, the input having no header.
    named: bool,
    /// Columns stored as text by a typed source (Parquet).
    text_columns: Vec<String>,
    /// How messages name a row's place: by line, or by row group and row.
    place: Place,
}

/// Blank lines passed over in a file of several columns: how many, and the first few.
#[derive(Debug, Default)]
struct BlankLines {
    count: u64,
    first: Vec<u64>,
}

impl BlankLines {
    const SHOWN: usize = 5;

    fn add(&mut self, line: u64) {
        self.count += 1;
        if self.first.len() < Self::SHOWN {
            self.first.push(line);
        }
    }
}

/// Says how to name an input in messages: its path, or "standard input" for `-`.
pub fn display_name(path: &str) -> String {
    if path == "-" {
        "standard input".to_string()
    } else {
        path.to_string()
    }
}

impl CsvInput {
    /// Opens `path` (`-` for standard input) and reads its header row.
    ///
    /// # Errors
    /// An input error when the file cannot be opened, is empty, or its header is not
    /// valid UTF-8, has an empty name or a name used twice.
    pub fn open(path: &str, delimiter: Delimiter) -> Result<Self> {
        #[cfg(feature = "parquet")]
        if crate::parquet_input::is_parquet(path) {
            // Read as the text a CSV file of the same data holds (see
            // crate::parquet_input), one row group at a time.
            let name = display_name(path);
            let (text, text_columns) =
                crate::parquet_input::ParquetText::open(path, &name, delimiter.byte())?;
            let place = text.place();
            let mut input = Self::from_reader(name, Box::new(text), None, delimiter)?;
            input.text_columns = text_columns;
            input.place = place;
            return Ok(input);
        }
        let (name, source, size) = Self::source(path)?;
        Self::from_reader(name, source, size, delimiter)
    }

    /// Columns the file stores as text or true/false values (a Parquet file's string,
    /// dictionary and boolean columns), read as categories whatever they hold; empty
    /// for CSV, whose cells are all text.
    pub fn text_columns(&self) -> &[String] {
        &self.text_columns
    }

    /// Opens `path` (`-` for standard input), a file without a header row: `names`
    /// name its columns in order, and its first line is a row (for pieces of a larger
    /// file, as a pipeline's stages pass them on).
    ///
    /// # Errors
    /// As for [`CsvInput::open`]; `Malformed` for an empty name or a name given twice.
    ///
    /// # Example
    /// ```
    /// use copse_data::{CsvInput, Delimiter};
    /// # let path = std::env::temp_dir().join("copse-doc-headerless.csv");
    /// # std::fs::write(&path, "1,red\n2,blue\n").unwrap();
    /// let names = ["size".to_string(), "colour".to_string()];
    /// let mut input = CsvInput::open_headerless(&path.to_string_lossy(), Delimiter::Comma, &names)?;
    /// let mut record = csv::StringRecord::new();
    /// assert!(input.read(&mut record)?);
    /// assert_eq!(&record[1], "red");
    /// # Ok::<(), copse_data::Error>(())
    /// ```
    pub fn open_headerless(path: &str, delimiter: Delimiter, names: &[String]) -> Result<Self> {
        let (name, source, size) = Self::source(path)?;
        let mut input = Self::unread(name, source, size, delimiter);
        let record = csv::StringRecord::from(names.to_vec());
        input.headers = input.check_names(&record, "--columns")?;
        input.named = true;
        Ok(input)
    }

    /// The bytes of `path` (`-` for standard input), its name in messages and its
    /// size when known.
    fn source(path: &str) -> Result<(String, Box<dyn Read + Send>, Option<u64>)> {
        let name = display_name(path);
        let (source, size): (Box<dyn Read + Send>, Option<u64>) = if path == "-" {
            (Box::new(io::stdin()), None)
        } else {
            let p = Path::new(path);
            if p.is_dir() {
                return Err(Error::new(
                    ErrorKind::Unreadable,
                    format!("{name} is a folder, not a CSV file; give the path of a file"),
                ));
            }
            let f = File::open(p).map_err(|e| {
                Error::new(
                    ErrorKind::Unreadable,
                    format!(
                        "cannot open {name}: {}; check the path and that you may read it",
                        io_reason(&e)
                    ),
                )
            })?;
            let size = f.metadata().ok().map(|m| m.len());
            (Box::new(f), size)
        };
        Ok((name, source, size))
    }

    /// Reads CSV from any source; `name` names it in messages, `size` (if known) drives
    /// the progress bar.
    ///
    /// # Errors
    /// As for [`CsvInput::open`], without the file-opening ones.
    pub fn from_reader(
        name: String,
        source: Box<dyn Read + Send>,
        size: Option<u64>,
        delimiter: Delimiter,
    ) -> Result<Self> {
        let mut input = Self::unread(name, source, size, delimiter);
        input.read_headers()?;
        Ok(input)
    }

    /// The input before anything is read.
    fn unread(
        name: String,
        source: Box<dyn Read + Send>,
        size: Option<u64>,
        delimiter: Delimiter,
    ) -> Self {
        let consumed = Arc::new(AtomicU64::new(0));
        let records = Records::new(source, delimiter.byte(), consumed.clone());
        CsvInput {
            place: Place::lines(name.clone()),
            name,
            records,
            headers: Vec::new(),
            size,
            delimiter,
            decimal: DecimalMark::Point,
            consumed,
            blank: BlankLines::default(),
            named: false,
            text_columns: Vec::new(),
        }
    }

    fn read_headers(&mut self) -> Result<()> {
        // Blank lines before the header are passed over.
        let found = loop {
            match self.records.next().map_err(|e| self.read_failure(&e))? {
                Framed::Blank => continue,
                other => break other,
            }
        };
        let mut record = csv::StringRecord::new();
        match found {
            Framed::End => {}
            Framed::Fields => self.fill(&mut record)?,
            _ => return Err(self.framing_error(found)),
        }
        if record.is_empty() || (record.len() == 1 && record[0].trim().is_empty()) {
            return Err(Error::new(
                ErrorKind::Malformed,
                format!(
                "{} is empty; copse needs a header row naming the columns, then one row per case",
                self.name
            ),
            ));
        }
        self.headers = self.check_names(&record, "line 1")?;
        Ok(())
    }

    /// The column names of `record`, trimmed, each present and used once; `place`
    /// says where they were given ("line 1", or an option).
    fn check_names(&self, record: &csv::StringRecord, place: &str) -> Result<Vec<String>> {
        let what = if place == "line 1" {
            "the header"
        } else {
            place
        };
        let mut headers: Vec<String> = Vec::with_capacity(record.len());
        for (i, h) in record.iter().enumerate() {
            let h = h.trim();
            if h.is_empty() {
                return Err(Error::new(
                    ErrorKind::Malformed,
                    format!(
                        "{} {place}, column {}: {what} gives this column no name; name every column",
                        self.name,
                        i + 1
                    ),
                ));
            }
            if let Some(first) = headers.iter().position(|x| x == h) {
                return Err(Error::new(ErrorKind::Malformed, format!(
                    "{} {place}: the name '{h}' is used by column {} and column {}; give each column its own name",
                    self.name,
                    first + 1,
                    i + 1
                )));
            }
            headers.push(h.to_string());
        }
        if headers.is_empty() {
            return Err(Error::new(
                ErrorKind::Malformed,
                format!(
                    "{} {place}: no column names given; name every column",
                    self.name
                ),
            ));
        }
        Ok(headers)
    }

    /// The same input, its numbers read with the decimal mark `mark` (a point unless
    /// set).
    ///
    /// # Example
    /// ```
    /// use copse_data::{CsvInput, DecimalMark, Delimiter, Missing, Roles, TrainingTable};
    /// let text = "width;kind\n5,1;a\n4,9;b\n6,2;a\n";
    /// let source = Box::new(std::io::Cursor::new(text.as_bytes().to_vec()));
    /// let input = CsvInput::from_reader("t.csv".into(), source, None, Delimiter::Semicolon)?
    ///     .with_decimal(DecimalMark::Comma);
    /// let table = TrainingTable::from_csv(input, &Roles::target("kind"), Missing::standard())?;
    /// assert_eq!(table.x[[0, 0]], 5.1);
    /// # Ok::<(), copse_data::Error>(())
    /// ```
    pub fn with_decimal(mut self, mark: DecimalMark) -> Self {
        self.decimal = mark;
        self
    }

    /// The decimal mark numbers are read with.
    pub fn decimal(&self) -> DecimalMark {
        self.decimal
    }

    /// The file's name as used in messages.
    pub fn name(&self) -> &str {
        &self.name
    }

    /// How messages name the place of a row of this input: a CSV file's line, a
    /// Parquet file's row group and row.
    pub fn place(&self) -> &Place {
        &self.place
    }

    /// Column names, trimmed, in file order.
    pub fn headers(&self) -> &[String] {
        &self.headers
    }

    /// Size of the file in bytes (`None` for standard input).
    pub fn size(&self) -> Option<u64> {
        self.size
    }

    /// Bytes taken from the source so far (for progress; read ahead of parsing by at
    /// most a buffer).
    pub fn bytes_read(&self) -> u64 {
        self.consumed.load(Ordering::Relaxed)
    }

    /// Reads the next data row into `record`; `false` at the end of the input. The
    /// record's position gives its file line.
    ///
    /// # Errors
    /// An input error naming the line for a row of the wrong length, text that is not
    /// UTF-8, an unclosed quote, a row over [`MAX_RECORD_BYTES`], or a read failure.
    pub fn read(&mut self, record: &mut csv::StringRecord) -> Result<bool> {
        match self.read_row(record)? {
            Row::Record => Ok(true),
            Row::End => Ok(false),
            Row::Fault(_, e) => Err(e),
        }
    }

    /// Reads the next data row like [`CsvInput::read`], but tells a fault of the row
    /// itself (wrong number of fields, text that is not UTF-8, a quote that never
    /// closes), after which reading goes on with the next line, from a fault of the
    /// input as a whole. A quoted field that runs over several lines and leaves its row
    /// malformed is taken for a missing quote: the row's first line is the faulty one,
    /// and reading starts again on the line after it, so every later line is still
    /// read as a row.
    ///
    /// A blank line is a row with one missing value when the header has one column;
    /// with several columns it is passed over and counted ([`CsvInput::blank_lines`]).
    ///
    /// # Errors
    /// An input error when the input cannot be read further: a read failure, or a row
    /// on one line longer than [`MAX_RECORD_BYTES`] (input without line ends).
    pub fn read_row(&mut self, record: &mut csv::StringRecord) -> Result<Row> {
        loop {
            let found = self.records.next().map_err(|e| self.read_failure(&e))?;
            let line = self.records.first_line();
            match found {
                Framed::End => return Ok(Row::End),
                Framed::Blank if self.headers.len() == 1 => {
                    record.clear();
                    record.push_field("");
                    record.set_position(Some(position(line)));
                    return Ok(Row::Record);
                }
                Framed::Blank => self.blank.add(line),
                Framed::Fields if self.records.len() == self.headers.len() => {
                    return Ok(match self.fill(record) {
                        Ok(()) => Row::Record,
                        Err(e) => Row::Fault(line, e),
                    });
                }
                Framed::TooLong if !self.records.spans_lines() => {
                    return Err(self.framing_error(found));
                }
                _ => {
                    let e = self.framing_error(found);
                    self.records.restart_at_next_line();
                    return Ok(Row::Fault(line, e));
                }
            }
        }
    }

    /// Counts a blank line passed over on file line `line` (one that
    /// [`crate::plain::PlainLines`] found), as [`CsvInput::read_row`] counts its own.
    pub fn pass_over_blank_line(&mut self, line: u64) {
        self.blank.add(line);
    }

    /// The field separator.
    pub fn delimiter_kind(&self) -> Delimiter {
        self.delimiter
    }

    /// Blank lines passed over so far (in a file of several columns): how many, and the
    /// first few line numbers.
    pub fn blank_lines(&self) -> (u64, &[u64]) {
        (self.blank.count, &self.blank.first)
    }

    /// A note about the blank lines passed over, if there were any.
    pub fn blank_lines_note(&self) -> Option<String> {
        let n = self.blank.count;
        if n == 0 {
            return None;
        }
        let mut lines: Vec<String> = self.blank.first.iter().map(u64::to_string).collect();
        if n > lines.len() as u64 {
            lines.push(format!("and {} more", n - lines.len() as u64));
        }
        Some(format!(
            "{n} blank line{} of {} {} passed over, as they hold no row (line{} {})",
            if n == 1 { "" } else { "s" },
            self.name,
            if n == 1 { "was" } else { "were" },
            if n == 1 { "" } else { "s" },
            lines.join(", ")
        ))
    }

    /// Copies the fields of the record just framed into `record`, checking they are
    /// UTF-8, with its file line as position.
    fn fill(&self, record: &mut csv::StringRecord) -> Result<()> {
        let records = &self.records;
        fill_record(
            &self.name,
            &self.headers,
            records.first_line(),
            records.len(),
            |i| records.field(i),
            record,
        )
    }

    /// Index of column `name`, if present.
    pub fn column(&self, name: &str) -> Option<usize> {
        self.headers.iter().position(|h| h == name)
    }

    pub(crate) fn read_failure(&self, e: &io::Error) -> Error {
        Error::new(
            ErrorKind::Unreadable,
            format!(
                "could not read {}: {}; check the file is readable",
                self.name,
                io_reason(e)
            ),
        )
    }

    /// The message for a record that is not a row of the header's width.
    fn framing_error(&self, found: Framed) -> Error {
        let name = &self.name;
        let line = self.records.first_line();
        let quote = "check that no quote is missing";
        let text = match found {
            Framed::Unclosed => format!(
                "{name} line {line}: a quoted field that starts on this line is never closed \
                 (the file ends inside it); {quote}"
            ),
            Framed::TooLong if self.records.spans_lines() => format!(
                "{name} line {line}: a quoted field that starts on this line runs on past {} \
                 without closing; {quote}",
                RECORD_LIMIT_WORDS
            ),
            Framed::TooLong => format!(
                "{name} line {line}: the row is longer than {RECORD_LIMIT_WORDS}, the most copse \
                 reads as one row; check that {name} is a CSV text file with line ends"
            ),
            _ => {
                let (len, want) = (self.records.len(), self.headers.len());
                let header = self.header_words();
                if self.records.spans_lines() {
                    format!(
                        "{name} line {line}: found {len} fields but {header} {want}, with a quoted \
                         field that starts on this line and runs on to line {}; {quote}",
                        self.records.last_line()
                    )
                } else {
                    return width_error(name, line, len, want, header, self.delimiter);
                }
            }
        };
        Error::new(ErrorKind::Malformed, text)
    }

    /// A hint when a one-column header looks like it uses another delimiter.
    pub fn delimiter_hint(&self) -> Option<String> {
        if self.headers.len() != 1 {
            return None;
        }
        let h = &self.headers[0];
        [Delimiter::Comma, Delimiter::Tab, Delimiter::Semicolon]
            .into_iter()
            .find(|d| *d != self.delimiter && h.as_bytes().contains(&d.byte()))
            .map(|d| {
                format!(
                    "the header of {} has a single column; if its fields are separated by {}, add --delimiter {}",
                    self.name,
                    d.name(),
                    d.name()
                )
            })
    }
}

impl CsvInput {
    /// How messages name the expected width: the header's, or `--columns`' for a
    /// headerless input whose columns the caller named.
    pub(crate) fn header_words(&self) -> &'static str {
        if self.named {
            "--columns names"
        } else {
            "the header has"
        }
    }
}

/// The record size limit in words, for messages.
const RECORD_LIMIT_WORDS: &str = "1 MiB";
const _: () = assert!(
    MAX_RECORD_BYTES == 1 << 20,
    "RECORD_LIMIT_WORDS names the limit"
);

mod fields;
pub(crate) use fields::{fill_record, position, width_error};

#[cfg(test)]
mod tests;
