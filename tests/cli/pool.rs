//! Forests trained on separate partitions of the rows and pooled by `copse pool`: the
//! README's partition recipe runs as written; the pooled model scores, its reports show
//! each partition's own out-of-bag figures and no pooled one; models that cannot pool
//! are refused with exit 2, the reason, and no output file. Data: the invented demo
//! register (see `main.rs`).
use super::recipes::{readme_blocks, run_sh};
use super::{copse_in, expect_code, repo, tmp};
use std::path::Path;

fn json(dir: &Path, args: &[&str]) -> serde_json::Value {
    let (out, _) = expect_code(&copse_in(dir, args, None), 0);
    serde_json::from_str(&out).expect("one JSON object")
}

#[test]
fn the_readme_partition_recipe_runs_and_pools() {
    let dir = tmp();
    let d = dir.path();
    std::fs::create_dir(d.join("demo-data")).expect("folder");
    for f in ["water_mains.csv", "water_mains_to_score.csv"] {
        std::fs::copy(repo(&format!("demo-data/{f}")), d.join("demo-data").join(f))
            .expect("demo data copied");
    }
    let blocks = readme_blocks("partition recipe", 3);
    assert_eq!(blocks.len(), 3, "split, task, pool");
    run_sh(d, &blocks[0], None);
    for t in 0..3 {
        run_sh(d, &blocks[1], Some(t));
    }
    run_sh(d, &blocks[2], None);
    // Every row of the register went to exactly one partition.
    let lines = |f: &str| {
        std::fs::read_to_string(d.join(f))
            .expect("file")
            .lines()
            .count()
    };
    let dealt: usize = (0..3).map(|k| lines(&format!("rows{k}.csv")) - 1).sum();
    assert_eq!(dealt, lines("demo-data/water_mains.csv") - 1);

    let report = json(d, &["inspect", "--model", "pooled.copse", "--json"]);
    assert_eq!(report["trees"], 300);
    let pooled = &report["pooled"];
    let parts = pooled["partitions"].as_array().expect("partitions");
    assert_eq!(parts.len(), 3);
    for (k, p) in parts.iter().enumerate() {
        assert_eq!(p["model"], format!("part{k}.copse"));
        assert_eq!(p["source"], format!("rows{k}.csv"));
        assert_eq!(p["seed"], 7 + k as u64);
        assert!(p["oob"]["error"].as_f64().is_some(), "{p}");
    }
    assert!(pooled["about"]
        .as_str()
        .expect("the step succeeds")
        .contains("not the same model"));
    // No pooled out-of-bag figure is claimed.
    assert!(report["oob"]["error"].is_null(), "{}", report["oob"]);
    assert_eq!(report["importance"].as_array().map(Vec::len), Some(0));
    // The text says so too.
    let (text, _) = expect_code(
        &copse_in(d, &["inspect", "--model", "pooled.copse"], None),
        0,
    );
    assert!(text.contains("POOLED PARTITIONS"), "{text}");
    assert!(
        text.contains("not the same model as one trained on all rows"),
        "{text}"
    );
    assert!(!text.contains("OUT-OF-BAG CHECK"), "{text}");

    // It scores and is judged on held-out rows like any model.
    let (scored, _) = expect_code(
        &copse_in(
            d,
            &[
                "score",
                "--model",
                "pooled.copse",
                "--data",
                "demo-data/water_mains_to_score.csv",
            ],
            None,
        ),
        0,
    );
    assert_eq!(scored.lines().count(), 501);
    let judged = json(
        d,
        &[
            "evaluate",
            "--model",
            "pooled.copse",
            "--data",
            "rows0.csv",
            "--json",
        ],
    );
    assert!(judged["pooled"].is_object());
}

#[test]
fn models_that_cannot_pool_are_refused_with_nothing_written() {
    let dir = tmp();
    let d = dir.path();
    std::fs::copy(repo("demo-data/water_mains.csv"), d.join("mains.csv")).expect("copied");
    let text = std::fs::read_to_string(d.join("mains.csv")).expect("the step succeeds");
    let (head, rest) = text.split_once('\n').expect("the step succeeds");
    let rows: Vec<&str> = rest.lines().collect();
    let half = rows.len() / 2;
    std::fs::write(
        d.join("a.csv"),
        format!("{head}\n{}\n", rows[..half].join("\n")),
    )
    .expect("the step succeeds");
    std::fs::write(
        d.join("b.csv"),
        format!("{head}\n{}\n", rows[half..].join("\n")),
    )
    .expect("the step succeeds");
    let train = |data: &str, out: &str, extra: &[&str]| {
        let mut args = vec![
            "train",
            "--data",
            data,
            "--target",
            "failed_within_year",
            "--ignore",
            "segment_id",
            "--trees",
            "10",
            "--out",
            out,
            "-q",
        ];
        args.extend_from_slice(extra);
        expect_code(&copse_in(d, &args, None), 0);
    };
    train("a.csv", "a.copse", &[]);
    train("b.csv", "b.copse", &["--seed", "3"]);
    train("b.csv", "leafy.copse", &["--min-leaf", "4"]);
    let refuse = |args: &[&str], words: &str| {
        let (_, err) = expect_code(&copse_in(d, args, None), 2);
        assert!(err.contains(words), "'{words}' not in: {err}");
        assert!(!d.join("out.copse").exists());
        let left: Vec<_> = std::fs::read_dir(d)
            .expect("the step succeeds")
            .filter_map(|e| e.ok())
            .filter(|e| e.file_name().to_string_lossy().ends_with(".partial"))
            .collect();
        assert!(left.is_empty(), "partial files left");
    };
    refuse(
        &["pool", "a.copse", "a.copse", "--out", "out.copse"],
        "same rows",
    );
    refuse(
        &["pool", "a.copse", "leafy.copse", "--out", "out.copse"],
        "the tree rules",
    );
    refuse(
        &["pool", "a.copse", "b.copse", "--out", "a.copse"],
        "also one of the models",
    );
    refuse(
        &["pool", "a.copse", "mains.csv", "--out", "out.copse"],
        "mains.csv",
    );
    expect_code(
        &copse_in(
            d,
            &["pool", "a.copse", "b.copse", "--out", "ab.copse", "-q"],
            None,
        ),
        0,
    );
    // A pooled model is not the first trees of one forest: merge refuses it.
    let part = [
        "train",
        "--data",
        "a.csv",
        "--target",
        "failed_within_year",
        "--ignore",
        "segment_id",
        "--trees",
        "20",
        "--tree-range",
        "10..20",
        "--out",
        "more.copsepart",
        "-q",
    ];
    expect_code(&copse_in(d, &part, None), 0);
    refuse(
        &["merge", "ab.copse", "more.copsepart", "--out", "out.copse"],
        "pooled model",
    );
    // Nor is it pooled again.
    refuse(
        &["pool", "ab.copse", "leafy.copse", "--out", "out.copse"],
        "itself a pooled model",
    );
}
