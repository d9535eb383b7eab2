//! Flags and resources: bad option values, conflicting options and resource limits,
//! refused before any work.
use super::*;

/// Flag values refused at parse time, each naming the flag (exit 2, nothing written).
#[test]
fn m40_bad_flag_values() {
    let dir = tmp();
    iris_model(dir.path());
    let i = iris();
    let train = |extra: &[&'static str]| {
        let mut v: Vec<String> = [
            "train",
            "--data",
            i.as_str(),
            "--target",
            "species",
            "--out",
            "m.copse",
        ]
        .iter()
        .map(|s| s.to_string())
        .collect();
        v.extend(extra.iter().map(|s| s.to_string()));
        v
    };
    let cases: Vec<(Vec<String>, &str)> = vec![
        (train(&["--max-depth", "0"]), "--max-depth"),
        (train(&["--bins", "70000"]), "--bins"),
        (train(&["--sampling", "subsample:0"]), "--sampling"),
        (
            train(&["--features-per-split", "none"]),
            "--features-per-split",
        ),
        (train(&["--threads", "0"]), "--threads"),
        (train(&["--delimiter", "pipe"]), "--delimiter"),
        (train(&["--trees", "many"]), "--trees"),
        (train(&["--impurity", "variance"]), "--impurity"),
        (
            vec![
                "importance",
                "--model",
                "iris.copse",
                "--data",
                &i,
                "--repeats",
                "0",
            ]
            .into_iter()
            .map(String::from)
            .collect(),
            "--repeats",
        ),
    ];
    for (args, flag) in &cases {
        let a: Vec<&str> = args.iter().map(String::as_str).collect();
        refused(dir.path(), &a, None, 2, &[flag]);
    }
}

/// Values that pass parsing but not the data: an input count above the inputs there
/// are, a tree number the model does not have.
#[test]
fn m41_flag_values_that_do_not_fit_the_data() {
    let dir = tmp();
    iris_model(dir.path());
    let i = iris();
    refused(
        dir.path(),
        &[
            "train",
            "--data",
            &i,
            "--target",
            "species",
            "--out",
            "m.copse",
            "--features-per-split",
            "9",
        ],
        None,
        2,
        &[
            "--features-per-split 9 is more than the 4 inputs",
            "choose 1 to 4",
        ],
    );
    refused(
        dir.path(),
        &["inspect", "--model", "iris.copse", "--tree", "20"],
        None,
        2,
        &["--tree 20: the model has 20 trees, numbered 0 to 19"],
    );
}

/// A request whose model obviously exceeds the memory there is: a million unlimited
/// trees on 20,000 rows (about 25,000 nodes each, over 16 bytes a node: hundreds of
/// gigabytes) is refused before any tree is grown, naming the way out.
#[test]
fn m42_training_that_cannot_fit_in_memory_is_refused() {
    let dir = tmp();
    expect_code(
        &copse_in(
            dir.path(),
            &[
                "make-demo-data",
                "--out",
                ".",
                "--rows",
                "20000",
                "--score-rows",
                "1",
            ],
            None,
        ),
        0,
    );
    let args = [
        "train",
        "--data",
        "water_mains.csv",
        "--target",
        "failed_within_year",
        "--ignore",
        "segment_id",
        "--out",
        "m.copse",
        "--trees",
        "1000000",
    ];
    refused(
        dir.path(),
        &args,
        None,
        2,
        &[
            "training 1000000 trees on the 20000 rows of water_mains.csv",
            "of memory is available",
            "--allow-large",
        ],
    );
}

/// A regression target too large for its squared errors to stay finite: refused when
/// read, naming line and column, instead of a model that cannot be read back.
#[test]
fn m43_regression_target_too_large() {
    train_refused(
        "a,y\n1,2\n2,-3e200\n3,4\n",
        "y",
        &[
            "d.csv line 3, column 'y'",
            "-3e200 is too large",
            "rescale the target",
        ],
    );
}

/// A regression target on a tiny scale: predictions keep their digits in the scored
/// file (printed in exponent form) instead of being rounded to 0.
#[test]
fn m44_tiny_regression_values_are_not_rounded_away() {
    let dir = tmp();
    let mut d = String::from("a,y\n");
    for i in 0..60 {
        d.push_str(&format!("{i},{}\n", if i < 30 { 2e-7 } else { 9e-7 }));
    }
    put(dir.path(), "d.csv", &d);
    // Two distinct values would be read as two classes without --task regress.
    let mut args = train_args("d.csv", "y");
    args.extend(["--task", "regress"]);
    expect_code(&copse_in(dir.path(), &args, None), 0);
    let (so, _) = expect_code(
        &copse_in(
            dir.path(),
            &["score", "--model", "m.copse", "--data", "d.csv"],
            None,
        ),
        0,
    );
    let preds: Vec<f64> = so
        .lines()
        .skip(1)
        .map(|l| l.parse().expect("a number"))
        .collect();
    assert_eq!(preds.len(), 60);
    // Every leaf holds rows of the two values only, so every prediction is an average
    // of them: within [2e-7, 9e-7], and never the 0 that six fixed decimals would print.
    // Rows far from the change at a = 29.5 fall on their own side in most trees.
    for (i, p) in preds.iter().enumerate() {
        assert!((2e-7 - 1e-12..=9e-7 + 1e-12).contains(p), "row {i}: {p}");
    }
    let low: f64 = preds[..10].iter().sum::<f64>() / 10.0;
    let high: f64 = preds[50..].iter().sum::<f64>() / 10.0;
    assert!(low < 4e-7 && high > 7e-7, "{low} {high}");
}
