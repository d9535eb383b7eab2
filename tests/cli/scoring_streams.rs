//! `copse score` as a stream: columns missing or categories unseen, standard input and
//! output, rows in blocks kept in order, a closed pipe, and no partial output after an
//! error or on a full device.
//!
//! Data: `tests/data/iris.csv` (Fisher 1936, via the vega_datasets package) and
//! `tests/data/penguins.csv` (Gorman, Williams & Fraser 2014, palmerpenguins package);
//! provenance in `tests/data/README.md`.
use super::{
    assert_full_device_intact, copse_in, expect_code, full_device, penguins, read_csv, repo, text,
    tmp, train_iris,
};
use std::process::{Command, Stdio};

#[test]
fn a_column_missing_at_scoring_is_named() {
    let dir = tmp();
    expect_code(&train_iris(dir.path(), &[]), 0);
    std::fs::write(
        dir.path().join("new.csv"),
        "petal_width,sepal_length,sepal_width,extra\n0.2,5.1,3.5,x\n",
    )
    .expect("write");
    let (_, se) = expect_code(
        &copse_in(
            dir.path(),
            &["score", "--model", "iris.copse", "--data", "new.csv"],
            None,
        ),
        2,
    );
    assert!(
        se.contains("'petal_length'") && se.contains("new.csv"),
        "{se}"
    );
    // Columns in another order plus an extra one are fine.
    std::fs::write(
        dir.path().join("new.csv"),
        "petal_width,extra,petal_length,sepal_length,sepal_width\n0.2,x,1.4,5.1,3.5\n",
    )
    .expect("write");
    let (so, _) = expect_code(
        &copse_in(
            dir.path(),
            &["score", "--model", "iris.copse", "--data", "new.csv"],
            None,
        ),
        0,
    );
    assert!(
        so.lines()
            .nth(1)
            .expect("a scored row")
            .starts_with("setosa,"),
        "{so}"
    );
}

#[test]
fn unseen_categories_are_missing_and_counted() {
    let dir = tmp();
    let p = penguins();
    expect_code(
        &copse_in(
            dir.path(),
            &[
                "train",
                "--data",
                &p,
                "--target",
                "species",
                "--out",
                "peng.copse",
                "--trees",
                "50",
            ],
            None,
        ),
        0,
    );
    std::fs::write(
        dir.path().join("new.csv"),
        "island,bill_length_mm,bill_depth_mm,flipper_length_mm,body_mass_g,sex,year\n\
         Atlantis,39.1,18.7,181,3750,male,2007\n\
         Atlantis,46.5,17.9,192,3500,unknown,2007\n\
         Biscoe,47.6,14.5,215,5400,male,2009\n",
    )
    .expect("write");
    let (so, se) = expect_code(
        &copse_in(
            dir.path(),
            &["score", "--model", "peng.copse", "--data", "new.csv"],
            None,
        ),
        0,
    );
    assert_eq!(so.lines().count(), 4);
    assert!(se.contains("3 cells of new.csv"), "{se}");
    assert!(
        se.contains("2 in 'island'") && se.contains("'Atlantis'"),
        "{se}"
    );
    assert!(se.contains("1 in 'sex'"), "{se}");
}

/// Training from standard input and scoring from standard input to standard output
/// give the same results as the file-based commands.
#[test]
fn standard_input_and_output_piping() {
    let dir = tmp();
    let iris_path = repo("tests/data/iris.csv");
    let iris = std::fs::read(&iris_path).expect("iris");
    let args = [
        "train",
        "--data",
        "-",
        "--target",
        "species",
        "--out",
        "piped.copse",
        "--trees",
        "150",
        "--seed",
        "3",
    ];
    expect_code(&copse_in(dir.path(), &args, Some(&iris)), 0);
    expect_code(&train_iris(dir.path(), &[]), 0);
    let a = std::fs::read(dir.path().join("piped.copse")).expect("model");
    let b = std::fs::read(dir.path().join("iris.copse")).expect("model");
    // The record of the source name differs ("standard input"), the trees do not:
    // compare the scores.
    let (from_pipe, _) = expect_code(
        &copse_in(
            dir.path(),
            &["score", "--model", "piped.copse", "--data", "-"],
            Some(&iris),
        ),
        0,
    );
    let (from_file, _) = expect_code(
        &copse_in(
            dir.path(),
            &[
                "score",
                "--model",
                "iris.copse",
                "--data",
                iris_path.to_str().expect("path"),
            ],
            None,
        ),
        0,
    );
    assert_eq!(from_pipe, from_file);
    assert!(a.len().abs_diff(b.len()) < 100);
}

/// Scoring writes one row per input row, in order, streaming in blocks; a closed
/// pipe (`| head`) ends quietly with exit 0.
#[test]
fn scoring_many_rows_in_blocks_keeps_order_and_stops_quietly_on_a_closed_pipe() {
    let dir = tmp();
    expect_code(
        &copse_in(
            dir.path(),
            &[
                "make-demo-data",
                "--out",
                "big",
                "--rows",
                "300",
                "--score-rows",
                "30000",
            ],
            None,
        ),
        0,
    );
    let train = [
        "train",
        "--data",
        "big/water_mains.csv",
        "--target",
        "failed_within_year",
        "--ignore",
        "segment_id",
        "--out",
        "w.copse",
        "--trees",
        "20",
    ];
    expect_code(&copse_in(dir.path(), &train, None), 0);
    let score = [
        "score",
        "--model",
        "w.copse",
        "--data",
        "big/water_mains_to_score.csv",
        "--keep",
        "segment_id",
        "--out",
        "scored.csv",
        "--block-rows",
        "1000",
    ];
    expect_code(&copse_in(dir.path(), &score, None), 0);
    let scored = read_csv(&std::fs::read(dir.path().join("scored.csv")).expect("scored"));
    assert_eq!(scored.len(), 30_001);
    assert_eq!(
        scored[0],
        vec!["segment_id", "prediction", "prob_no", "prob_yes"]
    );
    for (k, row) in scored.iter().enumerate().skip(1) {
        assert_eq!(row[0], format!("TC-{:06}", 300 + k), "row {k} out of order");
    }

    // Read one line of standard output, then close it.
    let mut child = Command::new(env!("CARGO_BIN_EXE_copse"))
        .args([
            "score",
            "--model",
            "w.copse",
            "--data",
            "big/water_mains_to_score.csv",
        ])
        .current_dir(dir.path())
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .expect("copse starts");
    {
        use std::io::BufRead;
        let stdout = child.stdout.take().expect("piped");
        let mut first = String::new();
        std::io::BufReader::new(stdout)
            .read_line(&mut first)
            .expect("a header line");
        assert!(first.starts_with("prediction"));
    }
    let out = child.wait_with_output().expect("copse ends");
    let se = text(&out.stderr);
    assert_eq!(out.status.code(), Some(0), "{se}");
    assert!(!se.contains("error"), "{se}");
}

/// An error part-way through scoring leaves no output file and no temporary file.
#[test]
fn no_partial_output_after_an_error() {
    let dir = tmp();
    expect_code(&train_iris(dir.path(), &[]), 0);
    let mut data = String::from("sepal_length,sepal_width,petal_length,petal_width\n");
    for _ in 0..3000 {
        data.push_str("5.1,3.5,1.4,0.2\n");
    }
    data.push_str("5.1,3.5,oops,0.2\n");
    std::fs::write(dir.path().join("bad.csv"), data).expect("write");
    let (_, se) = expect_code(
        &copse_in(
            dir.path(),
            &[
                "score",
                "--model",
                "iris.copse",
                "--data",
                "bad.csv",
                "--out",
                "out.csv",
                "--block-rows",
                "500",
            ],
            None,
        ),
        2,
    );
    assert!(
        se.contains("bad.csv line 3002, column 'petal_length'"),
        "{se}"
    );
    let mut names: Vec<String> = std::fs::read_dir(dir.path())
        .expect("list")
        .map(|e| e.expect("entry").file_name().to_string_lossy().into_owned())
        .collect();
    names.sort();
    assert_eq!(names, vec!["bad.csv", "iris.copse"]);
}

#[test]
fn writing_to_a_full_device_fails_cleanly() {
    if full_device("writing_to_a_full_device_fails_cleanly").is_none() {
        return;
    }
    let dir = tmp();
    expect_code(&train_iris(dir.path(), &[]), 0);
    let iris = repo("tests/data/iris.csv");
    let (_, se) = expect_code(
        &copse_in(
            dir.path(),
            &[
                "score",
                "--model",
                "iris.copse",
                "--data",
                iris.to_str().expect("path"),
                "--out",
                "/dev/full",
            ],
            None,
        ),
        1,
    );
    assert!(se.contains("could not write /dev/full"), "{se}");
    assert_full_device_intact();
}
