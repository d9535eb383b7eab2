//! Round trips of train, score and evaluate on open data sets: classes, categories
//! and missing cells, regression, and the counts of missing cells the report gives.
//!
//! Data: `tests/data/iris.csv` (Fisher 1936, via the vega_datasets package) and
//! `tests/data/penguins.csv` (Gorman, Williams & Fraser 2014, palmerpenguins package);
//! provenance in `tests/data/README.md`.
use super::{copse_in, expect_code, json_of, penguins, read_csv, repo, tmp, train_iris};

/// Iris (Fisher 1936): train, score, evaluate. A random forest's out-of-bag error on
/// iris is about 4-6% (common practice; value from memory, so the bound is loose):
/// with 150 rows the standard error of an error rate near 5% is
/// sqrt(0.05 * 0.95 / 150) = 0.018, and 0.10 sits more than 2.5 of them above 5%.
#[test]
fn iris_round_trip() {
    let dir = tmp();
    let (report, _) = expect_code(&train_iris(dir.path(), &["--json"]), 0);
    let j = json_of(&report);
    assert_eq!(j["task"], "classify");
    assert_eq!(j["trees"], 150);
    assert_eq!(
        j["classes"],
        serde_json::json!(["setosa", "versicolor", "virginica"])
    );
    let err = j["oob"]["error"].as_f64().expect("an out-of-bag error");
    assert!(err < 0.10, "out-of-bag error {err}");
    // Setosa is separable by petal length alone (iris facts in tests/data/README.md),
    // so no setosa row is misclassified out of bag.
    assert_eq!(j["oob"]["confusion"][0], serde_json::json!([50, 0, 0]));
    let top = j["importance"][0]["feature"]
        .as_str()
        .expect("a ranked input");
    assert!(top.starts_with("petal"), "top input {top}");

    let iris = repo("tests/data/iris.csv");
    let out = copse_in(
        dir.path(),
        &[
            "score",
            "--model",
            "iris.copse",
            "--data",
            iris.to_str().expect("path"),
            "--keep",
            "species",
        ],
        None,
    );
    let (scored, _) = expect_code(&out, 0);
    let rows = read_csv(scored.as_bytes());
    assert_eq!(
        rows[0],
        vec![
            "species",
            "prediction",
            "prob_setosa",
            "prob_versicolor",
            "prob_virginica"
        ]
    );
    let input = read_csv(&std::fs::read(&iris).expect("iris"));
    assert_eq!(
        rows.len(),
        input.len(),
        "one output row per input row plus the header"
    );
    for (o, i) in rows.iter().zip(&input).skip(1) {
        assert_eq!(o[0], i[4], "rows stay in input order");
        let p: f64 = o[2..]
            .iter()
            .map(|v| v.parse::<f64>().expect("a probability"))
            .sum();
        assert!((p - 1.0).abs() < 1e-5, "probabilities sum to 1, got {p}");
    }

    let out = copse_in(
        dir.path(),
        &[
            "evaluate",
            "--model",
            "iris.copse",
            "--data",
            iris.to_str().expect("path"),
            "--json",
        ],
        None,
    );
    let (ev, _) = expect_code(&out, 0);
    let ev = json_of(&ev);
    assert_eq!(ev["command"], "evaluate");
    assert_eq!(ev["evaluation"]["rows"], 150);
    // On its own training rows the forest is far better than out of bag: each row sits
    // in the bootstrap sample of about 63% of the trees (1 - 1/e; Breiman 1996,
    // "Out-of-bag estimation"), and a tree grown to pure leaves gives its own rows their
    // class (common practice; iris has no identical measurements with different
    // species), so the in-bag trees alone outvote the rest and the training-row error
    // is near 0. Margin: at most 2 of the 150 rows wrong (0.0134) and at most half the
    // out-of-bag error (about 5% on iris, see above).
    let e = ev["evaluation"]["error"].as_f64().expect("an error");
    println!("iris: training-row error {e}, out-of-bag {err}");
    assert!(
        e <= 2.0 / 150.0 + 1e-12 && e <= 0.5 * err,
        "training-row error {e} against out-of-bag {err}"
    );
    assert!(
        ev["evaluation"]["roc_auc"].is_null(),
        "AUC only for two classes"
    );
}

/// Penguins (Gorman, Williams & Fraser 2014): categorical inputs and `NA` cells. The
/// three species are nearly separable by bill and flipper measurements; published
/// analyses of the data get accuracies around 97-99% (memory; loose bound 0.08).
#[test]
fn penguins_round_trip_with_categories_and_missing_cells() {
    let dir = tmp();
    let p = penguins();
    let out = copse_in(
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
            "100",
            "--oob-out",
            "oob.csv",
            "--json",
        ],
        None,
    );
    let (so, _) = expect_code(&out, 0);
    let j = json_of(&so);
    assert_eq!(
        j["classes"],
        serde_json::json!(["Adelie", "Chinstrap", "Gentoo"])
    );
    assert!(j["oob"]["error"].as_f64().expect("error") < 0.08);
    let kinds: Vec<(String, String)> = j["inputs"]
        .as_array()
        .expect("inputs")
        .iter()
        .map(|i| {
            (
                i["name"].as_str().unwrap_or("").into(),
                i["kind"].as_str().unwrap_or("").into(),
            )
        })
        .collect();
    assert!(kinds.contains(&("island".into(), "categorical".into())));
    assert!(kinds.contains(&("sex".into(), "categorical".into())));
    assert!(kinds.contains(&("bill_length_mm".into(), "numeric".into())));
    // The stored bin layout spans the data: bill length runs from 32.1 to 59.6 mm
    // (the file's own range; the palmerpenguins summary gives the same, from memory),
    // with edges strictly inside it and increasing.
    let bill = j["inputs"]
        .as_array()
        .expect("inputs")
        .iter()
        .find(|i| i["name"] == "bill_length_mm")
        .expect("bill length");
    assert_eq!(
        (bill["min"].as_f64(), bill["max"].as_f64()),
        (Some(32.1), Some(59.6))
    );
    let edges: Vec<f64> = bill["bin_edges"]
        .as_array()
        .expect("edges")
        .iter()
        .map(|e| e.as_f64().expect("edge"))
        .collect();
    assert_eq!(edges.len() as u64 + 1, bill["bins"].as_u64().expect("bins"));
    assert!(edges.windows(2).all(|w| w[0] < w[1]));
    assert!(edges[0] > 32.1 && edges[edges.len() - 1] < 59.6);

    // One out-of-bag line per training row, with the file line of each.
    let oob = read_csv(&std::fs::read(dir.path().join("oob.csv")).expect("oob file"));
    assert_eq!(oob[0][..3], ["line", "actual", "prediction"]);
    assert_eq!(oob.len(), 345);
    assert_eq!(oob[1][0], "2");

    let out = copse_in(
        dir.path(),
        &[
            "score",
            "--model",
            "peng.copse",
            "--data",
            &p,
            "--keep",
            "species,island",
            "--out",
            "scored.csv",
        ],
        None,
    );
    expect_code(&out, 0);
    let scored = read_csv(&std::fs::read(dir.path().join("scored.csv")).expect("scored"));
    let input = read_csv(&std::fs::read(&p).expect("penguins"));
    assert_eq!(scored.len(), input.len());
    for (o, i) in scored.iter().zip(&input).skip(1) {
        assert_eq!((&o[0], &o[1]), (&i[0], &i[1]), "rows stay in input order");
    }
}

/// Regression on penguins body mass: flipper length alone explains about three
/// quarters of its variance (r about 0.87; memory), so a forest on all inputs should
/// explain well over 60% out of bag.
#[test]
fn regression_json_shape() {
    let dir = tmp();
    let p = penguins();
    let out = copse_in(
        dir.path(),
        &[
            "train",
            "--data",
            &p,
            "--target",
            "body_mass_g",
            "--out",
            "mass.copse",
            "--trees",
            "100",
            "--json",
        ],
        None,
    );
    let (so, se) = expect_code(&out, 0);
    let j = json_of(&so);
    assert_eq!(j["task"], "regress");
    assert_eq!(j["classes"], serde_json::json!([]));
    let r2 = j["oob"]["r_squared"].as_f64().expect("R squared");
    assert!(r2 > 0.6, "R squared {r2}");
    let rmse = j["oob"]["rmse"].as_f64().expect("rmse");
    let mse = j["oob"]["mse"].as_f64().expect("mse");
    assert!(
        (rmse * rmse - mse).abs() <= 1e-9 * mse,
        "rmse {rmse}, mse {mse}"
    );
    assert_eq!(j["oob"]["error"], j["oob"]["mse"]);
    assert!(j["oob"]["mse"].as_f64().expect("mse") > 0.0);
    // Two penguins have no body mass: they are left out and the user is told.
    assert!(se.contains("2 of 344 rows have no value"), "{se}");

    let out = copse_in(
        dir.path(),
        &["evaluate", "--model", "mass.copse", "--data", &p, "--json"],
        None,
    );
    let (so, _) = expect_code(&out, 0);
    let ev = json_of(&so)["evaluation"].clone();
    for key in ["rmse", "mae", "r_squared", "mse", "rows"] {
        assert!(!ev[key].is_null(), "evaluation.{key}");
    }
    assert_eq!(ev["rows"], 342);

    // The printed headline leads with the typical error in target units, then R².
    let (text, _) = expect_code(
        &copse_in(
            dir.path(),
            &["evaluate", "--model", "mass.copse", "--data", &p],
            None,
        ),
        0,
    );
    let at = |label: &str| {
        text.find(label)
            .unwrap_or_else(|| panic!("the report shows '{label}':\n{text}"))
    };
    assert!(
        at("typical error (RMSE)") < at("mean absolute error"),
        "{text}"
    );
    assert!(at("mean absolute error") < at("R²"), "{text}");
    assert!(!text.contains("mean squared error  "), "{text}");

    // One precision per output column: six significant digits of the largest body
    // mass (6300 g), so two decimals in every cell.
    let (scored, _) = expect_code(
        &copse_in(
            dir.path(),
            &["score", "--model", "mass.copse", "--data", &p],
            None,
        ),
        0,
    );
    let decimals: std::collections::BTreeSet<usize> = read_csv(scored.as_bytes())
        .iter()
        .skip(1)
        .map(|r| r[0].split_once('.').map_or(0, |(_, d)| d.len()))
        .collect();
    assert_eq!(decimals, [2].into_iter().collect(), "{scored}");
}

/// The DATA block counts each input's missing cells among the rows used. Penguins
/// (Horst, Hill & Gorman 2020): 11 rows have no sex, 2 have no measurements.
#[test]
fn data_block_counts_missing_cells_per_input() {
    let dir = tmp();
    let p = penguins();
    let args = [
        "train", "--data", &p, "--target", "species", "--out", "s.copse", "--trees", "20",
    ];
    let (text, _) = expect_code(&copse_in(dir.path(), &args, None), 0);
    let row = |name: &str| {
        text.lines()
            .find(|l| l.trim_start().starts_with(&format!("{name} ")))
            .unwrap_or_else(|| panic!("a line for {name}:\n{text}"))
            .to_string()
    };
    assert!(row("sex").ends_with("11 missing"), "{text}");
    assert!(row("bill_length_mm").ends_with(" 2 missing"), "{text}");
    assert!(row("island").ends_with(" 0 missing"), "{text}");
    let (so, _) = expect_code(
        &copse_in(dir.path(), &[&args[..], &["--json"]].concat(), None),
        0,
    );
    let j = json_of(&so);
    let names: Vec<&str> = j["inputs"]
        .as_array()
        .expect("inputs")
        .iter()
        .map(|i| i["name"].as_str().expect("name"))
        .collect();
    let sex = names.iter().position(|&n| n == "sex").expect("sex");
    assert_eq!(j["missing_cells"][sex], 11);
}
