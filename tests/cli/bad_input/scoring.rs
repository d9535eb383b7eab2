//! Scoring and evaluating: files that do not match the model, bad cells at scoring time,
//! and what is written or refused.
use super::*;

#[test]
fn m24_scoring_file_missing_two_columns() {
    score_refused(
        "sepal_length,sepal_width\n5.1,3.5\n",
        &[
            "new.csv has no columns 'petal_length', 'petal_width'",
            "add them",
        ],
    );
}

/// A UTF-8 byte-order mark and CRLF line ends in the file to score: columns still match
/// by name, and a bad cell is reported on its own line.
#[test]
fn m25_bom_and_crlf_in_the_scoring_file() {
    let dir = tmp();
    iris_model(dir.path());
    put(
        dir.path(),
        "new.csv",
        "\u{feff}petal_width,sepal_length,sepal_width,petal_length\r\n0.2,5.1,3.5,1.4\r\n2.3,6.9,3.1,5.4\r\n",
    );
    let (so, _) = expect_code(
        &copse_in(
            dir.path(),
            &["score", "--model", "iris.copse", "--data", "new.csv"],
            None,
        ),
        0,
    );
    let preds: Vec<&str> = so
        .lines()
        .skip(1)
        .map(|l| l.split(',').next().unwrap_or(""))
        .collect();
    assert_eq!(preds, vec!["setosa", "virginica"], "{so}");
    put(
        dir.path(),
        "new.csv",
        "\u{feff}petal_width,sepal_length,sepal_width,petal_length\r\n0.2,5.1,3.5,1.4\r\n2.3,6.9,3.1,five\r\n",
    );
    refused(
        dir.path(),
        &[
            "score",
            "--model",
            "iris.copse",
            "--data",
            "new.csv",
            "--out",
            "s.csv",
        ],
        None,
        2,
        &["new.csv line 3, column 'petal_length'"],
    );
}

/// Text in a column the model reads as numbers: an error naming line and column that
/// also offers --blank-unscorable; nothing written.
#[test]
fn m26_column_of_another_kind_at_scoring() {
    score_refused(
        "sepal_length,sepal_width,petal_length,petal_width\n5.1,3.5,1.4,0.2\n5.0,wide,1.4,0.2\n",
        &[
            "new.csv line 3, column 'sepal_width'",
            "'wide' is not a finite number",
            "--blank-unscorable",
        ],
    );
}

/// With --blank-unscorable, a row that cannot be scored (text in a numeric input, a
/// wrong number of fields, text that is not UTF-8) keeps its place with an empty
/// prediction, and the rows are counted on standard error: one output row per input
/// row, in order, none dropped.
#[test]
fn m27_unscorable_rows_are_kept_blank_and_counted() {
    let dir = tmp();
    iris_model(dir.path());
    let mut d = b"id,sepal_length,sepal_width,petal_length,petal_width\n".to_vec();
    d.extend_from_slice(b"r1,5.1,3.5,1.4,0.2\n");
    d.extend_from_slice(b"r2,5.0,wide,1.4,0.2\n");
    d.extend_from_slice(b"r3,6.9,3.1,5.4\n");
    d.extend_from_slice(b"r4,6.9,3.1,5.4,2.3\n");
    d.extend_from_slice(b"r5,6.9,3.1,5.\xff,2.3\n");
    d.extend_from_slice(b"r6,5.1,3.5,1.4,0.2\n");
    put(dir.path(), "new.csv", &d);
    let args = [
        "score",
        "--model",
        "iris.copse",
        "--data",
        "new.csv",
        "--keep",
        "id",
        "--blank-unscorable",
        "--out",
        "s.csv",
        "--block-rows",
        "2",
    ];
    let (_, se) = expect_code(&copse_in(dir.path(), &args, None), 0);
    assert!(
        se.contains("3 of 6 rows of new.csv could not be scored")
            && se.contains("empty prediction (lines 3, 4, 6)")
            && se.contains("line 3, column 'sepal_width'"),
        "{se}"
    );
    let out = std::fs::read_to_string(dir.path().join("s.csv")).expect("scored file");
    let rows: Vec<&str> = out.lines().collect();
    assert_eq!(rows.len(), 7, "{out}");
    assert!(rows[1].starts_with("r1,setosa,"), "{out}");
    assert_eq!(rows[2], "r2,,,,");
    assert_eq!(rows[3], ",,,,", "a malformed row keeps no fields");
    assert!(rows[4].starts_with("r4,virginica,"), "{out}");
    assert_eq!(rows[5], ",,,,");
    assert!(rows[6].starts_with("r6,setosa,"), "{out}");
}

/// Numbers in a column the model knows as categories are categories it never saw:
/// treated as missing, counted in a warning, every row scored.
#[test]
fn m28_numbers_in_a_categorical_input_are_unseen_categories() {
    let dir = tmp();
    let mut d = String::from("colour,size,y\n");
    for i in 0..30 {
        let (c, y) = if i % 2 == 0 {
            ("red", "p")
        } else {
            ("blue", "q")
        };
        d.push_str(&format!("{c},{},{y}\n", i % 4));
    }
    put(dir.path(), "d.csv", &d);
    expect_code(&copse_in(dir.path(), &train_args("d.csv", "y"), None), 0);
    put(dir.path(), "new.csv", "colour,size\n1,2\n2,2\nred,1\n");
    let (so, se) = expect_code(
        &copse_in(
            dir.path(),
            &["score", "--model", "m.copse", "--data", "new.csv"],
            None,
        ),
        0,
    );
    assert_eq!(so.lines().count(), 4, "{so}");
    assert!(
        se.contains("2 cells of new.csv hold categories the model never saw")
            && se.contains("2 in 'colour' (such as '1', '2')"),
        "{se}"
    );
}

/// Evaluating on a class the model never saw: an error naming the line and column.
#[test]
fn m29_unknown_class_when_evaluating() {
    let dir = tmp();
    iris_model(dir.path());
    put(
        dir.path(),
        "lab.csv",
        "sepal_length,sepal_width,petal_length,petal_width,species\n5.1,3.5,1.4,0.2,setosa\n5.1,3.5,1.4,0.2,tulip\n",
    );
    refused(
        dir.path(),
        &["evaluate", "--model", "iris.copse", "--data", "lab.csv"],
        None,
        2,
        &[
            "lab.csv line 3, column 'species'",
            "class 'tulip'",
            "retrain with them",
        ],
    );
}

#[test]
fn m30_kept_column_absent() {
    let dir = tmp();
    iris_model(dir.path());
    let i = iris();
    refused(
        dir.path(),
        &[
            "score",
            "--model",
            "iris.copse",
            "--data",
            &i,
            "--keep",
            "plant_id",
            "--out",
            "s.csv",
        ],
        None,
        2,
        &["--keep names the column 'plant_id'", "its columns are"],
    );
}
