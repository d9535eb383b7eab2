//! Options in copse's own words: bad values refused as usage errors, the grammar of
//! `--features-per-split`, renamed options, and near matches for a mistyped target.
//!
//! Data: `tests/data/iris.csv` (Fisher 1936, via the vega_datasets package) and
//! `tests/data/penguins.csv` (Gorman, Williams & Fraser 2014, palmerpenguins package);
//! provenance in `tests/data/README.md`.
use super::{copse_in, expect_code, json_of, read_csv, repo, tmp, train_iris};

#[test]
fn bad_flag_values_are_usage_errors() {
    let dir = tmp();
    for extra in [
        ["--trees", "0"],
        ["--min-leaf", "0"],
        ["--features-per-split", "0"],
        ["--features-per-split", "1.5"],
        ["--features-per-split", "150%"],
        ["--sampling", "subsample:1.2"],
        ["--bins", "1"],
    ] {
        let (_, se) = expect_code(&train_iris(dir.path(), &extra), 2);
        assert!(se.starts_with("copse: error:"), "{extra:?}: {se}");
        assert!(se.contains(extra[0]), "{extra:?}: {se}");
    }
    assert!(!dir.path().join("iris.copse").exists());
}

/// `--features-per-split` takes a count, a share such as `33%`, or the words `root`,
/// `log` and `every`; other spellings are refused with the one to write instead, and
/// the report and JSON give the rule as it was written.
#[test]
fn features_per_split_speaks_our_grammar() {
    let dir = tmp();
    for (theirs, ours) in [
        ("sqrt", "'root'"),
        ("log2", "'log'"),
        ("all", "'every'"),
        ("auto", "'default'"),
        ("0.33", "'33%'"),
    ] {
        let (_, se) = expect_code(
            &train_iris(dir.path(), &["--features-per-split", theirs]),
            2,
        );
        assert!(se.contains(ours), "{theirs}: {se}");
    }
    let (so, _) = expect_code(&train_iris(dir.path(), &["--json"]), 0);
    let j = json_of(&so);
    assert_eq!(j["settings"]["features_per_split_rule"], "default");
    // A count is an integer in the JSON.
    assert!(j["settings"]["min_leaf"].is_u64(), "{}", j["settings"]);
    let (so, _) = expect_code(
        &train_iris(dir.path(), &["--features-per-split", "50%", "--json"]),
        0,
    );
    let j = json_of(&so);
    assert_eq!(j["settings"]["features_per_split_rule"], "50%");
    assert_eq!(j["settings"]["features_per_split"], 2);
    let (text, _) = expect_code(&train_iris(dir.path(), &["--features-per-split", "50%"]), 0);
    assert!(text.contains("2 of 4 (50% of the inputs)"), "{text}");
}

/// Options and defaults in copse's own words: `--shuffled-target-runs` (its former
/// spelling refused with the new one), the out-of-bag file's `trees_judging_row`
/// column, and missing tokens `NA` and `NaN` by default, `?` only when asked for.
#[test]
fn renamed_options_columns_and_default_missing_tokens() {
    let dir = tmp();
    for extra in [
        &["--null-permutations", "5"][..],
        &["--null-permutations"][..],
    ] {
        let (_, se) = expect_code(&train_iris(dir.path(), extra), 2);
        assert!(se.contains("--shuffled-target-runs"), "{se}");
    }
    expect_code(&train_iris(dir.path(), &["--oob-out", "oob.csv"]), 0);
    let oob = read_csv(&std::fs::read(dir.path().join("oob.csv")).expect("oob file"));
    assert_eq!(oob[0].last().map(String::as_str), Some("trees_judging_row"));

    let csv = "x,y\n1,a\n?,b\n3,a\nNA,b\n5,a\nNaN,b\n";
    std::fs::write(dir.path().join("q.csv"), csv).expect("write");
    let train_q = |extra: &[&str]| {
        let mut args = vec![
            "train", "--data", "q.csv", "--target", "y", "--out", "q.copse", "--trees", "5",
            "--json",
        ];
        args.extend_from_slice(extra);
        let (so, se) = expect_code(&copse_in(dir.path(), &args, None), 0);
        (json_of(&so), se)
    };
    let (j, se) = train_q(&[]);
    assert_eq!(
        j["data"]["missing_tokens"],
        serde_json::json!(["NA", "NaN"])
    );
    assert_eq!(j["inputs"][0]["kind"], "categorical", "{se}");
    assert!(se.contains("line 3 '?'"), "{se}");
    let (j, _) = train_q(&["--missing", "NA,NaN,?"]);
    assert_eq!(j["inputs"][0]["kind"], "numeric");
}

/// A target named with the wrong letter case or a small typo is refused with the near
/// match named.
#[test]
fn a_mistyped_target_gets_the_near_match() {
    let dir = tmp();
    let iris = repo("tests/data/iris.csv");
    let iris = iris.to_str().expect("path");
    for (given, meant) in [("Species", "species"), ("petal_lenght", "petal_length")] {
        let (_, se) = expect_code(
            &copse_in(
                dir.path(),
                &[
                    "train", "--data", iris, "--target", given, "--out", "m.copse",
                ],
                None,
            ),
            2,
        );
        assert!(se.contains(&format!("did you mean '{meant}'?")), "{se}");
    }
}
