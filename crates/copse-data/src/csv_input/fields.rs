//! Turning a line's fields into a checked record: the UTF-8 check naming the column,
//! the message for a record of the wrong width, and a record's file position.
use super::Delimiter;
use crate::cells::clip;
use crate::error::{Error, ErrorKind, Result};

/// Copies `n` fields (`field(i)`) of the record that starts on file `line` into
/// `record`, checking they are UTF-8, with `line` as position; an error names the first
/// field that is not, by its column in `headers`.
pub(crate) fn fill_record<'f>(
    name: &str,
    headers: &[String],
    line: u64,
    n: usize,
    field: impl Fn(usize) -> &'f [u8],
    record: &mut csv::StringRecord,
) -> Result<()> {
    record.clear();
    for i in 0..n {
        match std::str::from_utf8(field(i)) {
            Ok(text) => record.push_field(text),
            Err(_) => {
                let column = headers.get(i).map_or(format!("column {}", i + 1), |h| {
                    format!("column {} ('{}')", i + 1, clip(h))
                });
                return Err(Error::new(ErrorKind::Malformed, format!(
                    "{name} line {line}, {column}: the text is not valid UTF-8; save the file with UTF-8 encoding and try again"
                )));
            }
        }
    }
    record.set_position(Some(position(line)));
    Ok(())
}

/// The message for a record on one line with `len` fields where the header has `want`.
pub(crate) fn width_error(
    name: &str,
    line: u64,
    len: usize,
    want: usize,
    header: &str,
    delimiter: Delimiter,
) -> Error {
    Error::new(
        ErrorKind::Malformed,
        format!(
            "{name} line {line}: found {len} fields but {header} {want}; \
             check that fields holding a {} are quoted and that no quote is missing \
             (to read another delimiter, use --delimiter comma|tab|semicolon)",
            delimiter.name()
        ),
    )
}

/// A position holding only a file line.
pub(crate) fn position(line: u64) -> csv::Position {
    let mut p = csv::Position::new();
    p.set_line(line);
    p
}
