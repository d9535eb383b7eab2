//! Forests in parts: the job-array recipe of the README (one `copse train --tree-range`
//! per task, then `copse merge`) gives the model file of one run byte for byte, for
//! classes with `--keep-draws` and for values; a model grows by merging it with more
//! trees; and parts that cannot make one forest are refused with exit 2 and the
//! reason. Data: the invented demo register and the penguins (see `main.rs`).
use super::recipes::{readme_blocks, run_sh};
use super::{copse_in, expect_code, repo, tmp};
use std::path::Path;

/// Copies the demo register into `dir`, so every command names it by the same
/// relative path (the model card records the path as given).
fn demo_in(dir: &Path) {
    std::fs::copy(
        repo("demo-data/water_mains.csv"),
        dir.join("water_mains.csv"),
    )
    .expect("demo data copied");
}

const DEMO: [&str; 6] = [
    "--data",
    "water_mains.csv",
    "--target",
    "failed_within_year",
    "--ignore",
    "segment_id",
];

fn run_ok(dir: &Path, args: &[&str]) -> String {
    expect_code(&copse_in(dir, args, None), 0).0
}

fn train(dir: &Path, extra: &[&str]) {
    let mut args = vec!["train"];
    args.extend_from_slice(&DEMO);
    args.extend_from_slice(extra);
    run_ok(dir, &args);
}

fn bytes(dir: &Path, f: &str) -> Vec<u8> {
    std::fs::read(dir.join(f)).expect("file written")
}

#[test]
fn the_job_array_recipe_gives_the_model_of_one_run() {
    let dir = tmp();
    let d = dir.path();
    demo_in(d);
    let common = ["--trees", "30", "--seed", "7", "--keep-draws", "-q"];
    // The README's recipe, one task per part: task i grows trees 10i..10i+10.
    for task in 0..3 {
        let range = format!("{}..{}", 10 * task, 10 * task + 10);
        let out = format!("part{task}.copsepart");
        let mut args = common.to_vec();
        args.extend_from_slice(&["--tree-range", &range, "--out", &out]);
        train(d, &args);
    }
    let report = run_ok(
        d,
        &[
            "merge",
            "part2.copsepart",
            "part0.copsepart",
            "part1.copsepart",
            "--out",
            "merged.copse",
            "-q",
        ],
    );
    assert!(report.contains("out-of-bag"), "{report}");
    let mut args = common.to_vec();
    args.extend_from_slice(&["--out", "whole.copse"]);
    train(d, &args);
    assert!(
        bytes(d, "merged.copse") == bytes(d, "whole.copse"),
        "three parts"
    );
    // Two parts, the data named explicitly.
    train(
        d,
        &[
            &common[..],
            &["--tree-range", "0..17", "--out", "a.copsepart"],
        ]
        .concat(),
    );
    train(
        d,
        &[
            &common[..],
            &["--tree-range", "17..30", "--out", "b.copsepart"],
        ]
        .concat(),
    );
    run_ok(
        d,
        &[
            "merge",
            "a.copsepart",
            "b.copsepart",
            "--data",
            "water_mains.csv",
            "--out",
            "two.copse",
            "-q",
        ],
    );
    assert!(
        bytes(d, "two.copse") == bytes(d, "whole.copse"),
        "two parts"
    );
}

#[test]
fn parts_of_a_value_forest_and_a_grown_model_match_one_run() {
    let dir = tmp();
    let d = dir.path();
    std::fs::copy(repo("tests/data/penguins.csv"), d.join("penguins.csv")).expect("copied");
    let base = [
        "train",
        "--data",
        "penguins.csv",
        "--target",
        "body_mass_g",
        "--seed",
        "4",
        "-q",
    ];
    fn with<'a>(base: &[&'a str], extra: &[&'a str]) -> Vec<&'a str> {
        [base, extra].concat()
    }
    run_ok(
        d,
        &with(
            &base,
            &[
                "--trees",
                "24",
                "--tree-range",
                "0..5",
                "--out",
                "p0.copsepart",
            ],
        ),
    );
    run_ok(
        d,
        &with(
            &base,
            &[
                "--trees",
                "24",
                "--tree-range",
                "5..24",
                "--out",
                "p1.copsepart",
            ],
        ),
    );
    run_ok(
        d,
        &[
            "merge",
            "p1.copsepart",
            "p0.copsepart",
            "--out",
            "m.copse",
            "-q",
        ],
    );
    run_ok(d, &with(&base, &["--trees", "24", "--out", "w.copse"]));
    assert!(
        bytes(d, "m.copse") == bytes(d, "w.copse"),
        "value forest in two parts"
    );
    // Growing: a model of 10 trees and trees 10..24 make the model of 24.
    run_ok(d, &with(&base, &["--trees", "10", "--out", "small.copse"]));
    run_ok(
        d,
        &with(
            &base,
            &[
                "--trees",
                "24",
                "--tree-range",
                "10..24",
                "--out",
                "more.copsepart",
            ],
        ),
    );
    run_ok(
        d,
        &[
            "merge",
            "small.copse",
            "more.copsepart",
            "--out",
            "grown.copse",
            "-q",
        ],
    );
    assert!(
        bytes(d, "grown.copse") == bytes(d, "w.copse"),
        "grown model"
    );
}

#[test]
fn parts_that_cannot_make_one_forest_are_refused_with_the_reason() {
    let dir = tmp();
    let d = dir.path();
    demo_in(d);
    let part = |range: &str, out: &str, extra: &[&str]| {
        let args = [
            &["--trees", "12", "-q", "--tree-range", range, "--out", out][..],
            extra,
        ]
        .concat();
        train(d, &args);
    };
    part("0..6", "a.copsepart", &[]);
    part("6..12", "b.copsepart", &[]);
    part("6..12", "seed.copsepart", &["--seed", "9"]);
    part("6..12", "leaf.copsepart", &["--min-leaf", "3"]);
    part("4..12", "wide.copsepart", &[]);
    part("6..12", "draws.copsepart", &["--keep-draws"]);
    let refused = |parts: &[&str], words: &str| {
        let mut args = vec!["merge"];
        args.extend_from_slice(parts);
        args.extend_from_slice(&["--out", "m.copse"]);
        let (_, err) = expect_code(&copse_in(d, &args, None), 2);
        assert!(err.contains(words), "'{words}' not in: {err}");
        assert!(!d.join("m.copse").exists(), "no model written");
    };
    refused(&["a.copsepart", "seed.copsepart"], "the seed (--seed) is 9");
    refused(&["a.copsepart", "leaf.copsepart"], "the tree rules");
    refused(&["a.copsepart", "wide.copsepart"], "overlaps");
    refused(&["a.copsepart"], "no part holds trees 6..12");
    refused(&["b.copsepart"], "--tree-range 0..6");
    refused(&["a.copsepart", "draws.copsepart"], "--keep-draws");
    refused(&["a.copsepart", "water_mains.csv"], "not a copse part file");
    // Other data at the merge: the same rows with one cell changed.
    let text = std::fs::read_to_string(d.join("water_mains.csv")).expect("read");
    let changed = text.replacen(",steel,200,", ",steel,250,", 1);
    assert_ne!(text, changed);
    std::fs::write(d.join("changed.csv"), changed).expect("written");
    refused(
        &["a.copsepart", "b.copsepart", "--data", "changed.csv"],
        "is not the data",
    );
    // Bad ranges on the command line.
    let mut args = vec!["train"];
    args.extend_from_slice(&DEMO);
    args.extend_from_slice(&[
        "--trees",
        "12",
        "--tree-range",
        "6..13",
        "--out",
        "x.copsepart",
    ]);
    let (_, err) = expect_code(&copse_in(d, &args, None), 2);
    assert!(err.contains("reaches past the 12 trees"), "{err}");
    let last = args.len() - 3;
    args[last] = "6..6";
    let (_, err) = expect_code(&copse_in(d, &args, None), 2);
    assert!(err.contains("not a range of trees"), "{err}");
    args[last] = "0..6";
    args.extend_from_slice(&["--oob-out", "oob.csv"]);
    let (_, err) = expect_code(&copse_in(d, &args, None), 2);
    assert!(err.contains("--oob-out needs the whole forest"), "{err}");
}

#[test]
fn the_readme_job_array_recipe_runs_as_written() {
    let dir = tmp();
    let d = dir.path();
    std::fs::create_dir(d.join("demo-data")).expect("folder");
    std::fs::copy(
        repo("demo-data/water_mains.csv"),
        d.join("demo-data/water_mains.csv"),
    )
    .expect("demo data copied");
    let [task, merge]: [String; 2] = readme_blocks("job-array recipe", 2)
        .try_into()
        .expect("two blocks");
    for t in 0..10 {
        run_sh(d, &task, Some(t));
    }
    run_sh(d, &merge, None);
    // One run of the same forest, as the README says it equals.
    let mut args = vec!["train"];
    args.extend_from_slice(&[
        "--data",
        "demo-data/water_mains.csv",
        "--target",
        "failed_within_year",
        "--ignore",
        "segment_id",
    ]);
    args.extend_from_slice(&[
        "--trees",
        "1000",
        "--seed",
        "7",
        "--out",
        "whole.copse",
        "-q",
    ]);
    run_ok(d, &args);
    assert!(bytes(d, "mains.copse") == bytes(d, "whole.copse"));
}

/// The demo register with two more columns: a case weight `w` (1 to 3 by row) and a
/// row group `grp` (blocks of 4 rows), both made up for this check.
fn weighted_demo_in(dir: &Path) {
    let text = std::fs::read_to_string(repo("demo-data/water_mains.csv")).expect("demo data");
    let mut out = String::new();
    for (i, line) in text.lines().enumerate() {
        if i == 0 {
            out.push_str(&format!("{line},w,grp\n"));
        } else {
            out.push_str(&format!("{line},{},{}\n", i % 3 + 1, i / 4));
        }
    }
    std::fs::write(dir.join("weighted.csv"), out).expect("weighted copy written");
}

#[test]
fn parts_with_weights_groups_and_random_cuts_merge_into_the_model_of_one_run() {
    let dir = tmp();
    let d = dir.path();
    weighted_demo_in(d);
    let common = [
        "train",
        "--data",
        "weighted.csv",
        "--target",
        "failed_within_year",
        "--ignore",
        "segment_id",
        "--weights",
        "w",
        "--group",
        "grp",
        "--cuts",
        "random",
        "--sampling",
        "bootstrap",
        "--trees",
        "12",
        "-q",
    ];
    for (range, out) in [("0..5", "a.copsepart"), ("5..12", "b.copsepart")] {
        run_ok(
            d,
            &[&common[..], &["--tree-range", range, "--out", out]].concat(),
        );
    }
    run_ok(d, &[&common[..], &["--out", "whole.copse"]].concat());
    run_ok(
        d,
        &[
            "merge",
            "b.copsepart",
            "a.copsepart",
            "--out",
            "merged.copse",
            "-q",
        ],
    );
    assert!(bytes(d, "merged.copse") == bytes(d, "whole.copse"));
    // A part without the row groups is not a part of this forest.
    let mut plain = common.to_vec();
    plain.retain(|a| *a != "--group" && *a != "grp");
    run_ok(
        d,
        &[
            &plain[..],
            &["--tree-range", "5..12", "--out", "c.copsepart"],
        ]
        .concat(),
    );
    let (_, err) = expect_code(
        &copse_in(
            d,
            &["merge", "a.copsepart", "c.copsepart", "--out", "bad.copse"],
            None,
        ),
        2,
    );
    assert!(err.contains("different data"), "{err}");
}
