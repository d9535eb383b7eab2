//! The extras through the real binary: standard errors when scoring
//! (`--keep-draws`, `--uncertainty`), importance p-values (`--shuffled-target-runs`, the
//! mirrored-null column) and `copse stability`. The statistics themselves are checked
//! in `tests/extras_checks.rs`; these tests check the outputs, their shapes and the
//! refusals.
//!
//! Data: `tests/data/iris.csv` (Fisher 1936; provenance in `tests/data/README.md`).
use super::{copse_in, expect_code, json_of, read_csv, repo, tmp, train_iris};
use copse_data::{Roles, TrainingTable};
use copse_forest::{response_permutation_test, Forest, ForestSettings, TrainOptions};

fn iris() -> String {
    repo("tests/data/iris.csv")
        .to_str()
        .expect("utf-8 path")
        .to_string()
}

/// Iris as a regression problem: predict petal width from the other measurements.
fn train_petal_width(dir: &std::path::Path, extra: &[&str]) -> std::process::Output {
    let data = iris();
    let mut args = vec![
        "train",
        "--data",
        &data,
        "--target",
        "petal_width",
        "--ignore",
        "species",
        "--out",
        "width.copse",
        "--trees",
        "300",
        "--min-leaf",
        "5",
        "--seed",
        "2",
    ];
    args.extend_from_slice(extra);
    copse_in(dir, &args, None)
}

/// Scores iris (or `data`) with `model` and `--uncertainty`; returns the CSV rows.
fn score_with_errors(dir: &std::path::Path, model: &str, data: &str) -> Vec<Vec<String>> {
    let (so, se) = expect_code(
        &copse_in(
            dir,
            &["score", "--model", model, "--data", data, "--uncertainty"],
            None,
        ),
        0,
    );
    assert!(se.contains("infinitesimal jackknife"), "{se}");
    read_csv(so.as_bytes())
}

/// The standard-error columns the command printed (from column `first` on, one per
/// output) against the library's own computation on the same model file and rows
/// (copse-data reads the rows the way the command does, copse-forest computes): an
/// empty cell exactly where the library has no estimate, else the library's value to
/// the 6 decimals the command prints. Returns the number of known standard errors.
fn assert_errors_match_the_library(
    dir: &std::path::Path,
    model: &str,
    table: &TrainingTable,
    rows: &[Vec<String>],
    first: usize,
) -> usize {
    let forest = Forest::load(dir.join(model)).expect("the model loads");
    let u = forest
        .prediction_uncertainty(table.x.view())
        .expect("standard errors");
    let lib = u.std_errors();
    assert_eq!(
        rows.len(),
        lib.nrows() + 1,
        "a row per input row and a header"
    );
    let mut known = 0;
    for (i, row) in rows[1..].iter().enumerate() {
        for (c, want) in lib.row(i).iter().enumerate() {
            let cell = &row[first + c];
            match want {
                None => assert!(cell.is_empty(), "row {i} output {c}: {cell} for unknown"),
                Some(w) => {
                    let got: f64 = cell.parse().expect("a standard error");
                    // Within half a unit of the last printed decimal.
                    let decimals = cell.split('.').nth(1).map_or(0, str::len) as i32;
                    let tolerance = 0.5 * 10f64.powi(-decimals) + 1e-12;
                    assert!(
                        (got - w).abs() <= tolerance,
                        "row {i} output {c}: {got} vs {w}"
                    );
                    known += 1;
                }
            }
        }
    }
    known
}

/// `score --uncertainty` adds one standard-error column per output: one per class
/// (three for iris), `se_prediction` for regression. What it prints is what the
/// library computes (see `assert_errors_match_the_library`); with 300 trees for 150
/// rows most regression errors are known.
#[test]
fn scoring_with_standard_errors() {
    let dir = tmp();
    let data = iris();
    expect_code(&train_iris(dir.path(), &["--keep-draws"]), 0);
    let rows = score_with_errors(dir.path(), "iris.copse", &data);
    assert_eq!(
        rows[0],
        [
            "prediction",
            "prob_setosa",
            "prob_versicolor",
            "prob_virginica",
            "se_setosa",
            "se_versicolor",
            "se_virginica"
        ]
    );
    let table = TrainingTable::read_csv(&data, &Roles::target("species")).expect("iris reads");
    assert_errors_match_the_library(dir.path(), "iris.copse", &table, &rows, 4);

    let (report, notes) = expect_code(&train_petal_width(dir.path(), &["--keep-draws"]), 0);
    assert!(report.contains("row draws kept"), "{report}");
    assert!(notes.is_empty() || !notes.contains("many trees"), "{notes}");
    let rows = score_with_errors(dir.path(), "width.copse", &data);
    assert_eq!(rows[0], ["prediction", "se_prediction"]);
    let roles = Roles {
        ignore: vec!["species".to_string()],
        ..Roles::target("petal_width")
    };
    let table = TrainingTable::read_csv(&data, &roles).expect("iris reads");
    let known = assert_errors_match_the_library(dir.path(), "width.copse", &table, &rows, 1);
    assert!(known > 100, "{known} of 150 known");
}

/// Two classes: p(second) = 1 - p(first) in every tree, so both probabilities have the
/// same deviations up to sign and the same standard error (computed from the formula,
/// Wager, Hastie & Efron 2014): the two columns are equal, cell for cell. Iris
/// restricted to versicolor and virginica (Fisher 1936), the two species that overlap,
/// so the standard errors are not all zero.
#[test]
fn two_classes_get_equal_standard_errors() {
    let dir = tmp();
    let iris = std::fs::read_to_string(iris()).expect("iris");
    let two: String = iris
        .lines()
        .filter(|l| !l.ends_with("setosa"))
        .map(|l| format!("{l}\n"))
        .collect();
    std::fs::write(dir.path().join("two.csv"), two).expect("write");
    let args = [
        "train",
        "--data",
        "two.csv",
        "--target",
        "species",
        "--out",
        "two.copse",
        "--trees",
        "300",
        "--seed",
        "4",
        "--keep-draws",
    ];
    expect_code(&copse_in(dir.path(), &args, None), 0);
    let rows = score_with_errors(dir.path(), "two.copse", "two.csv");
    assert_eq!(
        rows[0],
        [
            "prediction",
            "prob_versicolor",
            "prob_virginica",
            "se_versicolor",
            "se_virginica"
        ]
    );
    assert_eq!(rows.len(), 101);
    for (i, r) in rows[1..].iter().enumerate() {
        assert_eq!(r[3], r[4], "row {i}");
    }
    let positive = rows[1..]
        .iter()
        .filter(|r| r[3].parse::<f64>().is_ok_and(|v| v > 0.0))
        .count();
    assert!(positive > 10, "{positive} positive standard errors of 100");
}

#[test]
fn standard_errors_need_the_draws_and_plain_bootstrap() {
    let dir = tmp();
    let data = iris();
    expect_code(&train_iris(dir.path(), &[]), 0);
    let (so, se) = expect_code(
        &copse_in(
            dir.path(),
            &[
                "score",
                "--model",
                "iris.copse",
                "--data",
                &data,
                "--uncertainty",
            ],
            None,
        ),
        2,
    );
    assert!(so.is_empty());
    assert!(
        se.contains("iris.copse") && se.contains("--keep-draws"),
        "{se}"
    );
    for extra in [["--sampling", "subsample:0.5"], ["--sampling", "none"]] {
        let mut args = vec!["--keep-draws"];
        args.extend_from_slice(&extra);
        let (_, se) = expect_code(&train_iris(dir.path(), &args), 2);
        assert!(
            se.contains("--keep-draws") && se.contains("bootstrap"),
            "{se}"
        );
    }
    let (_, se) = expect_code(
        &train_iris(
            dir.path(),
            &["--shuffled-target-runs", "5", "--sampling", "none"],
        ),
        2,
    );
    assert!(se.contains("--shuffled-target-runs"), "{se}");
    // With fewer trees than twice the rows (150 for 150), training says standard errors
    // will often be unknown.
    let (_, notes) = expect_code(&train_iris(dir.path(), &["--keep-draws"]), 0);
    assert!(notes.contains("many trees"), "{notes}");
}

/// `--shuffled-target-runs`: a p-value per input from forests on a shuffled target, in
/// the report, the JSON and the chart. Iris (Fisher 1936): the petal measurements
/// separate the species almost perfectly (fact of the trade), so with 19 permutations
/// they get the smallest possible p-value, 1/20. Every p-value is the library's
/// (`response_permutation_test` on the same rows, settings and seed; Altmann et al.
/// 2010), which with 19 permutations is (1 + k) / 20 for a count k of 0 to 19.
#[test]
fn importance_p_values_from_a_shuffled_target() {
    let dir = tmp();
    let (so, _) = expect_code(
        &train_iris(dir.path(), &["--shuffled-target-runs", "19", "--json"]),
        0,
    );
    let j = json_of(&so);
    let tests = j["importance_tests"].as_array().expect("tests");
    assert!(tests
        .iter()
        .any(|t| t["test"] == "shuffled_target" && t["null_size"] == 19));
    // The library's p-values for the same file, settings (150 trees, seed 3, as
    // `train_iris`) and permutation seed (the training seed).
    let table = TrainingTable::read_csv(iris(), &Roles::target("species")).expect("iris reads");
    let settings = ForestSettings {
        trees: 150,
        seed: 3,
        ..ForestSettings::default()
    };
    let trained = table
        .train(&settings, &TrainOptions::default())
        .expect("trains");
    let lib = response_permutation_test(
        table.x.view(),
        &table.features,
        &table.outcome,
        &settings,
        trained.forest.oob_importance().expect("importance"),
        19,
        3,
        &|_, _| {},
    )
    .expect("test runs");
    let entries = j["importance"].as_array().expect("list");
    assert_eq!(entries.len(), 4);
    for e in entries {
        let p = e["p_shuffle"].as_f64().expect("a p-value");
        let name = e["feature"].as_str().expect("a name");
        let k = table
            .features
            .iter()
            .position(|f| f.name == name)
            .expect("an input of the file");
        assert_eq!(p, lib.error.p_values[k], "{e}");
        let count = p * 20.0 - 1.0;
        assert!(
            (count - count.round()).abs() < 1e-9 && (0.0..=19.0).contains(&count),
            "{e}"
        );
        if e["feature"] == "petal_length" || e["feature"] == "petal_width" {
            assert!((p - 0.05).abs() < 1e-12, "{e}");
        }
        assert!(e.get("p_mirror").is_some());
    }
    let (report, _) = expect_code(
        &train_iris(
            dir.path(),
            &["--shuffled-target-runs", "19", "--plots", "plots"],
        ),
        0,
    );
    assert!(
        report.contains("p shuffle") && report.contains("Altmann"),
        "{report}"
    );
    let svg = std::fs::read_to_string(dir.path().join("plots/importance.svg")).expect("svg");
    assert!(
        svg.contains("petal_length (p = 0.050)"),
        "p-values beside the names"
    );
}

/// `copse importance` shows the mirrored-null test in its JSON (for iris the null
/// sample is small or empty, and the report says why it shows no column).
#[test]
fn held_out_importance_lists_its_test() {
    let dir = tmp();
    let data = iris();
    expect_code(&train_iris(dir.path(), &[]), 0);
    let args = [
        "importance",
        "--model",
        "iris.copse",
        "--data",
        &data,
        "--repeats",
        "3",
    ];
    let (so, _) = expect_code(&copse_in(dir.path(), &args, None), 0);
    assert!(so.contains("No p mirror ("), "{so}");
    let mut json_args = args.to_vec();
    json_args.push("--json");
    let (so, _) = expect_code(&copse_in(dir.path(), &json_args, None), 0);
    let j = json_of(&so);
    assert_eq!(j["importance_tests"][0]["test"], "mirrored_null");
    assert!(j["oob_importance_tests"].is_array());
    for e in j["importance"].as_array().expect("list") {
        assert!(e.get("p_mirror").is_some(), "{e}");
    }
}

/// `copse stability` on iris: the table, the JSON and the chart. Facts of the trade
/// (Breiman 1996, "Bagging predictors"): one tree's answers move more between seeds
/// than a forest's. Iris errors are small for every model (a few percent; common
/// practice), so the check is only that they are below 15%.
#[test]
fn stability_report_table_json_and_chart() {
    let dir = tmp();
    let data = iris();
    let base = [
        "stability",
        "--data",
        &data,
        "--target",
        "species",
        "--seeds",
        "3",
        "--trees",
        "60",
    ];
    let mut args = base.to_vec();
    args.extend_from_slice(&["--plot", "stability.svg"]);
    let (so, _) = expect_code(&copse_in(dir.path(), &args, None), 0);
    for head in [
        "copse stability report",
        "HOW MUCH EACH MODEL MOVES",
        "one tree",
        "bagged trees",
        "random forest",
        "does not replace",
    ] {
        assert!(so.contains(head), "{head}\n{so}");
    }
    let svg = std::fs::read_to_string(dir.path().join("stability.svg")).expect("svg");
    assert!(svg.starts_with("<svg") && svg.contains("random forest"));

    let mut json_args = base.to_vec();
    json_args.push("--json");
    let (so, _) = expect_code(&copse_in(dir.path(), &json_args, None), 0);
    let j = json_of(&so);
    assert_eq!(j["command"], "stability");
    let models = j["models"].as_array().expect("models");
    assert_eq!(models.len(), 3);
    assert_eq!(models[0]["model"], "one_tree");
    for m in models {
        assert_eq!(m["errors"].as_array().map(Vec::len), Some(3));
        assert!(m["error_mean"].as_f64().expect("error") < 0.15, "{m}");
        assert_eq!(m["importance_by_seed"][0].as_array().map(Vec::len), Some(4));
    }
    let change = |i: usize| models[i]["answer_change"].as_f64().expect("change");
    assert!(change(0) > change(2), "{} {}", change(0), change(2));

    // Bad settings are usage errors before any work.
    let mut bad = base.to_vec();
    bad[6] = "1";
    expect_code(&copse_in(dir.path(), &bad, None), 2);
    let mut nowhere = base.to_vec();
    nowhere.extend_from_slice(&["--plot", "no/such/folder/s.svg"]);
    let (so, se) = expect_code(&copse_in(dir.path(), &nowhere, None), 2);
    assert!(so.is_empty() && se.contains("no/such/folder"), "{se}");
}
