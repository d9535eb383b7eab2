//! Parquet input (cargo feature `parquet`, on by default): a Parquet file is read one
//! row group at a time and handed to the CSV reader as the text a CSV file of the same
//! data would hold, so every command reads it exactly as it reads that CSV file (the
//! same inference, encoding, checks and results), with memory bounded by one batch.
//!
//! Type mapping (Parquet/Arrow logical type -> copse):
//! - integers, floats, decimals -> numbers (written in the shortest text that reads
//!   back as the same value; a float NaN is missing);
//! - strings (plain, large, view), dictionary-encoded strings, booleans -> categories
//!   (a string column is categorical even when its values look like numbers);
//! - nulls (and columns of the null type) -> missing;
//! - timestamps, dates, times, durations, intervals -> refused, with a hint to write
//!   them as numbers or text;
//! - binary, lists, structs, maps and other nested types -> refused.
//!
//! Messages about a cell name its row group, the row within the group and the row
//! counted from the file's start (see [`Place`]), not a line of the text.
use crate::error::{Error, ErrorKind, Result};
use crate::place::{ParquetRows, Place};
use arrow_array::cast::AsArray;
use arrow_array::types::*;
use arrow_array::{Array, ArrayRef, RecordBatch};
use arrow_schema::{DataType, SchemaRef};
use parquet::arrow::arrow_reader::{ParquetRecordBatchReader, ParquetRecordBatchReaderBuilder};
use std::collections::VecDeque;
use std::fs::File;
use std::io::{self, Read};
use std::sync::Arc;

/// Rows decoded at a time (one Arrow batch).
const BATCH_ROWS: usize = 8192;

/// The four bytes every Parquet file starts (and ends) with.
pub const PARQUET_MAGIC: [u8; 4] = *b"PAR1";

/// Whether the file at `path` is a Parquet file (it starts with `PAR1`).
pub fn is_parquet(path: &str) -> bool {
    let mut head = [0u8; 4];
    path != "-"
        && File::open(path)
            .and_then(|mut f| f.read_exact(&mut head))
            .is_ok()
        && head == PARQUET_MAGIC
}

/// A Parquet file as CSV text: the header line, then one line per row, produced
/// batch by batch.
pub(crate) struct ParquetText {
    name: String,
    file: File,
    groups: usize,
    group: usize,
    /// Rows of earlier row groups (to name a row in messages).
    rows_before: u64,
    reader: Option<ParquetRecordBatchReader>,
    delimiter: u8,
    pending: VecDeque<u8>,
    /// Row groups' sizes and the rows that span several lines of the text.
    rows: Arc<ParquetRows>,
    /// Lines of the text so far beyond one for the header and one per row (line
    /// breaks inside text cells).
    extra_lines: u64,
}

fn refuse(message: String) -> Error {
    Error::new(ErrorKind::Malformed, message)
}

/// Whether copse reads a column of type `t`, and if not, why and what to do.
fn check_type(name: &str, column: &str, t: &DataType) -> Result<()> {
    use DataType::*;
    let ok = match t {
        Null | Boolean | Int8 | Int16 | Int32 | Int64 | UInt8 | UInt16 | UInt32 | UInt64
        | Float16 | Float32 | Float64 | Utf8 | LargeUtf8 | Utf8View => true,
        Decimal32(..) | Decimal64(..) | Decimal128(..) | Decimal256(..) => true,
        Dictionary(_, v) => matches!(**v, Utf8 | LargeUtf8 | Utf8View),
        Timestamp(..) | Date32 | Date64 | Time32(_) | Time64(_) | Duration(_) | Interval(_) => {
            return Err(refuse(format!(
                "{name}, column '{column}': it holds dates or times ({t}), which copse does \
                 not read yet; write them as numbers (for example days or seconds since a \
                 start you choose) or as text, and read the file again"
            )))
        }
        _ => false,
    };
    if ok {
        Ok(())
    } else {
        Err(refuse(format!(
            "{name}, column '{column}': copse reads numbers, text and true/false values, not \
             {t}; leave the column out of the file or convert it"
        )))
    }
}

/// Names of the columns Parquet stores as text or true/false (categorical in copse).
pub(crate) fn text_columns(schema: &SchemaRef) -> Vec<String> {
    schema
        .fields()
        .iter()
        .filter(|f| {
            matches!(
                f.data_type(),
                DataType::Utf8
                    | DataType::LargeUtf8
                    | DataType::Utf8View
                    | DataType::Boolean
                    | DataType::Dictionary(..)
            )
        })
        .map(|f| f.name().clone())
        .collect()
}

impl ParquetText {
    /// Opens `path`, checks every column's type, and returns the text source with the
    /// names of its text columns.
    pub(crate) fn open(path: &str, name: &str, delimiter: u8) -> Result<(Self, Vec<String>)> {
        let open = || {
            File::open(path).map_err(|e| {
                Error::new(
                    ErrorKind::Unreadable,
                    format!(
                        "cannot open {name}: {}; check the path and that you may read it",
                        copse_forest::io_reason(&e)
                    ),
                )
            })
        };
        let builder = ParquetRecordBatchReaderBuilder::try_new(open()?).map_err(|e| {
            refuse(format!(
                "{name} starts like a Parquet file but its footer cannot be read ({e}); it may \
                 be cut short: copy it again"
            ))
        })?;
        let schema = builder.schema().clone();
        for f in schema.fields() {
            check_type(name, f.name(), f.data_type())?;
        }
        let groups = builder.metadata().num_row_groups();
        let group_rows = builder
            .metadata()
            .row_groups()
            .iter()
            .map(|g| u64::try_from(g.num_rows()).unwrap_or(0))
            .collect();
        let mut text = ParquetText {
            name: name.to_string(),
            file: open()?,
            groups,
            group: 0,
            rows_before: 0,
            reader: None,
            delimiter,
            pending: VecDeque::new(),
            rows: Arc::new(ParquetRows::new(group_rows)),
            extra_lines: 0,
        };
        let header: Vec<&str> = schema.fields().iter().map(|f| f.name().as_str()).collect();
        let line = text.csv_line(header.iter().copied())?;
        text.note_header_lines(&line);
        text.pending.extend(line);
        Ok((text, text_columns(&schema)))
    }

    /// How messages name a row of this file.
    pub(crate) fn place(&self) -> Place {
        Place::parquet(self.name.clone(), self.rows.clone())
    }

    /// Notes the line breaks inside the header line `written` (its own line end
    /// excluded): the first row starts that many lines after line 2.
    fn note_header_lines(&mut self, written: &[u8]) {
        let inner = memchr::memchr_iter(b'\n', written).count() as u64;
        let inner = inner.saturating_sub(u64::from(written.last() == Some(&b'\n')));
        if inner > 0 {
            self.extra_lines += inner;
            self.rows
                .shifted_from(2 + self.extra_lines, self.extra_lines);
        }
    }

    /// One CSV line of `fields`, quoted as needed.
    fn csv_line<'a>(&self, fields: impl Iterator<Item = &'a str>) -> Result<Vec<u8>> {
        let mut w = csv::WriterBuilder::new()
            .delimiter(self.delimiter)
            .from_writer(Vec::new());
        w.write_record(fields)
            .map_err(|e| refuse(format!("{}: {e}", self.name)))?;
        w.into_inner()
            .map_err(|e| refuse(format!("{}: {}", self.name, e.error())))
    }

    /// Reads the next batch into `pending`; false at the end of the file.
    fn next_batch(&mut self) -> io::Result<bool> {
        loop {
            if self.reader.is_none() {
                if self.group >= self.groups {
                    return Ok(false);
                }
                let file = self.file.try_clone()?;
                let reader = ParquetRecordBatchReaderBuilder::try_new(file)
                    .and_then(|b| {
                        b.with_row_groups(vec![self.group])
                            .with_batch_size(BATCH_ROWS)
                            .build()
                    })
                    .map_err(|e| self.fault(0, &e.to_string()))?;
                self.reader = Some(reader);
            }
            let next = self.reader.as_mut().and_then(Iterator::next);
            match next {
                Some(Ok(batch)) => {
                    self.write_batch(&batch)?;
                    self.rows_before += batch.num_rows() as u64;
                    return Ok(true);
                }
                Some(Err(e)) => return Err(self.fault(self.rows_before, &e.to_string())),
                None => {
                    self.reader = None;
                    self.group += 1;
                }
            }
        }
    }

    /// A read failure naming the file, the row group and the first row not read.
    fn fault(&self, row: u64, what: &str) -> io::Error {
        // copse is built with the pure-Rust codecs only (Snappy, LZ4).
        let hint = if what.contains("Disabled feature") {
            "; copse reads Snappy, LZ4 and uncompressed Parquet: write the file again with \
             Snappy"
        } else {
            ""
        };
        io::Error::other(format!(
            "{}, row group {} (from row {}): {what}{hint}",
            self.name,
            self.group + 1,
            row + 1
        ))
    }

    /// Appends the text of every row of `batch` to `pending`.
    fn write_batch(&mut self, batch: &RecordBatch) -> io::Result<()> {
        let columns: Vec<Cells> = batch.columns().iter().map(Cells::of).collect();
        let mut w = csv::WriterBuilder::new()
            .delimiter(self.delimiter)
            .from_writer(Vec::with_capacity(batch.num_rows() * 16 * columns.len()));
        let mut record = csv::StringRecord::new();
        let mut cell = String::new();
        for i in 0..batch.num_rows() {
            record.clear();
            let mut breaks = 0u64;
            for c in &columns {
                cell.clear();
                c.write(i, &mut cell);
                if c.text {
                    breaks += memchr::memchr_iter(b'\n', cell.as_bytes()).count() as u64;
                }
                record.push_field(&cell);
            }
            w.write_record(&record).map_err(io::Error::other)?;
            if breaks > 0 {
                // The rows after this one start `breaks` lines further down: the
                // next, file row `rows_before + i + 2`, on the line after the header
                // and the rows before it, plus the lines added so far.
                self.extra_lines += breaks;
                let next = self.rows_before + i as u64 + 2;
                self.rows
                    .shifted_from(next + 1 + self.extra_lines, self.extra_lines);
            }
        }
        let bytes = w
            .into_inner()
            .map_err(|e| io::Error::other(e.to_string()))?;
        self.pending.extend(bytes);
        Ok(())
    }
}

impl Read for ParquetText {
    fn read(&mut self, buf: &mut [u8]) -> io::Result<usize> {
        while self.pending.is_empty() {
            if !self.next_batch()? {
                return Ok(0);
            }
        }
        let n = buf.len().min(self.pending.len());
        for (b, v) in buf.iter_mut().zip(self.pending.drain(..n)) {
            *b = v;
        }
        Ok(n)
    }
}

/// One column of a batch, read cell by cell as text.
struct Cells {
    array: ArrayRef,
    /// Whether cells are text (and so may hold line breaks).
    text: bool,
    /// For a dictionary column, each row's index into its values, and the values.
    dictionary: Option<(Vec<usize>, Box<Cells>)>,
}

impl Cells {
    fn of(array: &ArrayRef) -> Self {
        let dictionary = matches!(array.data_type(), DataType::Dictionary(..)).then(|| {
            let d = array.as_any_dictionary();
            (d.normalized_keys(), Box::new(Cells::of(d.values())))
        });
        Cells {
            array: array.clone(),
            text: matches!(
                array.data_type(),
                DataType::Utf8
                    | DataType::LargeUtf8
                    | DataType::Utf8View
                    | DataType::Dictionary(..)
            ),
            dictionary,
        }
    }

    /// Appends cell `i` as CSV text (nothing for a missing cell).
    fn write(&self, i: usize, out: &mut String) {
        use std::fmt::Write as _;
        let a = &self.array;
        if a.is_null(i) {
            return;
        }
        // `{}` writes the shortest text that reads back as the same value, as a CSV
        // file of the same data would hold it; NaN is a missing cell.
        let mut float = |v: f64| {
            if !v.is_nan() {
                let _ = write!(out, "{v}");
            }
        };
        match a.data_type() {
            DataType::Null => {}
            DataType::Boolean => out.push_str(if a.as_boolean().value(i) {
                "true"
            } else {
                "false"
            }),
            DataType::Int8 => {
                let _ = write!(out, "{}", a.as_primitive::<Int8Type>().value(i));
            }
            DataType::Int16 => {
                let _ = write!(out, "{}", a.as_primitive::<Int16Type>().value(i));
            }
            DataType::Int32 => {
                let _ = write!(out, "{}", a.as_primitive::<Int32Type>().value(i));
            }
            DataType::Int64 => {
                let _ = write!(out, "{}", a.as_primitive::<Int64Type>().value(i));
            }
            DataType::UInt8 => {
                let _ = write!(out, "{}", a.as_primitive::<UInt8Type>().value(i));
            }
            DataType::UInt16 => {
                let _ = write!(out, "{}", a.as_primitive::<UInt16Type>().value(i));
            }
            DataType::UInt32 => {
                let _ = write!(out, "{}", a.as_primitive::<UInt32Type>().value(i));
            }
            DataType::UInt64 => {
                let _ = write!(out, "{}", a.as_primitive::<UInt64Type>().value(i));
            }
            DataType::Float16 => float(f64::from(a.as_primitive::<Float16Type>().value(i))),
            DataType::Float32 => {
                let v = a.as_primitive::<Float32Type>().value(i);
                // An f32 is written as the f32 it is (0.1, not 0.10000000149011612).
                if !v.is_nan() {
                    let _ = write!(out, "{v}");
                }
            }
            DataType::Float64 => float(a.as_primitive::<Float64Type>().value(i)),
            DataType::Decimal32(..)
            | DataType::Decimal64(..)
            | DataType::Decimal128(..)
            | DataType::Decimal256(..) => {
                out.push_str(&decimal_text(a, i));
            }
            DataType::Utf8 => out.push_str(a.as_string::<i32>().value(i)),
            DataType::LargeUtf8 => out.push_str(a.as_string::<i64>().value(i)),
            DataType::Utf8View => out.push_str(a.as_string_view().value(i)),
            DataType::Dictionary(..) => {
                if let Some((keys, values)) = &self.dictionary {
                    values.write(keys[i], out);
                }
            }
            _ => {}
        }
    }
}

/// A decimal cell as text (its digits with the point placed by the scale).
fn decimal_text(a: &ArrayRef, i: usize) -> String {
    match a.data_type() {
        DataType::Decimal32(..) => a.as_primitive::<Decimal32Type>().value_as_string(i),
        DataType::Decimal64(..) => a.as_primitive::<Decimal64Type>().value_as_string(i),
        DataType::Decimal128(..) => a.as_primitive::<Decimal128Type>().value_as_string(i),
        DataType::Decimal256(..) => a.as_primitive::<Decimal256Type>().value_as_string(i),
        _ => String::new(),
    }
}
