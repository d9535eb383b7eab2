//! Reading CSV input: a file or standard input (`-`), a header row, one of three
//! delimiters, with or without a UTF-8 byte-order mark, CRLF or LF line ends, quoted
//! fields. Every fault is reported with the file name, line and column and a hint.
use crate::error::{CliError, CliResult};
use std::fs::File;
use std::io::{self, Read};
use std::path::Path;

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

/// An open CSV input with its header read and checked.
pub struct CsvInput {
    name: String,
    reader: csv::Reader<Box<dyn Read + Send>>,
    headers: Vec<String>,
    size: Option<u64>,
    delimiter: Delimiter,
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
    pub fn open(path: &str, delimiter: Delimiter) -> CliResult<Self> {
        let name = display_name(path);
        let (source, size): (Box<dyn Read + Send>, Option<u64>) = if path == "-" {
            (Box::new(io::stdin()), None)
        } else {
            let p = Path::new(path);
            if p.is_dir() {
                return Err(CliError::input(format!(
                    "{name} is a folder, not a CSV file; give the path of a file"
                )));
            }
            let f = File::open(p).map_err(|e| {
                CliError::input(format!(
                    "cannot open {name}: {}; check the path and that you may read it",
                    io_reason(&e)
                ))
            })?;
            let size = f.metadata().ok().map(|m| m.len());
            (Box::new(f), size)
        };
        let reader = csv::ReaderBuilder::new()
            .delimiter(delimiter.byte())
            .has_headers(true)
            .flexible(false)
            .from_reader(source);
        let mut input = CsvInput {
            name,
            reader,
            headers: Vec::new(),
            size,
            delimiter,
        };
        input.read_headers()?;
        Ok(input)
    }

    fn read_headers(&mut self) -> CliResult<()> {
        let record = match self.reader.headers() {
            Ok(r) => r.clone(),
            Err(e) => return Err(self.csv_error(&e)),
        };
        if record.is_empty() || (record.len() == 1 && record[0].trim().is_empty()) {
            return Err(CliError::input(format!(
                "{} is empty; copse needs a header row naming the columns, then one row per case",
                self.name
            )));
        }
        let mut headers: Vec<String> = Vec::with_capacity(record.len());
        for (i, h) in record.iter().enumerate() {
            let h = h.trim();
            if h.is_empty() {
                return Err(CliError::input(format!(
                    "{} line 1, column {}: the header gives this column no name; name every column",
                    self.name,
                    i + 1
                )));
            }
            if let Some(first) = headers.iter().position(|x| x == h) {
                return Err(CliError::input(format!(
                    "{} line 1: the name '{h}' is used by column {} and column {}; give each column its own name",
                    self.name,
                    first + 1,
                    i + 1
                )));
            }
            headers.push(h.to_string());
        }
        self.headers = headers;
        Ok(())
    }

    /// The file's name as used in messages.
    pub fn name(&self) -> &str {
        &self.name
    }

    /// Column names, trimmed, in file order.
    pub fn headers(&self) -> &[String] {
        &self.headers
    }

    /// Size of the file in bytes (`None` for standard input).
    pub fn size(&self) -> Option<u64> {
        self.size
    }

    /// Bytes consumed so far (for progress).
    pub fn bytes_read(&self) -> u64 {
        self.reader.position().byte()
    }

    /// Reads the next data row into `record`; `false` at the end of the input. The
    /// record's position gives its line.
    ///
    /// # Errors
    /// An input error naming the line for a row of the wrong length, text that is not
    /// UTF-8, or a read failure.
    pub fn read(&mut self, record: &mut csv::StringRecord) -> CliResult<bool> {
        self.reader
            .read_record(record)
            .map_err(|e| self.csv_error(&e))
    }

    /// Index of column `name`, if present.
    pub fn column(&self, name: &str) -> Option<usize> {
        self.headers.iter().position(|h| h == name)
    }

    /// Turns a CSV error into a message naming the file, line and column.
    fn csv_error(&self, e: &csv::Error) -> CliError {
        let name = &self.name;
        match e.kind() {
            csv::ErrorKind::Io(io) => CliError::input(format!(
                "could not read {name}: {}; check the file is readable",
                io_reason(io)
            )),
            csv::ErrorKind::Utf8 { pos, err } => {
                let line = pos.as_ref().map_or(0, |p| p.line());
                let col = err.field();
                let column = self
                    .headers
                    .get(col)
                    .map_or(format!("column {}", col + 1), |h| {
                        format!("column {} ('{h}')", col + 1)
                    });
                CliError::input(format!(
                    "{name} line {line}, {column}: the text is not valid UTF-8; save the file with UTF-8 encoding and try again"
                ))
            }
            csv::ErrorKind::UnequalLengths {
                pos,
                expected_len,
                len,
            } => {
                let line = pos.as_ref().map_or(0, |p| p.line());
                CliError::input(format!(
                    "{name} line {line}: found {len} fields but the header has {expected_len}; \
                     check that fields holding a {} are quoted and that no quote is missing \
                     (to read another delimiter, use --delimiter comma|tab|semicolon)",
                    self.delimiter.name()
                ))
            }
            _ => CliError::input(format!("could not read {name} as CSV: {e}")),
        }
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

/// The reason part of an I/O error, without the OS error number.
pub fn io_reason(e: &io::Error) -> String {
    match e.kind() {
        io::ErrorKind::NotFound => "no such file".to_string(),
        io::ErrorKind::PermissionDenied => "permission denied".to_string(),
        _ => {
            let s = e.to_string();
            match s.find(" (os error") {
                Some(i) => s[..i].to_string(),
                None => s,
            }
        }
    }
}
