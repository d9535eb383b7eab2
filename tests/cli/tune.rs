//! `copse tune` and `copse train --cuts random` through the real binary: a setting
//! found where the default is poor and its `copse train` line run as printed, the
//! JSON keys, the chart, the cut choice recorded in the model and shown by `inspect`,
//! and bad input refused with a usage or input error (exit 2).
use super::{copse_in, expect_code, json_of, repo, tmp};
use std::fmt::Write as _;
use std::path::Path;

/// Four numeric inputs, one of which carries the signal: `y = 5 sin(2 pi x1)` plus
/// noise, data of our own (a seeded linear congruential generator, so the file is the
/// same everywhere). The default tries 2 of the 4 inputs per split and so often misses
/// `x1`; trying all 4 does not.
fn one_signal_csv(dir: &Path, rows: usize) -> String {
    let mut state: u64 = 0x2545_f491_4f6c_dd1d;
    let mut next = || {
        state = state
            .wrapping_mul(6_364_136_223_846_793_005)
            .wrapping_add(1_442_695_040_888_963_407);
        (state >> 11) as f64 / (1u64 << 53) as f64
    };
    let mut text = String::from("x1,x2,x3,x4,y\n");
    for _ in 0..rows {
        let x: Vec<f64> = (0..4).map(|_| next()).collect();
        let noise: f64 = (0..12).map(|_| next()).sum::<f64>() - 6.0;
        let y = 5.0 * (2.0 * std::f64::consts::PI * x[0]).sin() + noise;
        let _ = writeln!(
            text,
            "{:.5},{:.5},{:.5},{:.5},{y:.5}",
            x[0], x[1], x[2], x[3]
        );
    }
    std::fs::write(dir.join("one_signal.csv"), text).expect("write");
    "one_signal.csv".to_string()
}

/// Splits a printed command line into words (it quotes only with single quotes).
fn words(line: &str) -> Vec<String> {
    let mut out = Vec::new();
    let (mut cur, mut quoted, mut any) = (String::new(), false, false);
    for c in line.chars() {
        match c {
            '\'' => {
                quoted = !quoted;
                any = true;
            }
            ' ' if !quoted => {
                if any || !cur.is_empty() {
                    out.push(std::mem::take(&mut cur));
                }
                any = false;
            }
            _ => cur.push(c),
        }
    }
    if any || !cur.is_empty() {
        out.push(cur);
    }
    out
}

#[test]
fn tune_finds_the_better_setting_and_its_train_line_runs() {
    let dir = tmp();
    let data = one_signal_csv(dir.path(), 500);
    let out = copse_in(
        dir.path(),
        &[
            "tune", "--data", &data, "--target", "y", "--trees", "100", "--json", "--plot",
            "tune.svg",
        ],
        None,
    );
    let (so, se) = expect_code(&out, 0);
    assert!(se.contains("tuning chart: tune.svg"), "{se}");
    let svg = std::fs::read_to_string(dir.path().join("tune.svg")).expect("chart");
    assert!(svg.starts_with("<svg") && svg.contains("(default)"));
    let j = json_of(&so);
    assert_eq!(j["command"], "tune");
    assert_eq!(j["judged_by"], "squared_error");
    assert_eq!(j["margin"], 2.0);
    let settings = j["settings"].as_array().expect("settings");
    assert_eq!(settings.len(), 18);
    let d = j["default_setting"].as_u64().expect("default") as usize;
    assert_eq!(settings[d]["features_per_split"], 2);
    assert_eq!(settings[d]["is_default"], true);
    let r = j["recommended_setting"].as_u64().expect("a recommendation") as usize;
    assert_eq!(settings[r]["features_per_split"], 4, "{}", settings[r]);
    for key in [
        "min_leaf",
        "cuts",
        "rows_judged",
        "error",
        "loss",
        "loss_difference",
        "loss_difference_se",
        "error_difference",
        "seconds",
    ] {
        assert!(settings[r].get(key).is_some(), "{key}");
    }
    assert!(j["selection_optimism"].as_f64().expect("a number") > 0.0);
    assert!(j["notes"][0].as_str().expect("a note").contains("flatters"));
    let line = j["train_line"].as_str().expect("a line");
    assert!(line.contains("--features-per-split every"), "{line}");
    // The line runs as printed (in the same folder, with fewer trees for speed).
    let mut args = words(line);
    assert_eq!(args[..2], ["copse", "train"]);
    args.remove(0);
    args.extend(["--trees", "20"].map(String::from));
    let args: Vec<&str> = args.iter().map(String::as_str).collect();
    expect_code(&copse_in(dir.path(), &args, None), 0);
    assert!(dir.path().join("model.copse").is_file());
}

#[test]
fn tune_prints_its_table_rule_and_caution() {
    let dir = tmp();
    let iris = repo("tests/data/iris.csv");
    let out = copse_in(
        dir.path(),
        &[
            "tune",
            "--data",
            iris.to_str().expect("path"),
            "--target",
            "species",
            "--trees",
            "50",
            "--try-min-leaf",
            "1,5",
            "--try-cuts",
            "random,best",
        ],
        None,
    );
    let (so, _) = expect_code(&out, 0);
    for words in [
        "SETTINGS TRIED (",
        "(default)",
        "RECOMMENDATION",
        "Rule: a setting is recommended only when",
        "2 standard errors",
        "copse train --data",
        "flatters the one picked",
        "Randomized cut points were judged",
        "CAUTION",
    ] {
        assert!(so.contains(words), "{words}:\n{so}");
    }
}

#[test]
fn tune_refuses_bad_input() {
    let dir = tmp();
    let data = one_signal_csv(dir.path(), 60);
    let cases: [(&[&str], &str); 6] = [
        (&["--sampling", "none"], "out of bag"),
        (&["--try-features", "9"], "more than the 4 inputs"),
        (&["--try-min-leaf", "0"], "--try-min-leaf"),
        (&["--try-cuts", "sideways"], "--try-cuts"),
        (&["--trees", "5"], "--trees"),
        (&["--plot", "no/such/folder/tune.svg"], "does not exist"),
    ];
    for (extra, words) in cases {
        let mut args = vec!["tune", "--data", &data, "--target", "y"];
        args.extend_from_slice(extra);
        let (so, se) = expect_code(&copse_in(dir.path(), &args, None), 2);
        assert!(so.is_empty(), "{extra:?}: {so}");
        assert!(
            se.starts_with("copse: ") && se.contains(words),
            "{extra:?}: {se}"
        );
    }
    let (_, se) = expect_code(
        &copse_in(
            dir.path(),
            &["tune", "--data", &data, "--target", "z"],
            None,
        ),
        2,
    );
    assert!(se.contains("'z'"), "{se}");
    let (_, se) = expect_code(
        &copse_in(
            dir.path(),
            &["tune", "--data", "absent.csv", "--target", "y"],
            None,
        ),
        2,
    );
    assert!(se.contains("absent.csv"), "{se}");
}

/// `--cuts random` is recorded in the model: `inspect` shows it in text and JSON; with
/// no `--sampling` every tree grows on every row (said in a note, and the out-of-bag
/// check says why it is absent); an explicit `--sampling bootstrap` keeps resampling
/// and the out-of-bag check. The default model records `best`.
#[test]
fn random_cuts_are_recorded_and_shown() {
    let dir = tmp();
    let iris = repo("tests/data/iris.csv");
    let iris = iris.to_str().expect("path");
    let train = |out: &str, extra: &[&str]| {
        let mut args = vec![
            "train", "--data", iris, "--target", "species", "--out", out, "--trees", "30",
        ];
        args.extend_from_slice(extra);
        expect_code(&copse_in(dir.path(), &args, None), 0)
    };
    let (so, se) = train("random.copse", &["--cuts", "random"]);
    assert!(
        se.contains("--cuts random grows every tree on every row"),
        "{se}"
    );
    assert!(so.contains("randomized cut points"), "{so}");
    assert!(so.contains("no row was left out of any tree"), "{so}");
    let inspect = |model: &str| {
        let (so, _) = expect_code(
            &copse_in(dir.path(), &["inspect", "--model", model, "--json"], None),
            0,
        );
        json_of(&so)
    };
    let j = inspect("random.copse");
    assert_eq!(j["settings"]["cuts"], "random");
    assert_eq!(j["settings"]["sampling"], "none");
    assert!(j["oob"]["error"].is_null());
    let (text, _) = expect_code(
        &copse_in(dir.path(), &["inspect", "--model", "random.copse"], None),
        0,
    );
    assert!(
        text.contains("cut points") && text.contains("randomized"),
        "{text}"
    );
    train(
        "boot.copse",
        &["--cuts", "random", "--sampling", "bootstrap"],
    );
    let j = inspect("boot.copse");
    assert_eq!(j["settings"]["sampling"], "bootstrap");
    assert!(j["oob"]["error"].as_f64().expect("an error") < 0.15);
    train("plain.copse", &[]);
    assert_eq!(inspect("plain.copse")["settings"]["cuts"], "best");
}
