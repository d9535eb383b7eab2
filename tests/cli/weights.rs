//! `--weights COL` and `--group COL`: case weights and row groups from the command
//! line, their records in the reports (text and JSON) and the model, the figures they
//! change, and the bad input they meet (a line, a column and what to do).
//!
//! Data: `tests/data/iris.csv` (Fisher 1936; provenance in `tests/data/README.md`) and
//! the invented demo register `demo-data/water_mains.csv`.
use super::bad_input::{put, refused, train_args};
use super::{copse_in, expect_code, json_of, repo, tmp};
use std::path::Path;

/// Iris with a column `w` appended to every row: `weight(i)` for data row `i`.
fn iris_with_weights(dir: &Path, name: &str, weight: impl Fn(usize) -> String) {
    let text = std::fs::read_to_string(repo("tests/data/iris.csv")).expect("iris");
    let mut out = String::new();
    for (i, line) in text.lines().enumerate() {
        let w = if i == 0 {
            "w".to_string()
        } else {
            weight(i - 1)
        };
        out.push_str(&format!("{line},{w}\n"));
    }
    put(dir, name, out);
}

fn train(dir: &Path, data: &str, out: &str, extra: &[&str]) -> (String, String) {
    let mut args = vec![
        "train", "--data", data, "--target", "species", "--out", out, "--trees", "60", "--seed",
        "4",
    ];
    args.extend_from_slice(extra);
    expect_code(&copse_in(dir, &args, None), 0)
}

#[test]
fn weights_all_one_make_the_model_of_no_weights() {
    // The engine check (tests/weights_checks.rs) compares model bytes; here the command
    // line: the same scores and out-of-bag figures, and only the card tells them apart.
    let dir = tmp();
    iris_with_weights(dir.path(), "ones.csv", |_| "1".into());
    let (a, _) = train(
        dir.path(),
        "ones.csv",
        "w.copse",
        &["--weights", "w", "--json"],
    );
    let (b, _) = train(
        dir.path(),
        "ones.csv",
        "p.copse",
        &["--ignore", "w", "--json"],
    );
    let (a, b) = (json_of(&a), json_of(&b));
    assert_eq!(a["oob"]["error"], b["oob"]["error"]);
    assert_eq!(a["oob"]["brier"], b["oob"]["brier"]);
    assert_eq!(a["data"]["case_weights"]["column"], "w");
    assert_eq!(a["data"]["case_weights"]["total"], 150.0);
    assert!(b["data"].get("case_weights").is_none());
    let score = |m: &str| {
        let out = copse_in(
            dir.path(),
            &["score", "--model", m, "--data", "ones.csv"],
            None,
        );
        expect_code(&out, 0).0
    };
    assert_eq!(score("w.copse"), score("p.copse"));
}

#[test]
fn weights_change_the_figures_and_are_recorded() {
    let dir = tmp();
    // Weight 0 on every fifth row, 3 on versicolor, else 1.
    let text = std::fs::read_to_string(repo("tests/data/iris.csv")).expect("iris");
    let species: Vec<String> = text
        .lines()
        .skip(1)
        .map(|l| l.rsplit(',').next().unwrap_or("").to_string())
        .collect();
    iris_with_weights(dir.path(), "w.csv", |i| {
        if i % 5 == 0 {
            "0".into()
        } else if species[i] == "versicolor" {
            "3".into()
        } else {
            "1".into()
        }
    });
    let (so, se) = train(
        dir.path(),
        "w.csv",
        "m.copse",
        &["--weights", "w", "--json"],
    );
    assert!(se.contains("30 of 150 rows have case weight 0"), "{se}");
    let j = json_of(&so);
    let oob = &j["oob"];
    let total = oob["weight_total"].as_f64().expect("weight total");
    // 120 rows of positive weight: 40 versicolor (weight 3) and 80 others. A row of
    // weight 3 is left out of a tree with chance e^-3 = 0.05 only, so a few are never
    // out of bag in 60 trees and the out-of-bag figures weigh a little less.
    assert_eq!(j["data"]["case_weights"]["total"], 40.0 * 3.0 + 80.0);
    assert!(total <= 200.0 && total > 180.0, "{total}");
    let table: f64 = oob["weighted_confusion"]
        .as_array()
        .expect("table")
        .iter()
        .flat_map(|r| r.as_array().expect("row").iter())
        .map(|v| v.as_f64().expect("number"))
        .sum();
    assert!((table - total).abs() < 1e-9);
    assert_eq!(j["data"]["case_weights"]["zero_rows"], 30);
    assert!(j["rows_counted_once"].is_string());
    // The text report and inspect name the column; evaluate weighs by it when the
    // file holds it, and says so when it does not.
    let out = copse_in(dir.path(), &["inspect", "--model", "m.copse"], None);
    let (text_out, _) = expect_code(&out, 0);
    assert!(
        text_out.contains("case weights") && text_out.contains("'w'"),
        "{text_out}"
    );
    let out = copse_in(
        dir.path(),
        &[
            "evaluate", "--model", "m.copse", "--data", "w.csv", "--json",
        ],
        None,
    );
    let (so, _) = expect_code(&out, 0);
    // Every row of the file with its weight: the same total as in training.
    assert_eq!(json_of(&so)["evaluation"]["weight_total"], 200.0, "{so}");
    let iris = repo("tests/data/iris.csv");
    let out = copse_in(
        dir.path(),
        &[
            "evaluate",
            "--model",
            "m.copse",
            "--data",
            iris.to_str().expect("path"),
            "--json",
        ],
        None,
    );
    let (so, se) = expect_code(&out, 0);
    assert!(
        json_of(&so)["evaluation"].get("weight_total").is_none(),
        "{so}"
    );
    assert!(se.contains("lacks") && se.contains("'w'"), "{se}");
}

/// The demo register with every row written three times, as three inspections of
/// one segment.
fn visits(dir: &Path) {
    let text = std::fs::read_to_string(repo("demo-data/water_mains.csv")).expect("demo");
    let mut out = String::new();
    for (i, line) in text.lines().enumerate() {
        let times = if i == 0 { 1 } else { 3 };
        for _ in 0..times {
            out.push_str(line);
            out.push('\n');
        }
    }
    put(dir, "visits.csv", out);
}

#[test]
fn groups_keep_the_out_of_bag_check_honest_and_are_reported() {
    // 2000 segments, each row three times. Drawing rows, a row's copies sit in the
    // trees that judge it and the out-of-bag error falls near the training error;
    // drawing whole segments, it stays near the 10.9% of always answering 'no' or
    // below (the demo's rare class is hard to call). The engine check
    // (tests/weights_checks.rs) compares both with a fresh test set.
    let dir = tmp();
    visits(dir.path());
    let base = [
        "train",
        "--data",
        "visits.csv",
        "--target",
        "failed_within_year",
        "--trees",
        "60",
        "--json",
    ];
    let mut plain = base.to_vec();
    plain.extend(["--ignore", "segment_id", "--out", "p.copse"]);
    let (so, se) = expect_code(&copse_in(dir.path(), &plain, None), 0);
    assert!(
        se.contains("6000 of the 6000 rows repeat another row's inputs") && se.contains("--group"),
        "{se}"
    );
    let e_plain = json_of(&so)["oob"]["error"].as_f64().expect("error");
    let mut grouped = base.to_vec();
    grouped.extend(["--group", "segment_id", "--out", "g.copse"]);
    let (so, se) = expect_code(&copse_in(dir.path(), &grouped, None), 0);
    assert!(!se.contains("repeat another row's inputs"), "{se}");
    let j = json_of(&so);
    let e_grouped = j["oob"]["error"].as_f64().expect("error");
    // With 2000 independent segments the grouped error's standard error is about
    // sqrt(0.11 * 0.89 / 2000) = 0.007; the plain error is near 0.
    assert!(e_plain < 0.03, "{e_plain}");
    assert!(e_grouped > 0.08, "{e_grouped}");
    let g = &j["data"]["row_groups"];
    assert_eq!(g["column"], "segment_id");
    assert_eq!(
        (g["groups"].as_u64(), g["smallest"].as_u64()),
        (Some(2000), Some(3))
    );
    assert_eq!(g["largest"], 3);
    assert!(j["rows_taken_as_independent"].is_string());
    let out = copse_in(dir.path(), &["inspect", "--model", "g.copse"], None);
    let (text_out, _) = expect_code(&out, 0);
    assert!(
        text_out.contains("row groups") && text_out.contains("2000 groups of 3 rows each"),
        "{text_out}"
    );
    // The stability report takes the groups too (whole groups in each fold).
    let out = copse_in(
        dir.path(),
        &[
            "stability",
            "--data",
            "visits.csv",
            "--target",
            "failed_within_year",
            "--group",
            "segment_id",
            "--trees",
            "10",
            "--seeds",
            "2",
            "--json",
        ],
        None,
    );
    expect_code(&out, 0);
}

#[test]
fn bad_weights_and_groups_name_the_line_and_column() {
    let dir = tmp();
    let d = dir.path();
    put(d, "neg.csv", "a,w,y\n1,1,p\n2,-2,q\n3,1,p\n4,1,q\n");
    let mut args = train_args("neg.csv", "y");
    args.extend(["--weights", "w"]);
    refused(
        d,
        &args,
        None,
        2,
        &["neg.csv line 3, column 'w'", "'-2' is negative"],
    );

    put(d, "gap.csv", "a,w,y\n1,1,p\n2,1,q\n3,,p\n4,1,q\n");
    let mut args = train_args("gap.csv", "y");
    args.extend(["--weights", "w"]);
    refused(
        d,
        &args,
        None,
        2,
        &["gap.csv line 4, column 'w'", "missing"],
    );

    put(d, "word.csv", "a,w,y\n1,1,p\n2,heavy,q\n3,1,p\n4,1,q\n");
    let mut args = train_args("word.csv", "y");
    args.extend(["--weights", "w"]);
    refused(
        d,
        &args,
        None,
        2,
        &["word.csv line 3, column 'w'", "'heavy' is not"],
    );

    // Missing group labels are refused, not guessed.
    put(
        d,
        "grp.csv",
        "a,g,y\n1,u1,p\n2,u1,q\n3,u2,p\n4,NA,q\n5,u3,p\n",
    );
    let mut args = train_args("grp.csv", "y");
    args.extend(["--group", "g"]);
    refused(
        d,
        &args,
        None,
        2,
        &["grp.csv line 5, column 'g'", "group label is missing"],
    );

    // Roles that contradict each other, and options that cannot go together.
    let mut args = train_args("neg.csv", "y");
    args.extend(["--weights", "y"]);
    refused(
        d,
        &args,
        None,
        2,
        &["both the target and the --weights column"],
    );
    let mut args = train_args("neg.csv", "y");
    args.extend(["--weights", "W"]);
    refused(d, &args, None, 2, &["did you mean 'w'"]);
    put(d, "ok.csv", "a,w,g,y\n1,1,u,p\n2,2,u,q\n3,1,v,p\n4,1,v,q\n");
    let mut args = train_args("ok.csv", "y");
    args.extend(["--weights", "w", "--keep-draws"]);
    refused(d, &args, None, 2, &["--keep-draws"]);
    let mut args = train_args("ok.csv", "y");
    args.extend(["--group", "g", "--balanced"]);
    refused(d, &args, None, 2, &["--balanced"]);
    let mut args = train_args("ok.csv", "y");
    args.extend(["--weights", "w", "--sampling", "subsample:0.5"]);
    refused(d, &args, None, 2, &["subsample"]);
    // All weights 0: nothing to learn from.
    put(d, "zero.csv", "a,w,y\n1,0,p\n2,0,q\n3,0,p\n4,0,q\n");
    let mut args = train_args("zero.csv", "y");
    args.extend(["--weights", "w"]);
    let out = copse_in(d, &args, None);
    let se = String::from_utf8_lossy(&out.stderr).into_owned();
    assert_ne!(out.status.code(), Some(0), "{se}");
    assert!(se.contains("weight 0"), "{se}");
}
