//! Reading CSV input: a file or standard input (`-`), a header row, one of three
//! delimiters, with or without a UTF-8 byte-order mark, CRLF or LF line ends, quoted
//! fields. Every fault is reported with the file name, line and column and a hint.
use crate::error::{Error, ErrorKind, Result};
use copse_forest::io_reason;
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
    reader: csv::Reader<Box<dyn Read + Send>>,
    headers: Vec<String>,
    size: Option<u64>,
    delimiter: Delimiter,
    consumed: Arc<AtomicU64>,
}

/// Turns each CR LF pair into LF as bytes stream through, and counts the bytes read
/// from the source. The CSV parser then ends every record on the LF, so the line
/// numbers it reports are right for files with CRLF line ends too (ending a record on
/// the CR would count each line break one record late). A lone CR is kept.
pub struct CrlfToLf<R> {
    inner: R,
    buf: Box<[u8]>,
    start: usize,
    end: usize,
    held_cr: bool,
    consumed: Arc<AtomicU64>,
}

impl<R: Read> CrlfToLf<R> {
    /// Wraps `inner`; `consumed` counts the bytes taken from it.
    pub fn new(inner: R, consumed: Arc<AtomicU64>) -> Self {
        CrlfToLf {
            inner,
            buf: vec![0u8; 1 << 16].into_boxed_slice(),
            start: 0,
            end: 0,
            held_cr: false,
            consumed,
        }
    }
}

impl<R: Read> Read for CrlfToLf<R> {
    fn read(&mut self, out: &mut [u8]) -> io::Result<usize> {
        if out.is_empty() {
            return Ok(0);
        }
        loop {
            if self.start == self.end {
                let n = loop {
                    match self.inner.read(&mut self.buf) {
                        Ok(n) => break n,
                        Err(e) if e.kind() == io::ErrorKind::Interrupted => continue,
                        Err(e) => return Err(e),
                    }
                };
                self.consumed.fetch_add(n as u64, Ordering::Relaxed);
                self.start = 0;
                self.end = n;
                if self.held_cr {
                    self.held_cr = false;
                    if n == 0 || self.buf[0] != b'\n' {
                        // The held CR was not part of a CR LF pair: pass it on.
                        out[0] = b'\r';
                        return Ok(1);
                    }
                }
                if n == 0 {
                    return Ok(0);
                }
            }
            let mut w = 0;
            while self.start < self.end && w < out.len() {
                let b = self.buf[self.start];
                if b == b'\r' {
                    if self.start + 1 == self.end {
                        // Whether this CR starts a CR LF pair is known only after
                        // the next read.
                        self.held_cr = true;
                        self.start += 1;
                        break;
                    }
                    if self.buf[self.start + 1] == b'\n' {
                        self.start += 1;
                        continue;
                    }
                }
                out[w] = b;
                w += 1;
                self.start += 1;
            }
            if w > 0 {
                return Ok(w);
            }
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
        Self::from_reader(name, source, size, delimiter)
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
        let consumed = Arc::new(AtomicU64::new(0));
        let source: Box<dyn Read + Send> = Box::new(CrlfToLf::new(source, consumed.clone()));
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
            consumed,
        };
        input.read_headers()?;
        Ok(input)
    }

    fn read_headers(&mut self) -> Result<()> {
        let record = match self.reader.headers() {
            Ok(r) => r.clone(),
            Err(e) => return Err(self.csv_error(&e)),
        };
        if record.is_empty() || (record.len() == 1 && record[0].trim().is_empty()) {
            return Err(Error::new(
                ErrorKind::Malformed,
                format!(
                "{} is empty; copse needs a header row naming the columns, then one row per case",
                self.name
            ),
            ));
        }
        let mut headers: Vec<String> = Vec::with_capacity(record.len());
        for (i, h) in record.iter().enumerate() {
            let h = h.trim();
            if h.is_empty() {
                return Err(Error::new(
                    ErrorKind::Malformed,
                    format!(
                    "{} line 1, column {}: the header gives this column no name; name every column",
                    self.name,
                    i + 1
                ),
                ));
            }
            if let Some(first) = headers.iter().position(|x| x == h) {
                return Err(Error::new(ErrorKind::Malformed, format!(
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

    /// Bytes taken from the source so far (for progress; read ahead of parsing by at
    /// most a buffer).
    pub fn bytes_read(&self) -> u64 {
        self.consumed.load(Ordering::Relaxed)
    }

    /// Reads the next data row into `record`; `false` at the end of the input. The
    /// record's position gives its line.
    ///
    /// # Errors
    /// An input error naming the line for a row of the wrong length, text that is not
    /// UTF-8, or a read failure.
    pub fn read(&mut self, record: &mut csv::StringRecord) -> Result<bool> {
        self.reader
            .read_record(record)
            .map_err(|e| self.csv_error(&e))
    }

    /// Reads the next data row like [`CsvInput::read`], but tells a fault of the row
    /// itself (wrong number of fields, text that is not UTF-8), after which reading can
    /// go on with the next row, from a fault of the input as a whole.
    ///
    /// # Errors
    /// An input error when the input cannot be read further.
    pub fn read_row(&mut self, record: &mut csv::StringRecord) -> Result<Row> {
        match self.reader.read_record(record) {
            Ok(true) => Ok(Row::Record),
            Ok(false) => Ok(Row::End),
            Err(e) => match e.kind() {
                csv::ErrorKind::Utf8 { pos, .. } | csv::ErrorKind::UnequalLengths { pos, .. } => {
                    let line = pos.as_ref().map_or(0, |p| p.line());
                    Ok(Row::Fault(line, self.csv_error(&e)))
                }
                _ => Err(self.csv_error(&e)),
            },
        }
    }

    /// Index of column `name`, if present.
    pub fn column(&self, name: &str) -> Option<usize> {
        self.headers.iter().position(|h| h == name)
    }

    /// Turns a CSV error into a message naming the file, line and column.
    fn csv_error(&self, e: &csv::Error) -> Error {
        let name = &self.name;
        match e.kind() {
            csv::ErrorKind::Io(io) => Error::new(
                ErrorKind::Unreadable,
                format!(
                    "could not read {name}: {}; check the file is readable",
                    io_reason(io)
                ),
            ),
            csv::ErrorKind::Utf8 { pos, err } => {
                let line = pos.as_ref().map_or(0, |p| p.line());
                let col = err.field();
                let column = self
                    .headers
                    .get(col)
                    .map_or(format!("column {}", col + 1), |h| {
                        format!("column {} ('{h}')", col + 1)
                    });
                Error::new(ErrorKind::Malformed, format!(
                    "{name} line {line}, {column}: the text is not valid UTF-8; save the file with UTF-8 encoding and try again"
                ))
            }
            csv::ErrorKind::UnequalLengths {
                pos,
                expected_len,
                len,
            } => {
                let line = pos.as_ref().map_or(0, |p| p.line());
                Error::new(
                    ErrorKind::Malformed,
                    format!(
                    "{name} line {line}: found {len} fields but the header has {expected_len}; \
                     check that fields holding a {} are quoted and that no quote is missing \
                     (to read another delimiter, use --delimiter comma|tab|semicolon)",
                    self.delimiter.name()
                ),
                )
            }
            _ => Error::new(
                ErrorKind::Malformed,
                format!("could not read {name} as CSV: {e}"),
            ),
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

#[cfg(test)]
mod tests {
    use super::*;

    /// Hands out at most `step` bytes per read, to cross every buffer boundary.
    struct Trickle<'a> {
        data: &'a [u8],
        step: usize,
    }

    impl Read for Trickle<'_> {
        fn read(&mut self, out: &mut [u8]) -> io::Result<usize> {
            let n = self.step.min(out.len()).min(self.data.len());
            out[..n].copy_from_slice(&self.data[..n]);
            self.data = &self.data[n..];
            Ok(n)
        }
    }

    fn convert(data: &[u8], step: usize, out_step: usize) -> Vec<u8> {
        let counter = Arc::new(AtomicU64::new(0));
        let mut r = CrlfToLf::new(Trickle { data, step }, counter.clone());
        let mut got = Vec::new();
        let mut chunk = vec![0u8; out_step];
        loop {
            let n = r.read(&mut chunk).unwrap();
            if n == 0 {
                break;
            }
            got.extend_from_slice(&chunk[..n]);
        }
        assert_eq!(counter.load(Ordering::Relaxed), data.len() as u64);
        got
    }

    #[test]
    fn crlf_pairs_become_lf_at_every_chunk_boundary() {
        let data = b"a,b\r\n1,2\r\n\r\r\n\"x\r\ny\",3\r\rz\r";
        let want = b"a,b\n1,2\n\r\n\"x\ny\",3\r\rz\r";
        for step in 1..8 {
            for out_step in 1..5 {
                assert_eq!(convert(data, step, out_step), want, "{step} {out_step}");
            }
        }
    }

    #[test]
    fn line_numbers_are_right_with_crlf() {
        let data = b"a,b\r\n1,2\r\n3,4\r\n5\r\n";
        let counter = Arc::new(AtomicU64::new(0));
        let mut rdr = csv::ReaderBuilder::new().from_reader(CrlfToLf::new(&data[..], counter));
        let mut rec = csv::StringRecord::new();
        let mut lines = Vec::new();
        loop {
            match rdr.read_record(&mut rec) {
                Ok(true) => lines.push(rec.position().map(|p| p.line())),
                Ok(false) => break,
                Err(e) => match e.kind() {
                    csv::ErrorKind::UnequalLengths { pos, .. } => {
                        lines.push(pos.as_ref().map(|p| p.line()));
                        break;
                    }
                    _ => panic!("{e}"),
                },
            }
        }
        assert_eq!(lines, vec![Some(2), Some(3), Some(4)]);
    }
}
