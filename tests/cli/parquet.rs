//! Parquet in every command that reads rows, and out of `copse score`: the same model
//! bytes, scores, evaluation and importance as the same data in CSV, and Parquet
//! output holding the CSV output's values. Data: iris (Fisher 1936; see `main.rs`),
//! written to Parquet here with the parquet crate's own writer, in row groups of 40.
use super::{copse_in, expect_code, read_csv, repo, tmp};
use arrow_array::{Array, ArrayRef, Float64Array, RecordBatch, StringArray};
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
    let mut fields = Vec::new();
    let mut arrays: Vec<ArrayRef> = Vec::new();
    for (j, name) in header.iter().enumerate() {
        let cells = body.iter().map(|r| r[j].as_str());
        if j < 4 {
            let v: Vec<f64> = cells.map(|c| c.parse().expect("a number")).collect();
            arrays.push(Arc::new(Float64Array::from(v)));
        } else {
            arrays.push(Arc::new(StringArray::from_iter_values(cells)));
        }
        fields.push(Field::new(name, arrays[j].data_type().clone(), true));
    }
    let schema = Arc::new(Schema::new(fields));
    let batch = RecordBatch::try_new(schema.clone(), arrays).expect("a batch");
    let props = WriterProperties::builder()
        .set_max_row_group_row_count(Some(40))
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
