//! Parquet input reads as the same data in CSV: the same training table and the same
//! model bytes, over several row groups, with nulls as missing cells, string and
//! dictionary columns as categories, integers and floats as numbers; dates and times
//! are refused with a hint; a bad cell is named by its row group, its row in the group
//! and its row in the file. Data: iris (Fisher 1936) and the Palmer penguins (Gorman,
//! Williams & Fraser 2014), copied in `tests/data/` (provenance in its README), each
//! written to Parquet here with the parquet crate's own writer.
#![cfg(feature = "parquet")]
#![allow(clippy::unwrap_used)]

use arrow_array::{
    ArrayRef, DictionaryArray, Float32Array, Float64Array, Int64Array, RecordBatch, StringArray,
    TimestampMillisecondArray,
};
use arrow_schema::{DataType, Field, Schema};
use copse_data::{CsvInput, Delimiter, Missing, Roles, TrainingTable};
use copse_forest::{FeatureKind, ForestSettings};
use parquet::arrow::ArrowWriter;
use parquet::file::properties::WriterProperties;
use std::path::{Path, PathBuf};
use std::sync::Arc;

fn data(name: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("../../tests/data")
        .join(name)
}

/// Writes `columns` to a Parquet file of row groups of `group_rows` rows.
fn write_parquet(path: &Path, columns: Vec<(&str, ArrayRef)>, group_rows: usize) {
    let fields: Vec<Field> = columns
        .iter()
        .map(|(n, a)| Field::new(*n, a.data_type().clone(), true))
        .collect();
    let schema = Arc::new(Schema::new(fields));
    let batch =
        RecordBatch::try_new(schema.clone(), columns.into_iter().map(|c| c.1).collect()).unwrap();
    let props = WriterProperties::builder()
        .set_max_row_group_row_count(Some(group_rows))
        .build();
    let mut w =
        ArrowWriter::try_new(std::fs::File::create(path).unwrap(), schema, Some(props)).unwrap();
    w.write(&batch).unwrap();
    w.close().unwrap();
}

/// A CSV file's columns as Arrow arrays: whole numbers as Int64, other numbers as
/// Float64, text as strings; `NA` and empty cells as nulls.
fn csv_columns(path: &Path) -> (Vec<String>, Vec<ArrayRef>) {
    let mut r = csv::Reader::from_path(path).unwrap();
    let names: Vec<String> = r.headers().unwrap().iter().map(str::to_string).collect();
    let rows: Vec<csv::StringRecord> = r.records().map(Result::unwrap).collect();
    let arrays = (0..names.len())
        .map(|j| {
            let cells: Vec<Option<&str>> = rows
                .iter()
                .map(|r| Some(&r[j]).filter(|c| !c.is_empty() && *c != "NA"))
                .collect();
            let known = || cells.iter().flatten();
            if known().all(|c| c.parse::<i64>().is_ok()) {
                Arc::new(Int64Array::from_iter(
                    cells.iter().map(|c| c.map(|c| c.parse().unwrap())),
                )) as ArrayRef
            } else if known().all(|c| c.parse::<f64>().is_ok()) {
                Arc::new(Float64Array::from_iter(
                    cells.iter().map(|c| c.map(|c| c.parse().unwrap())),
                ))
            } else {
                Arc::new(StringArray::from_iter(cells.iter().copied())) as ArrayRef
            }
        })
        .collect();
    (names, arrays)
}

fn table(path: &Path, target: &str) -> TrainingTable {
    let input = CsvInput::open(path.to_str().unwrap(), Delimiter::Comma).unwrap();
    let mut t =
        TrainingTable::from_csv(input, &Roles::target(target), Missing::standard()).unwrap();
    // The model card records the file name; the two files differ only in it.
    t.source = "the same data".to_string();
    t
}

fn model_bytes(t: &TrainingTable) -> Vec<u8> {
    let s = ForestSettings {
        trees: 20,
        seed: 3,
        ..Default::default()
    };
    t.train(&s, &Default::default())
        .unwrap()
        .forest
        .to_bytes()
        .unwrap()
}

/// The same rows from the CSV file and from its Parquet copy give the same table and
/// the same model, byte for byte.
fn same_as_csv(csv: &Path, parquet: &Path, target: &str) {
    let (a, b) = (table(csv, target), table(parquet, target));
    assert_eq!(a.features, b.features);
    assert_eq!(a.outcome, b.outcome);
    let bits = |t: &TrainingTable| t.x.iter().map(|v| v.to_bits()).collect::<Vec<_>>();
    assert!(bits(&a) == bits(&b), "the same cells");
    assert_eq!(a.notes, b.notes);
    assert!(model_bytes(&a) == model_bytes(&b), "the same model");
}

#[test]
fn iris_in_parquet_trains_the_model_of_iris_in_csv() {
    let dir = tempfile::tempdir().unwrap();
    let (names, arrays) = csv_columns(&data("iris.csv"));
    let path = dir.path().join("iris.parquet");
    // Row groups of 40 rows: the 150 rows come in four groups.
    write_parquet(
        &path,
        names
            .iter()
            .map(String::as_str)
            .zip(arrays.clone())
            .collect(),
        40,
    );
    same_as_csv(&data("iris.csv"), &path, "species");
    // The species as a dictionary column reads the same.
    let species = arrays[4].as_any().downcast_ref::<StringArray>().unwrap();
    let dict: DictionaryArray<arrow_array::types::Int32Type> = species.iter().collect();
    let mut columns: Vec<(&str, ArrayRef)> = names.iter().map(String::as_str).zip(arrays).collect();
    columns[4].1 = Arc::new(dict);
    assert!(matches!(columns[4].1.data_type(), DataType::Dictionary(..)));
    let path = dir.path().join("iris_dict.parquet");
    write_parquet(&path, columns, 64);
    same_as_csv(&data("iris.csv"), &path, "species");
}

#[test]
fn penguins_with_nulls_and_integers_read_as_in_csv() {
    let dir = tempfile::tempdir().unwrap();
    let (names, arrays) = csv_columns(&data("penguins.csv"));
    assert!(
        arrays.iter().any(|a| a.null_count() > 0),
        "the data has missing cells"
    );
    assert!(arrays.iter().any(|a| a.data_type() == &DataType::Int64));
    let path = dir.path().join("penguins.parquet");
    write_parquet(
        &path,
        names.iter().map(String::as_str).zip(arrays).collect(),
        100,
    );
    same_as_csv(&data("penguins.csv"), &path, "species");
    same_as_csv(&data("penguins.csv"), &path, "body_mass_g");
}

#[test]
fn strings_that_look_like_numbers_are_categories_and_floats_keep_their_value() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("codes.parquet");
    let n = 30;
    let code: ArrayRef = Arc::new(StringArray::from_iter_values(
        (0..n).map(|i| (i % 3 * 5).to_string()),
    ));
    let width: ArrayRef = Arc::new(Float32Array::from_iter_values(
        (0..n).map(|i| 0.1 + i as f32),
    ));
    let y: ArrayRef = Arc::new(StringArray::from_iter_values((0..n).map(|i| {
        if i % 2 == 0 {
            "a"
        } else {
            "b"
        }
    })));
    write_parquet(&path, vec![("code", code), ("width", width), ("y", y)], 7);
    let t = table(&path, "y");
    assert!(matches!(
        t.features[0].kind,
        FeatureKind::Categorical { .. }
    ));
    assert!(matches!(t.features[1].kind, FeatureKind::Numeric));
    // An f32 0.1 reads as the CSV text "0.1" would: the f64 nearest 0.1.
    assert_eq!(t.x[[0, 1]], 0.1);
}

#[test]
fn dates_and_times_are_refused_naming_the_column() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("times.parquet");
    let when: ArrayRef = Arc::new(TimestampMillisecondArray::from(vec![0i64, 86_400_000]));
    let y: ArrayRef = Arc::new(StringArray::from(vec!["a", "b"]));
    write_parquet(&path, vec![("installed", when), ("y", y)], 10);
    let e = CsvInput::open(path.to_str().unwrap(), Delimiter::Comma)
        .err()
        .expect("refused");
    let m = e.message();
    assert!(
        m.contains("column 'installed'") && m.contains("dates or times"),
        "{m}"
    );
    assert!(m.contains("write them as numbers"), "{m}");
}

/// A text value in a column the roles read as numbers, in the second row group, is
/// named by that group, its row within the group, its row counted from the file's
/// start and its column, with what to do; a line break inside a text cell of an
/// earlier row (which makes that row two lines of text) does not move the count.
/// Invented data.
#[test]
fn a_bad_cell_is_named_by_row_group_and_row() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("bad.parquet");
    let size: ArrayRef = Arc::new(StringArray::from(vec!["1.5", "2", "3", "4", "five", "6"]));
    let note: ArrayRef = Arc::new(StringArray::from(vec!["a", "b\nc", "d", "e", "f", "g"]));
    let y: ArrayRef = Arc::new(StringArray::from(vec!["p", "q", "p", "q", "p", "q"]));
    write_parquet(&path, vec![("size", size), ("note", note), ("y", y)], 3);
    let input = CsvInput::open(path.to_str().unwrap(), Delimiter::Comma).unwrap();
    let mut roles = Roles::target("y");
    roles.numeric.push("size".to_string());
    let Err(e) = TrainingTable::from_csv(input, &roles, Missing::standard()) else {
        panic!("a text cell in a numeric column must be refused");
    };
    assert_eq!(e.kind(), copse_data::ErrorKind::BadValue);
    let m = e.message();
    let rest = m
        .strip_prefix(path.to_str().unwrap())
        .unwrap_or_else(|| panic!("the message starts with the file: {m}"));
    assert!(
        rest.starts_with(
            " row group 2, row 2 of the group (row 5 of the file), column 'size': 'five' is \
             not a finite number"
        ),
        "{m}"
    );
    assert!(rest.contains("fix the value"), "{m}");
    assert!(!rest.contains("line"), "{m}");
}
