//! Parquet in every command that reads rows, and out of `copse score`: the same model
//! bytes, scores, evaluation and importance as the same data in CSV, and Parquet
//! output holding the CSV output's values; bad cells named by row group and row, and
//! timestamps refused with a hint. Data: iris (Fisher 1936; see `main.rs`), written to
//! Parquet here with the parquet crate's own writer, in row groups of 40.
use super::{copse_in, expect_code, read_csv, repo, tmp};
use arrow_array::{Array, ArrayRef, Float64Array, RecordBatch, StringArray, TimestampSecondArray};
use arrow_schema::{Field, Schema};
use parquet::arrow::arrow_reader::ParquetRecordBatchReaderBuilder;
use parquet::arrow::ArrowWriter;
use parquet::file::properties::WriterProperties;
use std::path::Path;
use std::sync::Arc;

/// Writes iris as Parquet (four Float64 columns and a string column) at `path`.
fn iris_parquet(path: &Path) {
    let rows = read_csv(&std::fs::read(repo("tests/data/iris.csv")).expect("iris"));
    let (header, body) = rows.split_first().expect("a header");
    let mut columns: Vec<(&str, ArrayRef)> = Vec::new();
    for (j, name) in header.iter().enumerate() {
        let cells = body.iter().map(|r| r[j].as_str());
        if j < 4 {
            let v: Vec<f64> = cells.map(|c| c.parse().expect("a number")).collect();
            columns.push((name.as_str(), Arc::new(Float64Array::from(v))));
        } else {
            columns.push((
                name.as_str(),
                Arc::new(StringArray::from_iter_values(cells)),
            ));
        }
    }
    write_parquet(path, columns, 40);
}

/// Writes `columns` to a Parquet file of row groups of `group_rows` rows.
fn write_parquet(path: &Path, columns: Vec<(&str, ArrayRef)>, group_rows: usize) {
    let fields: Vec<Field> = columns
        .iter()
        .map(|(n, a)| Field::new(*n, a.data_type().clone(), true))
        .collect();
    let schema = Arc::new(Schema::new(fields));
    let arrays = columns.into_iter().map(|c| c.1).collect();
    let batch = RecordBatch::try_new(schema.clone(), arrays).expect("a batch");
    let props = WriterProperties::builder()
        .set_max_row_group_row_count(Some(group_rows))
        .build();
    let file = std::fs::File::create(path).expect("created");
    let mut w = ArrowWriter::try_new(file, schema, Some(props)).expect("a writer");
    w.write(&batch).expect("written");
    w.close().expect("closed");
}

fn ok(dir: &Path, args: &[&str]) -> String {
    expect_code(&copse_in(dir, args, None), 0).0
}

#[test]
fn parquet_and_csv_give_the_same_model_scores_evaluation_and_importance() {
    let dir = tmp();
    let (c, p) = (dir.path().join("c"), dir.path().join("p"));
    std::fs::create_dir(&c).expect("folder");
    std::fs::create_dir(&p).expect("folder");
    std::fs::copy(repo("tests/data/iris.csv"), c.join("iris.csv")).expect("copied");
    // The same name in both folders, so the model cards agree; copse knows Parquet by
    // its content, not its name.
    iris_parquet(&p.join("iris.csv"));
    let train = [
        "train", "--data", "iris.csv", "--target", "species", "--out", "m.copse", "--trees", "30",
        "--seed", "5", "-q",
    ];
    // The same report, the time taken aside.
    let timeless = |t: String| -> Vec<String> {
        t.lines()
            .filter(|l| !l.contains("time taken"))
            .map(str::to_string)
            .collect()
    };
    assert_eq!(timeless(ok(&c, &train)), timeless(ok(&p, &train)));
    let model = |d: &Path| std::fs::read(d.join("m.copse")).expect("model");
    assert!(model(&c) == model(&p), "the same model file");
    for args in [
        &[
            "score", "--model", "m.copse", "--data", "iris.csv", "--keep", "species",
        ][..],
        &[
            "evaluate", "--model", "m.copse", "--data", "iris.csv", "--json",
        ][..],
        &[
            "importance",
            "--model",
            "m.copse",
            "--data",
            "iris.csv",
            "--json",
        ][..],
    ] {
        let mut with_q = args.to_vec();
        with_q.push("-q");
        assert_eq!(ok(&c, &with_q), ok(&p, &with_q), "{args:?}");
    }
}

#[test]
fn parquet_output_holds_the_csv_output() {
    let dir = tmp();
    let d = dir.path();
    iris_parquet(&d.join("iris.parquet"));
    ok(
        d,
        &[
            "train",
            "--data",
            "iris.parquet",
            "--target",
            "species",
            "--out",
            "m.copse",
            "--trees",
            "20",
            "-q",
        ],
    );
    let base = [
        "score",
        "--model",
        "m.copse",
        "--data",
        "iris.parquet",
        "--keep",
        "species",
        "--flag-unfamiliar",
        "-q",
    ];
    let csv = read_csv(ok(d, &base).as_bytes());
    let mut args = base.to_vec();
    args.extend_from_slice(&["--out-format", "parquet", "--out", "scored.parquet"]);
    ok(d, &args);
    let file = std::fs::File::open(d.join("scored.parquet")).expect("written");
    let reader = ParquetRecordBatchReaderBuilder::try_new(file)
        .expect("a Parquet file")
        .build()
        .expect("a reader");
    let mut rows = 0;
    for batch in reader {
        let batch = batch.expect("a batch");
        let schema = batch.schema();
        let names: Vec<&str> = schema.fields().iter().map(|f| f.name().as_str()).collect();
        assert_eq!(names, csv[0].iter().map(String::as_str).collect::<Vec<_>>());
        for i in 0..batch.num_rows() {
            let want = &csv[1 + rows + i];
            for (j, col) in batch.columns().iter().enumerate() {
                let got = match names[j] {
                    "species" | "prediction" => col
                        .as_any()
                        .downcast_ref::<StringArray>()
                        .expect("text")
                        .value(i)
                        .to_string(),
                    "unfamiliar" => {
                        let b = col.as_any().downcast_ref::<arrow_array::BooleanArray>();
                        if b.expect("a flag").value(i) {
                            "1"
                        } else {
                            "0"
                        }
                        .to_string()
                    }
                    _ => {
                        let v = col
                            .as_any()
                            .downcast_ref::<Float64Array>()
                            .expect("a number");
                        assert_eq!(Some(v.value(i)), want[j].parse::<f64>().ok());
                        continue;
                    }
                };
                assert_eq!(got, want[j], "row {} column {}", rows + i, names[j]);
            }
        }
        rows += batch.num_rows();
        assert_eq!(batch.columns()[0].null_count(), 0);
    }
    assert_eq!(rows, csv.len() - 1);
    // Parquet goes to a file only.
    let mut args = base.to_vec();
    args.extend_from_slice(&["--out-format", "parquet"]);
    let (_, err) = expect_code(&copse_in(d, &args, None), 2);
    assert!(err.contains("give --out FILE"), "{err}");
}

/// A bad cell of a Parquet file is named by its row group, its row within the group,
/// its row counted from the file's start and its column, with what to do, on one
/// thread and on two (which read rows in pieces): iris (Fisher 1936) scored from a file
/// whose `sepal_width` is stored as text, one cell of the third row group reading
/// "wide", and whose extra text column holds a line break in an earlier row (two lines
/// of text for one row, which must not move the count). With --blank-unscorable the
/// row is written blank and named in the warning by its row in the file.
#[test]
fn a_bad_parquet_cell_is_named_by_row_group_row_and_column() {
    let dir = tmp();
    let d = dir.path();
    std::fs::copy(repo("tests/data/iris.csv"), d.join("iris.csv")).expect("copied");
    let train = [
        "train", "--data", "iris.csv", "--target", "species", "--out", "m.copse", "--trees", "10",
        "-q",
    ];
    ok(d, &train);
    let rows = read_csv(&std::fs::read(repo("tests/data/iris.csv")).expect("iris"));
    let (header, body) = rows.split_first().expect("a header");
    // Row 86 of the file: the sixth of the third group of 40.
    let bad = 85;
    let mut columns: Vec<(&str, ArrayRef)> = Vec::new();
    for (j, name) in header.iter().enumerate().take(4) {
        let cells = body.iter().enumerate().map(|(i, r)| {
            if j == 1 && i == bad {
                "wide".to_string()
            } else {
                r[j].clone()
            }
        });
        columns.push((
            name.as_str(),
            Arc::new(StringArray::from_iter_values(cells)),
        ));
    }
    let notes = (0..body.len()).map(|i| if i == 10 { "two\nlines" } else { "one" });
    columns.push(("note", Arc::new(StringArray::from_iter_values(notes))));
    write_parquet(&d.join("new.parquet"), columns, 40);
    let place = "new.parquet row group 3, row 6 of the group (row 86 of the file), \
                 column 'sepal_width': 'wide' is not a finite number";
    for threads in ["1", "2"] {
        // The blank run of the round before wrote s.csv.
        let _ = std::fs::remove_file(d.join("s.csv"));
        let score = [
            "--threads",
            threads,
            "score",
            "--model",
            "m.copse",
            "--data",
            "new.parquet",
            "--out",
            "s.csv",
        ];
        let (_, err) = expect_code(&copse_in(d, &score, None), 2);
        assert!(err.contains(place), "{err}");
        assert!(
            err.contains("fix the value") && err.contains("--blank-unscorable"),
            "{err}"
        );
        assert!(!err.contains(" line "), "{err}");
        assert!(!d.join("s.csv").exists(), "no partial output");
        let mut blank = score.to_vec();
        blank.push("--blank-unscorable");
        let (_, err) = expect_code(&copse_in(d, &blank, None), 0);
        assert!(
            err.contains("1 of 150 rows of new.parquet could not be scored")
                && err.contains("empty prediction (file row 86)")
                && err.contains(place),
            "{err}"
        );
        let out = read_csv(&std::fs::read(d.join("s.csv")).expect("scored"));
        assert_eq!(out.len(), 151);
        assert!(out[86].iter().all(String::is_empty), "{:?}", out[86]);
    }
}

/// A timestamp column is refused before anything is read, naming the file and the
/// column and saying how to write it instead (invented data).
#[test]
fn a_parquet_timestamp_column_is_refused_with_its_hint() {
    let dir = tmp();
    let d = dir.path();
    let when: ArrayRef = Arc::new(TimestampSecondArray::from(vec![0i64, 86_400, 172_800]));
    let y: ArrayRef = Arc::new(StringArray::from(vec!["a", "b", "a"]));
    write_parquet(&d.join("t.parquet"), vec![("laid", when), ("y", y)], 2);
    let train = [
        "train",
        "--data",
        "t.parquet",
        "--target",
        "y",
        "--out",
        "m.copse",
    ];
    let (out, err) = expect_code(&copse_in(d, &train, None), 2);
    assert!(out.is_empty(), "{out}");
    assert!(
        err.contains("t.parquet, column 'laid'")
            && err.contains("dates or times")
            && err.contains("write them as numbers (for example days or seconds since a start"),
        "{err}"
    );
    assert!(!d.join("m.copse").exists(), "no model written");
}
