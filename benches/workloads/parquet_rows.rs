//! The scoring file of S1M end to end written as Parquet (Float64 columns rounded to
//! six decimals, as in the CSV file; row groups of 65,536 rows), so `copse score` can be
//! timed on it beside the CSV file.
use arrow_array::{ArrayRef, Float64Array, RecordBatch};
use arrow_schema::{DataType, Field, Schema};
use copse_forest::synth;
use parquet::arrow::ArrowWriter;
use parquet::basic::Compression;
use parquet::file::properties::WriterProperties;
use std::path::Path;
use std::sync::Arc;

/// Rows per row group of the benchmark's Parquet file.
const GROUP_ROWS: usize = 65_536;

/// Writes the inputs of `data` (columns x1..xp) to `path` as Parquet, Snappy
/// compressed.
pub fn write(path: &Path, data: &synth::Synthetic) -> Result<(), String> {
    let p = data.x.ncols();
    let fields: Vec<Field> = (1..=p)
        .map(|j| Field::new(format!("x{j}"), DataType::Float64, true))
        .collect();
    let schema = Arc::new(Schema::new(fields));
    let props = WriterProperties::builder()
        .set_compression(Compression::SNAPPY)
        .set_max_row_group_row_count(Some(GROUP_ROWS))
        .build();
    let file = std::fs::File::create(path).map_err(|e| format!("{}: {e}", path.display()))?;
    let mut w =
        ArrowWriter::try_new(file, schema.clone(), Some(props)).map_err(|e| e.to_string())?;
    let n = data.x.nrows();
    for start in (0..n).step_by(GROUP_ROWS) {
        let end = (start + GROUP_ROWS).min(n);
        let columns: Vec<ArrayRef> = (0..p)
            .map(|j| {
                let v = (start..end).map(|i| (data.x[[i, j]] * 1e6).round() / 1e6);
                Arc::new(Float64Array::from_iter_values(v)) as ArrayRef
            })
            .collect();
        let batch = RecordBatch::try_new(schema.clone(), columns).map_err(|e| e.to_string())?;
        w.write(&batch).map_err(|e| e.to_string())?;
    }
    w.close().map_err(|e| e.to_string())?;
    Ok(())
}
