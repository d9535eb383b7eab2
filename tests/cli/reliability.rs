//! The bad-input matrix, continued (cases r01 on): rows that must never be dropped or
//! misnumbered (stray quotes, rows without line ends, blank lines), outputs of one
//! command replaced together or not at all, standard error that cannot be written, the
//! memory check against measured peaks, and the smaller promises of the messages. Each
//! runs the real binary in a temporary folder, like `bad_input.rs`, whose helpers it
//! shares.
//!
//! Data: `tests/data/iris.csv` (Fisher 1936; provenance in `tests/data/README.md`) for
//! models; every other file is written by the test itself.
use super::bad_input::{files, iris_model, put, refused, train_args};
use super::{copse_in, expect_code, tmp};
use std::path::Path;

const IRIS_HEADER: &str = "id,sepal_length,sepal_width,petal_length,petal_width\n";

/// Scores `new.csv` in `dir` with the iris model and extra arguments.
fn score_in(dir: &Path, extra: &[&str]) -> std::process::Output {
    let mut args = vec!["score", "--model", "iris.copse", "--data", "new.csv"];
    args.extend_from_slice(extra);
    copse_in(dir, &args, None)
}

/// A stray quote at the start of a row: without `--blank-unscorable` an error naming
/// its line; with it, that row is written blank and every later row is still scored,
/// one output row per input row (the quote once swallowed the rest of the file).
#[test]
fn r01_a_stray_quote_costs_one_row_not_the_rest_of_the_file() {
    let dir = tmp();
    iris_model(dir.path());
    let mut d = String::from(IRIS_HEADER);
    for i in 1..=6 {
        let q = if i == 2 { "\"" } else { "" };
        d.push_str(&format!("{q}r{i},5.1,3.5,1.4,0.2\n"));
    }
    put(dir.path(), "new.csv", &d);
    let args = [
        "score",
        "--model",
        "iris.copse",
        "--data",
        "new.csv",
        "--out",
        "s.csv",
    ];
    refused(
        dir.path(),
        &args,
        None,
        2,
        &[
            "new.csv line 3: a quoted field that starts on this line is never closed",
            "check that no quote is missing",
            "--blank-unscorable",
        ],
    );
    let (so, se) = expect_code(
        &score_in(dir.path(), &["--keep", "id", "--blank-unscorable"]),
        0,
    );
    let rows: Vec<&str> = so.lines().collect();
    assert_eq!(rows.len(), 7, "{so}");
    assert_eq!(rows[2], ",,,,", "{so}");
    for (i, r) in rows.iter().enumerate().skip(1).filter(|(i, _)| *i != 2) {
        assert!(r.starts_with(&format!("r{i},setosa,")), "{so}");
    }
    assert!(
        se.contains("1 of 6 rows of new.csv could not be scored") && se.contains("(lines 3)"),
        "{se}"
    );
}

/// Input without line ends (what `yes x | tr -d '\n'` or `/dev/zero` gives) stops at the
/// record size cap with an error naming the line, instead of growing memory until the
/// allocator aborts.
#[test]
fn r02_input_without_line_ends_is_refused_at_the_record_cap() {
    let dir = tmp();
    iris_model(dir.path());
    let mut d = IRIS_HEADER.as_bytes().to_vec();
    d.extend(std::iter::repeat_n(b'x', 3 << 20));
    let args = [
        "score",
        "--model",
        "iris.copse",
        "--data",
        "-",
        "--blank-unscorable",
    ];
    refused(
        dir.path(),
        &args,
        Some(&d),
        2,
        &[
            "standard input line 2: the row is longer than 1 MiB",
            "line ends",
        ],
    );
    if Path::new("/dev/zero").exists() {
        let args = ["score", "--model", "iris.copse", "--data", "/dev/zero"];
        refused(
            dir.path(),
            &args,
            None,
            2,
            &["/dev/zero line 1: the row is longer than 1 MiB"],
        );
    }
}

/// A model on one input, `a`.
fn one_input_model(dir: &Path) {
    let mut d = String::from("a,y\n");
    for i in 0..40 {
        d.push_str(&format!(
            "{},{}\n",
            f64::from(i) / 40.0,
            if i < 20 { "lo" } else { "hi" }
        ));
    }
    put(dir, "one.csv", &d);
    let mut args = train_args("one.csv", "y");
    args[6] = "one.copse";
    expect_code(&copse_in(dir, &args, None), 0);
}

/// With one column a blank line is a row whose value is missing: every input row gives
/// an output row (a blank line once vanished without a word).
#[test]
fn r03_a_blank_line_in_one_column_is_a_missing_value() {
    let dir = tmp();
    one_input_model(dir.path());
    let args = ["score", "--model", "one.copse", "--data", "-"];
    let (so, _) = expect_code(&copse_in(dir.path(), &args, Some(b"a\n0.1\n\n0.9\n")), 0);
    let rows: Vec<&str> = so.lines().collect();
    assert_eq!(rows.len(), 4, "{so}");
    assert!(
        rows[1].starts_with("lo,") && rows[3].starts_with("hi,"),
        "{so}"
    );
}

/// With several columns a blank line holds no row: it is passed over and counted in a
/// note, and every line number in messages and in `--oob-out` is a file line.
#[test]
fn r04_blank_lines_are_counted_and_line_numbers_are_file_lines() {
    let dir = tmp();
    iris_model(dir.path());
    let d =
        format!("{IRIS_HEADER}r1,5.1,3.5,1.4,0.2\n\n\nr2,5.1,3.5,1.4,0.2\nr3,5.1,wide,1.4,0.2\n");
    put(dir.path(), "new.csv", &d);
    let args = [
        "score",
        "--model",
        "iris.copse",
        "--data",
        "new.csv",
        "--out",
        "s.csv",
    ];
    refused(
        dir.path(),
        &args,
        None,
        2,
        &["new.csv line 6, column 'sepal_width'"],
    );
    let (so, se) = expect_code(
        &score_in(dir.path(), &["--keep", "id", "--blank-unscorable"]),
        0,
    );
    assert_eq!(so.lines().count(), 4, "{so}");
    assert!(se.contains("(lines 6)"), "{se}");
    assert!(
        se.contains("copse: note: 2 blank lines of new.csv were passed over")
            && se.contains("lines 3, 4"),
        "{se}"
    );

    let mut d = String::from("a,b,y\n");
    for i in 0..30 {
        if i == 5 {
            d.push_str("\n\n");
        }
        d.push_str(&format!(
            "{i},{},{}\n",
            i % 3,
            if i < 15 { "p" } else { "q" }
        ));
    }
    put(dir.path(), "t.csv", &d);
    let mut args = train_args("t.csv", "y");
    args.extend(["--oob-out", "o.csv"]);
    let (_, se) = expect_code(&copse_in(dir.path(), &args, None), 0);
    assert!(
        se.contains("2 blank lines of t.csv were passed over, as they hold no row (lines 7, 8)"),
        "{se}"
    );
    let oob = std::fs::read_to_string(dir.path().join("o.csv")).expect("oob file");
    let lines: Vec<u64> = oob
        .lines()
        .skip(1)
        .map(|l| {
            l.split(',')
                .next()
                .and_then(|v| v.parse().ok())
                .expect("line")
        })
        .collect();
    let want: Vec<u64> = (2..7).chain(9..34).collect();
    assert_eq!(lines, want);
    assert!(!files(dir.path()).iter().any(|f| f.ends_with(".partial")));
}
