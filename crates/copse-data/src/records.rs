//! Splitting CSV bytes into records and fields, line by line: the layer under
//! [`crate::CsvInput`] that knows which file line every record starts on, tells a
//! blank line from a record, caps the size of a record, and can start again at the
//! next line after a record whose quote never closed.
//!
//! The quoting rules are those of RFC 4180 as spreadsheets write it (and as the `csv`
//! crate's reader applies them with its defaults, so files read as before): a field
//! that starts with `"` runs to the next lone `"`, a doubled `""` inside it is one
//! quote, and line breaks inside it belong to the field. Outside quotes, LF, CR LF and
//! a lone CR each end a record. Bytes inside a quoted field are kept exactly (a quoted
//! CR LF stays CR LF). A UTF-8 byte-order mark at the very start is dropped.
//!
//! A record may hold at most [`MAX_RECORD_BYTES`]: input without line ends (a device
//! such as `/dev/zero`, or a binary file) or a quote that is never closed then ends
//! with an error naming a line instead of growing memory without bound. Every buffer
//! here is reused from record to record, so reading allocates nothing per row.
use std::io::{self, Read};
use std::sync::atomic::{AtomicU64, Ordering};
use std::sync::Arc;

/// Most bytes one record (one row, all its fields and line breaks) may take: 1 MiB.
/// Far above any real row of a table, far below what would strain memory.
pub const MAX_RECORD_BYTES: usize = 1 << 20;

/// Bytes asked of the source at a time.
const CHUNK: usize = 1 << 16;

/// What [`Records::next`] found.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum Framed {
    /// A record; its fields are in [`Records::field`].
    Fields,
    /// A line with nothing on it.
    Blank,
    /// The input ended inside a quoted field.
    Unclosed,
    /// The record grew past [`MAX_RECORD_BYTES`]; reading stopped inside it.
    TooLong,
    /// No more input.
    End,
}

/// What [`Records::take_lines`] found.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum Lines {
    /// Whole lines of plain text, the first on this file line.
    Taken {
        /// The file line of the first line taken.
        first_line: u64,
    },
    /// The next lines are not plain (or cannot be taken now): read them record by
    /// record.
    Refused,
    /// No more input.
    End,
}

/// Whether `text` is plain ([`Records::take_lines`]): no quote, every CR followed by an
/// LF, every line well below [`MAX_RECORD_BYTES`].
fn plain(text: &[u8]) -> bool {
    let mut line_start = 0;
    for i in memchr::memchr3_iter(b'"', b'\r', b'\n', text) {
        match text[i] {
            b'"' => return false,
            b'\r' if text.get(i + 1) != Some(&b'\n') => return false,
            b'\n' => {
                if i - line_start >= MAX_RECORD_BYTES / 2 {
                    return false;
                }
                line_start = i + 1;
            }
            _ => {}
        }
    }
    text.len() - line_start < MAX_RECORD_BYTES / 2
}

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum State {
    StartRecord,
    StartField,
    InField,
    InQuoted,
    /// A quote inside a quoted field: a second quote makes it a literal quote,
    /// anything else ends the quoted part.
    QuoteInQuoted,
}

/// A reader of records from any byte source.
pub(crate) struct Records {
    source: Box<dyn Read + Send>,
    buf: Box<[u8]>,
    start: usize,
    end: usize,
    eof: bool,
    /// Bytes to read again before `buf` (after a restart at the next line).
    replay: Vec<u8>,
    replay_pos: usize,
    delimiter: u8,
    /// The line the next byte is on (1-based; counts LF bytes).
    line: u64,
    /// A CR ended the last record or blank line: an LF right after it belongs to it.
    skip_lf: bool,
    bom_checked: bool,
    consumed: Arc<AtomicU64>,
    // The current record.
    first_line: u64,
    last_line: u64,
    size: usize,
    fields: Vec<u8>,
    ends: Vec<usize>,
    /// Set once a line break inside a quoted field is read: the record spans lines,
    /// and its bytes from there on are kept in `tail`, to be read again if the record
    /// turns out to be malformed.
    spans: bool,
    tail: Vec<u8>,
}

impl Records {
    /// Reads from `source`; `consumed` counts the bytes taken from it.
    pub(crate) fn new(
        source: Box<dyn Read + Send>,
        delimiter: u8,
        consumed: Arc<AtomicU64>,
    ) -> Self {
        Records {
            source,
            buf: vec![0u8; CHUNK].into_boxed_slice(),
            start: 0,
            end: 0,
            eof: false,
            replay: Vec::new(),
            replay_pos: 0,
            delimiter,
            line: 1,
            skip_lf: false,
            bom_checked: false,
            consumed,
            first_line: 1,
            last_line: 1,
            size: 0,
            fields: Vec::new(),
            ends: Vec::new(),
            spans: false,
            tail: Vec::new(),
        }
    }

    /// The file line the last record (or blank line) started on.
    pub(crate) fn first_line(&self) -> u64 {
        self.first_line
    }

    /// The file line the last record ended on.
    pub(crate) fn last_line(&self) -> u64 {
        self.last_line
    }

    /// True when the last record held a line break inside a quoted field.
    pub(crate) fn spans_lines(&self) -> bool {
        self.spans
    }

    /// Fields of the last record.
    pub(crate) fn len(&self) -> usize {
        self.ends.len()
    }

    /// Field `i` of the last record, as bytes.
    pub(crate) fn field(&self, i: usize) -> &[u8] {
        let from = if i == 0 { 0 } else { self.ends[i - 1] };
        &self.fields[from..self.ends[i]]
    }

    /// Makes the bytes available: replayed ones first, then the buffer, refilled from
    /// the source when empty. False at the end of the input.
    fn fill(&mut self) -> io::Result<bool> {
        if self.replay_pos < self.replay.len() || self.start < self.end {
            return Ok(true);
        }
        if self.eof {
            return Ok(false);
        }
        let n = loop {
            match self.source.read(&mut self.buf) {
                Ok(n) => break n,
                Err(e) if e.kind() == io::ErrorKind::Interrupted => continue,
                Err(e) => return Err(e),
            }
        };
        self.consumed.fetch_add(n as u64, Ordering::Relaxed);
        self.start = 0;
        self.end = n;
        self.eof = n == 0;
        Ok(n > 0)
    }

    /// The next byte, without taking it.
    fn peek(&mut self) -> io::Result<Option<u8>> {
        if !self.fill()? {
            return Ok(None);
        }
        Ok(Some(if self.replay_pos < self.replay.len() {
            self.replay[self.replay_pos]
        } else {
            self.buf[self.start]
        }))
    }

    /// Takes the byte just peeked.
    fn take(&mut self, b: u8) {
        if self.replay_pos < self.replay.len() {
            self.replay_pos += 1;
        } else {
            self.start += 1;
        }
        if b == b'\n' {
            self.line += 1;
        }
    }

    /// Drops a UTF-8 byte-order mark at the very start of the input.
    fn drop_bom(&mut self) -> io::Result<()> {
        self.bom_checked = true;
        // Gather at least three bytes (a pipe may deliver fewer at first).
        while self.end - self.start < 3 && !self.eof {
            if self.end == self.buf.len() {
                break;
            }
            let n = match self.source.read(&mut self.buf[self.end..]) {
                Ok(n) => n,
                Err(e) if e.kind() == io::ErrorKind::Interrupted => continue,
                Err(e) => return Err(e),
            };
            self.consumed.fetch_add(n as u64, Ordering::Relaxed);
            self.end += n;
            self.eof = n == 0;
        }
        if self.buf[self.start..self.end].starts_with(b"\xef\xbb\xbf") {
            self.start += 3;
        }
        Ok(())
    }

    /// Reads the next record, blank line, or fault.
    ///
    /// # Errors
    /// A read failure of the source.
    pub(crate) fn next(&mut self) -> io::Result<Framed> {
        if !self.bom_checked {
            self.drop_bom()?;
        }
        if self.skip_lf {
            self.skip_lf = false;
            if self.peek()? == Some(b'\n') {
                self.take(b'\n');
            }
        }
        self.fields.clear();
        self.ends.clear();
        self.spans = false;
        self.size = 0;
        self.first_line = self.line;
        let mut state = State::StartRecord;
        loop {
            let Some(b) = self.peek()? else {
                self.last_line = self.line;
                return Ok(match state {
                    State::StartRecord => Framed::End,
                    State::InQuoted => Framed::Unclosed,
                    _ => {
                        self.ends.push(self.fields.len());
                        Framed::Fields
                    }
                });
            };
            self.size += 1;
            if self.size > MAX_RECORD_BYTES {
                return Ok(Framed::TooLong);
            }
            self.take(b);
            if self.spans {
                self.tail.push(b);
            }
            let d = self.delimiter;
            let ends_record = b == b'\n' || b == b'\r';
            match state {
                State::StartRecord if ends_record => {
                    self.skip_lf = b == b'\r';
                    return Ok(Framed::Blank);
                }
                State::StartRecord | State::StartField => {
                    if b == b'"' {
                        state = State::InQuoted;
                    } else if b == d {
                        self.ends.push(self.fields.len());
                        state = State::StartField;
                    } else if ends_record {
                        return Ok(self.end_record(b));
                    } else {
                        self.fields.push(b);
                        state = State::InField;
                    }
                }
                State::InField => {
                    if b == d {
                        self.ends.push(self.fields.len());
                        state = State::StartField;
                    } else if ends_record {
                        return Ok(self.end_record(b));
                    } else {
                        self.fields.push(b);
                    }
                }
                State::InQuoted => {
                    if b == b'"' {
                        state = State::QuoteInQuoted;
                    } else {
                        self.fields.push(b);
                        if b == b'\n' && !self.spans {
                            self.spans = true;
                            self.tail.clear();
                        }
                    }
                }
                State::QuoteInQuoted => {
                    if b == b'"' {
                        self.fields.push(b);
                        state = State::InQuoted;
                    } else if b == d {
                        self.ends.push(self.fields.len());
                        state = State::StartField;
                    } else if ends_record {
                        return Ok(self.end_record(b));
                    } else {
                        self.fields.push(b);
                        state = State::InField;
                    }
                }
            }
        }
    }

    fn end_record(&mut self, terminator: u8) -> Framed {
        self.ends.push(self.fields.len());
        self.skip_lf = terminator == b'\r';
        // An LF has already moved the line count on.
        self.last_line = self.line - u64::from(terminator == b'\n');
        Framed::Fields
    }

    /// Takes whole lines of plain text into `out`, for reading in parallel: up to
    /// `max_lines` lines, and no more once `out` holds `max_bytes` and ends a line.
    /// Plain means every record is one line: no quote character, every CR followed by
    /// an LF, no line near [`MAX_RECORD_BYTES`]; then each line is a record or blank,
    /// and its fields are its text split at the delimiter, as [`Records::next`] would
    /// read them. Text that is not plain is given back, to be read record by record
    /// (`Lines::Refused`), as is everything while bytes wait to be read again after a
    /// restart or before the header's byte-order mark is checked.
    ///
    /// # Errors
    /// A read failure of the source.
    pub(crate) fn take_lines(
        &mut self,
        max_lines: usize,
        max_bytes: usize,
        out: &mut Vec<u8>,
    ) -> io::Result<Lines> {
        out.clear();
        if !self.bom_checked || self.replay_pos < self.replay.len() || max_lines == 0 {
            return Ok(Lines::Refused);
        }
        if self.skip_lf {
            self.skip_lf = false;
            if self.peek()? == Some(b'\n') {
                self.take(b'\n');
            }
        }
        let mut lines = 0;
        loop {
            if !self.fill()? {
                break;
            }
            let avail = &self.buf[self.start..self.end];
            let mut taken = avail.len();
            for i in memchr::memchr_iter(b'\n', avail) {
                lines += 1;
                if lines == max_lines || out.len() + i + 1 >= max_bytes {
                    taken = i + 1;
                    break;
                }
            }
            out.extend_from_slice(&avail[..taken]);
            self.start += taken;
            if out.last() == Some(&b'\n') && (lines == max_lines || out.len() >= max_bytes) {
                break;
            }
            if out.len() > max_bytes.max(MAX_RECORD_BYTES) + MAX_RECORD_BYTES {
                // A line far longer than the bytes asked for: read it record by record.
                break;
            }
        }
        if out.is_empty() {
            return Ok(Lines::End);
        }
        let complete = out.last() == Some(&b'\n') || self.eof;
        if !complete || !plain(out) {
            self.replay.clear();
            self.replay.extend_from_slice(out);
            self.replay_pos = 0;
            out.clear();
            return Ok(Lines::Refused);
        }
        let first_line = self.line;
        self.line += lines as u64;
        Ok(Lines::Taken { first_line })
    }

    /// Goes back to the start of the line after the first line of the last record
    /// (which spans lines): its first line is given up as malformed, and reading
    /// starts again from the next line as if the quote on it had been closed. Does
    /// nothing for a record on one line.
    pub(crate) fn restart_at_next_line(&mut self) {
        if !self.spans {
            return;
        }
        // Bytes read after the first line end, then those not yet read again.
        let mut replay = std::mem::take(&mut self.tail);
        replay.extend_from_slice(&self.replay[self.replay_pos..]);
        self.tail = std::mem::replace(&mut self.replay, replay);
        self.tail.clear();
        self.replay_pos = 0;
        self.line = self.first_line + 1;
        self.skip_lf = false;
        self.spans = false;
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Hands out at most `step` bytes per read, to cross every buffer boundary.
    struct Trickle {
        data: Vec<u8>,
        at: usize,
        step: usize,
    }

    impl Read for Trickle {
        fn read(&mut self, out: &mut [u8]) -> io::Result<usize> {
            let n = self.step.min(out.len()).min(self.data.len() - self.at);
            out[..n].copy_from_slice(&self.data[self.at..self.at + n]);
            self.at += n;
            Ok(n)
        }
    }

    fn reader(data: &[u8], step: usize) -> Records {
        let source = Trickle {
            data: data.to_vec(),
            at: 0,
            step,
        };
        Records::new(Box::new(source), b',', Arc::new(AtomicU64::new(0)))
    }

    /// Everything read, as (line, what, fields); with `restart`, each malformed record
    /// that spans lines is given up and reading starts again at its next line.
    fn all(data: &[u8], step: usize, width: usize) -> Vec<(u64, Framed, Vec<String>)> {
        let mut r = reader(data, step);
        let mut got = Vec::new();
        loop {
            let f = r.next().unwrap();
            let fields = if f == Framed::Fields {
                (0..r.len())
                    .map(|i| String::from_utf8_lossy(r.field(i)).into_owned())
                    .collect()
            } else {
                Vec::new()
            };
            let bad = f == Framed::Unclosed
                || f == Framed::TooLong
                || (f == Framed::Fields && fields.len() != width);
            got.push((r.first_line(), f, fields));
            if f == Framed::End || (f == Framed::TooLong && !r.spans_lines()) {
                break;
            }
            if bad {
                r.restart_at_next_line();
            }
        }
        got
    }

    fn row(line: u64, fields: &[&str]) -> (u64, Framed, Vec<String>) {
        (
            line,
            Framed::Fields,
            fields.iter().map(|s| s.to_string()).collect(),
        )
    }

    #[test]
    fn quoting_line_ends_and_lines_at_every_chunk_size() {
        let data = b"\xef\xbb\xbfa,b\r\n1,\"x\r\ny\"\r\n\r\n\"q\"\"u\",\n5\r6,7\n";
        for step in 1..9 {
            let got = all(data, step, 2);
            let want = vec![
                row(1, &["a", "b"]),
                row(2, &["1", "x\r\ny"]),
                (4, Framed::Blank, vec![]),
                row(5, &["q\"u", ""]),
                row(6, &["5"]),
                row(6, &["6", "7"]),
                (7, Framed::End, vec![]),
            ];
            assert_eq!(got, want, "step {step}");
        }
    }

    /// A quote opened on line 3 and never closed: the record is given up, and the
    /// lines after it are read as rows again.
    #[test]
    fn an_unclosed_quote_gives_up_one_line_only() {
        let data = b"a,b\n1,2\n\"3,4\n5,6\n7,8\n";
        for step in [1, 2, 5, 64] {
            let got = all(data, step, 2);
            assert_eq!(got[2].0, 3);
            assert_eq!(got[2].1, Framed::Unclosed);
            assert_eq!(
                &got[3..],
                &[
                    row(4, &["5", "6"]),
                    row(5, &["7", "8"]),
                    (6, Framed::End, vec![])
                ]
            );
        }
        // Closed much later, by another stray quote: the record has the wrong width.
        let got = all(b"a,b\n\"1,2\n3,4\n5\",6,7\n8,9\n", 3, 2);
        assert_eq!(got[1], row(2, &["1,2\n3,4\n5", "6", "7"]));
        // The stray closing quote is inside a field, where a quote is text.
        assert_eq!(
            &got[2..5],
            &[
                row(3, &["3", "4"]),
                row(4, &["5\"", "6", "7"]),
                row(5, &["8", "9"])
            ]
        );
    }

    #[test]
    fn a_record_is_capped_in_size() {
        // No line end at all: an error, not an endless field.
        let data = vec![b'x'; MAX_RECORD_BYTES + 10];
        let got = all(&data, 4096, 1);
        assert_eq!(got, vec![(1, Framed::TooLong, vec![])]);
        // A quote left open over many lines: the first line is given up, the rest read.
        let mut data = b"a\n\"".to_vec();
        for _ in 0..(MAX_RECORD_BYTES / 4) {
            data.extend_from_slice(b"abc\n");
        }
        let got = all(&data, 4096, 1);
        assert_eq!(got[1].1, Framed::TooLong);
        assert_eq!(got[2], row(3, &["abc"]));
        assert_eq!(got.len(), 2 + MAX_RECORD_BYTES / 4);
    }
}
