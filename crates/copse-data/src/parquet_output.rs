//! Parquet output of scored rows (cargo feature `parquet`): the scorer's rows, block by
//! block, as one row group each, so memory stays bounded by a block. Each column is
//! text (kept cells, class labels), a 64-bit float (predicted values, probabilities,
//! standard errors) or a boolean (flags); an empty cell is null.
use crate::error::{Error, ErrorKind, Result};
use arrow_array::builder::{BooleanBuilder, Float64Builder, StringBuilder};
use arrow_array::{ArrayRef, RecordBatch};
use arrow_schema::{DataType, Field, Schema, SchemaRef};
use parquet::arrow::ArrowWriter;
use parquet::basic::Compression;
use parquet::file::properties::WriterProperties;
use std::sync::Arc;

/// What an output column holds.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ColumnKind {
    /// Text.
    Text,
    /// A number.
    Number,
    /// True for `1`, false for `0`.
    Flag,
}

/// Writes scored rows as a Parquet file, one row group per block, into a buffer the
/// caller empties into the file after every block ([`ScoredWriter::take_bytes`]).
pub struct ScoredWriter {
    name: String,
    writer: ArrowWriter<Vec<u8>>,
    schema: SchemaRef,
    kinds: Vec<ColumnKind>,
}

fn fault(name: &str, e: impl std::fmt::Display) -> Error {
    Error::new(
        ErrorKind::Unreadable,
        format!("could not write the Parquet file {name}: {e}"),
    )
}

impl ScoredWriter {
    /// A writer of the columns `columns` (name and kind); `name` names the file in
    /// messages. Snappy compression.
    ///
    /// # Errors
    /// When the file's header cannot be made.
    pub fn new(name: &str, columns: &[(String, ColumnKind)]) -> Result<Self> {
        let fields: Vec<Field> = columns
            .iter()
            .map(|(n, k)| {
                let t = match k {
                    ColumnKind::Text => DataType::Utf8,
                    ColumnKind::Number => DataType::Float64,
                    ColumnKind::Flag => DataType::Boolean,
                };
                Field::new(n, t, true)
            })
            .collect();
        let schema: SchemaRef = Arc::new(Schema::new(fields));
        let props = WriterProperties::builder()
            .set_compression(Compression::SNAPPY)
            .build();
        let writer = ArrowWriter::try_new(Vec::new(), schema.clone(), Some(props))
            .map_err(|e| fault(name, e))?;
        Ok(ScoredWriter {
            name: name.to_string(),
            writer,
            schema,
            kinds: columns.iter().map(|c| c.1).collect(),
        })
    }

    /// Writes the rows of `text` (CSV lines without a header, one field per column,
    /// separated by `delimiter`) as one row group.
    ///
    /// # Errors
    /// A row of the wrong width, a number that does not read, or a write failure.
    pub fn write_csv_block(&mut self, text: &[u8], delimiter: u8) -> Result<()> {
        enum Col {
            T(StringBuilder),
            N(Float64Builder),
            F(BooleanBuilder),
        }
        let mut cols: Vec<Col> = self
            .kinds
            .iter()
            .map(|k| match k {
                ColumnKind::Text => Col::T(StringBuilder::new()),
                ColumnKind::Number => Col::N(Float64Builder::new()),
                ColumnKind::Flag => Col::F(BooleanBuilder::new()),
            })
            .collect();
        let mut r = csv::ReaderBuilder::new()
            .has_headers(false)
            .delimiter(delimiter)
            .from_reader(text);
        let mut record = csv::StringRecord::new();
        while r
            .read_record(&mut record)
            .map_err(|e| fault(&self.name, e))?
        {
            if record.len() != cols.len() {
                return Err(fault(&self.name, "a scored row has the wrong width"));
            }
            for (c, cell) in cols.iter_mut().zip(record.iter()) {
                match c {
                    _ if cell.is_empty() => match c {
                        Col::T(b) => b.append_null(),
                        Col::N(b) => b.append_null(),
                        Col::F(b) => b.append_null(),
                    },
                    Col::T(b) => b.append_value(cell),
                    Col::N(b) => b.append_value(
                        cell.parse::<f64>()
                            .map_err(|_| fault(&self.name, format!("'{cell}' is not a number")))?,
                    ),
                    Col::F(b) => b.append_value(cell == "1"),
                }
            }
        }
        let arrays: Vec<ArrayRef> = cols
            .into_iter()
            .map(|c| -> ArrayRef {
                match c {
                    Col::T(mut b) => Arc::new(b.finish()),
                    Col::N(mut b) => Arc::new(b.finish()),
                    Col::F(mut b) => Arc::new(b.finish()),
                }
            })
            .collect();
        let batch =
            RecordBatch::try_new(self.schema.clone(), arrays).map_err(|e| fault(&self.name, e))?;
        if batch.num_rows() > 0 {
            self.writer
                .write(&batch)
                .map_err(|e| fault(&self.name, e))?;
            self.writer.flush().map_err(|e| fault(&self.name, e))?;
        }
        Ok(())
    }

    /// The file's bytes made since the last call, to write out.
    pub fn take_bytes(&mut self) -> Vec<u8> {
        std::mem::take(self.writer.inner_mut())
    }

    /// Writes the footer and returns the file's last bytes.
    ///
    /// # Errors
    /// A write failure.
    pub fn finish(self) -> Result<Vec<u8>> {
        let name = self.name;
        self.writer.into_inner().map_err(|e| fault(&name, e))
    }
}
