//! `copse score` reads lines without quotes in parallel and quoted text row by row: the
//! output is the same on one thread and on two, whatever the block size, a quoted line
//! break stays inside its field, and a bad cell is named by its line and column.
//!
//! Data: `tests/data/iris.csv` (Fisher 1936), its rows repeated with a made-up `note`
//! column that is sometimes quoted.
use super::{copse_in, expect_code, read_csv, repo, tmp, train_iris};

/// Iris rows 40 times over, with a note per row: plain text mostly, a quoted note with
/// a line break and a comma every 97th row, CRLF line ends on every 5th row and a blank
/// line every 211th.
fn rows_with_notes() -> String {
    let iris = std::fs::read_to_string(repo("tests/data/iris.csv")).expect("iris");
    let mut lines = iris.lines();
    let header = lines.next().expect("a header");
    let body: Vec<&str> = lines.collect();
    let mut text = format!("{header},note\n");
    for k in 0..40 * body.len() {
        let row = body[k % body.len()];
        let note = if k % 97 == 3 {
            format!("\"row {k}\nsee, also {}\"", k + 1)
        } else {
            format!("n{k}")
        };
        let end = if k % 5 == 0 { "\r\n" } else { "\n" };
        text.push_str(&format!("{row},{note}{end}"));
        if k % 211 == 7 {
            text.push('\n');
        }
    }
    text
}

#[test]
fn scoring_in_parallel_writes_what_one_thread_writes() {
    let dir = tmp();
    expect_code(&train_iris(dir.path(), &[]), 0);
    std::fs::write(dir.path().join("notes.csv"), rows_with_notes()).expect("written");
    let score = |threads: &str, block: Option<&str>, out: &str| {
        let mut args = vec![
            "--threads",
            threads,
            "score",
            "--model",
            "iris.copse",
            "--data",
            "notes.csv",
            "--keep",
            "note",
            "--out",
            out,
        ];
        if let Some(b) = block {
            args.extend_from_slice(&["--block-rows", b]);
        }
        expect_code(&copse_in(dir.path(), &args, None), 0);
        std::fs::read(dir.path().join(out)).expect("scored")
    };
    let one = score("1", None, "one.csv");
    assert_eq!(score("2", None, "two.csv"), one);
    assert_eq!(score("2", Some("7"), "small.csv"), one);
    let rows = read_csv(&one);
    assert_eq!(rows.len(), 1 + 40 * 150);
    assert_eq!(rows[4][0], "row 3\nsee, also 4");
    assert_eq!(rows[5][0], "n4");
}

#[test]
fn a_bad_cell_read_in_parallel_names_its_line_and_column() {
    let dir = tmp();
    expect_code(&train_iris(dir.path(), &[]), 0);
    let mut text = String::from("sepal_length,sepal_width,petal_length,petal_width\n");
    for k in 0..5000 {
        // Line 4001 holds text where a number belongs.
        let width = if k == 3999 { "wide" } else { "3.0" };
        text.push_str(&format!("5.1,{width},1.4,0.2\n"));
    }
    std::fs::write(dir.path().join("bad.csv"), text).expect("written");
    let args = [
        "--threads",
        "2",
        "score",
        "--model",
        "iris.copse",
        "--data",
        "bad.csv",
        "--out",
        "out.csv",
    ];
    // An input error (exit 2), and no output file half-written.
    let (_, err) = expect_code(&copse_in(dir.path(), &args, None), 2);
    assert!(!dir.path().join("out.csv").exists());
    assert!(
        err.contains("bad.csv line 4001, column 'sepal_width': 'wide' is not a finite number"),
        "{err}"
    );
}
