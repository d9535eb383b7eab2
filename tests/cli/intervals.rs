//! Outcome ranges through the real binary: `copse train --keep-leaf-rows` (the
//! out-of-bag check in the text and JSON reports and in `copse inspect`) and `copse
//! score --interval` (the range columns, equal to the library's, and the refusals).
//! The ranges' statistics are checked in `tests/interval_checks.rs`.
//!
//! Data: `tests/data/penguins.csv`, body mass in grams (Gorman, Williams & Fraser
//! 2014, PLoS ONE 9(3):e90081; provenance in `tests/data/README.md`), and
//! `tests/data/iris.csv` for a class target (Fisher 1936).
use super::{copse_in, expect_code, json_of, read_csv, repo, tmp};
use copse_data::{Roles, TrainingTable};
use copse_forest::Forest;

fn data(name: &str) -> String {
    repo(&format!("tests/data/{name}"))
        .to_str()
        .expect("utf-8 path")
        .to_string()
}

/// Trains `mass.copse` on the penguins' body mass, keeping the leaf rows.
fn train_mass(dir: &std::path::Path, extra: &[&str]) -> std::process::Output {
    let penguins = data("penguins.csv");
    let mut args = vec![
        "train",
        "--data",
        &penguins,
        "--target",
        "body_mass_g",
        "--out",
        "mass.copse",
        "--trees",
        "200",
        "--keep-leaf-rows",
    ];
    args.extend_from_slice(extra);
    copse_in(dir, &args, None)
}

#[test]
fn train_reports_the_out_of_bag_ranges_in_text_json_and_inspect() {
    let dir = tmp();
    let (text, _) = expect_code(&train_mass(dir.path(), &[]), 0);
    assert!(text.contains("leaf rows kept"), "{text}");
    let line = text
        .lines()
        .find(|l| l.trim_start().starts_with("90% ranges"))
        .unwrap_or_else(|| panic!("a line on the ranges: {text}"));
    assert!(line.contains("of 342 rows inside"), "{line}");
    let (json, _) = expect_code(&train_mass(dir.path(), &["--json"]), 0);
    let v = json_of(&json);
    assert_eq!(v["settings"]["keep_leaf_rows"], true);
    let r = &v["oob"]["outcome_range"];
    assert_eq!(r["coverage"], 0.9);
    assert_eq!(r["rows"], 342);
    // Penguin masses: the share inside is checked in tests/interval_checks.rs; here
    // only that it is a share and the width a plausible number of grams (the masses
    // run from 2,700 to 6,300 g).
    let share = r["share_inside"].as_f64().expect("a number");
    let width = r["mean_width"].as_f64().expect("a number");
    assert!(
        (0.0..=1.0).contains(&share) && (100.0..3600.0).contains(&width),
        "{r}"
    );
    let (inspect, _) = expect_code(
        &copse_in(
            dir.path(),
            &["inspect", "--model", "mass.copse", "--json"],
            None,
        ),
        0,
    );
    assert_eq!(json_of(&inspect)["oob"]["outcome_range"], *r);
    let (inspect, _) = expect_code(
        &copse_in(dir.path(), &["inspect", "--model", "mass.copse"], None),
        0,
    );
    assert!(inspect.contains("90% ranges"), "{inspect}");
    // Without the option the report has neither the line nor the key.
    let (json, _) = expect_code(
        &copse_in(
            dir.path(),
            &[
                "train",
                "--data",
                &data("penguins.csv"),
                "--target",
                "body_mass_g",
                "--out",
                "plain.copse",
                "--trees",
                "20",
                "--json",
            ],
            None,
        ),
        0,
    );
    let v = json_of(&json);
    assert!(v["oob"].get("outcome_range").is_none(), "{}", v["oob"]);
    assert_eq!(v["settings"]["keep_leaf_rows"], false);
}

#[test]
fn score_adds_the_range_columns_the_library_gives() {
    let dir = tmp();
    expect_code(&train_mass(dir.path(), &[]), 0);
    let penguins = data("penguins.csv");
    let (so, se) = expect_code(
        &copse_in(
            dir.path(),
            &[
                "score",
                "--model",
                "mass.copse",
                "--data",
                &penguins,
                "--interval",
                "0.8",
                "--keep",
                "species",
            ],
            None,
        ),
        0,
    );
    assert!(se.contains("on average over rows"), "{se}");
    let rows = read_csv(so.as_bytes());
    assert_eq!(rows[0], ["species", "prediction", "low_80", "high_80"]);
    assert_eq!(rows.len(), 345, "a row per bird and a header");
    // The library on the same rows, read as the command reads them.
    let table = TrainingTable::read_csv(&penguins, &Roles::target("body_mass_g")).expect("reads");
    let forest = Forest::load(dir.path().join("mass.copse")).expect("loads");
    let lib = forest
        .outcome_intervals(table.x.view(), 0.8)
        .expect("ranges");
    // Every bird is scored, in file order (the two without a mass too); the table
    // holds the 342 with a mass, each with its file line (the header is line 1).
    assert_eq!(lib.nrows(), 342);
    for (i, &line) in table.lines.iter().enumerate() {
        let row = &rows[line as usize - 1];
        let (lo, hi): (f64, f64) = (row[2].parse().expect("low"), row[3].parse().expect("high"));
        assert!(lo <= hi, "row {i}: {lo}..{hi}");
    }
}

#[test]
fn score_refuses_ranges_it_cannot_give() {
    let dir = tmp();
    let penguins = data("penguins.csv");
    let iris = data("iris.csv");
    // A model without leaf rows: say how to retrain.
    expect_code(
        &copse_in(
            dir.path(),
            &[
                "train",
                "--data",
                &penguins,
                "--target",
                "body_mass_g",
                "--out",
                "plain.copse",
                "--trees",
                "5",
            ],
            None,
        ),
        0,
    );
    let (so, se) = expect_code(
        &copse_in(
            dir.path(),
            &[
                "score",
                "--model",
                "plain.copse",
                "--data",
                &penguins,
                "--interval",
                "0.9",
            ],
            None,
        ),
        2,
    );
    assert!(so.is_empty());
    assert!(
        se.contains("--keep-leaf-rows") && se.contains("retrain"),
        "{se}"
    );
    // A class target: refused at training and at scoring.
    let (_, se) = expect_code(
        &copse_in(
            dir.path(),
            &[
                "train",
                "--data",
                &iris,
                "--target",
                "species",
                "--out",
                "iris.copse",
                "--keep-leaf-rows",
            ],
            None,
        ),
        2,
    );
    assert!(
        se.contains("numeric target") && se.contains("classes"),
        "{se}"
    );
    assert!(!dir.path().join("iris.copse").exists());
    expect_code(
        &copse_in(
            dir.path(),
            &[
                "train",
                "--data",
                &iris,
                "--target",
                "species",
                "--out",
                "iris.copse",
                "--trees",
                "5",
            ],
            None,
        ),
        0,
    );
    let (_, se) = expect_code(
        &copse_in(
            dir.path(),
            &[
                "score",
                "--model",
                "iris.copse",
                "--data",
                &iris,
                "--interval",
                "0.9",
            ],
            None,
        ),
        2,
    );
    assert!(se.contains("predicts classes"), "{se}");
    // A level outside (0, 1): a usage error before anything is read.
    for bad in ["0", "1", "90", "-0.5", "nine"] {
        let (_, se) = expect_code(
            &copse_in(
                dir.path(),
                &[
                    "score",
                    "--model",
                    "nowhere.copse",
                    "--data",
                    &penguins,
                    &format!("--interval={bad}"),
                ],
                None,
            ),
            2,
        );
        assert!(se.contains("strictly between 0 and 1"), "{bad}: {se}");
    }
}
