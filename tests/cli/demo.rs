//! `copse demo` and `copse make-demo-data`: the committed demo files are the
//! generator's output, and the demo runs end to end. The demo data is the invented
//! register in `demo-data/`.
use super::{copse_in, expect_code, json_of, repo, tmp};

/// The committed demo files are exactly what the generator writes with its defaults,
/// so the README's description of them (and the benchmark sizes) stay true.
#[test]
fn committed_demo_data_matches_the_generator() {
    let dir = tmp();
    let out = copse_in(dir.path(), &["make-demo-data", "--out", "gen"], None);
    expect_code(&out, 0);
    for f in ["water_mains.csv", "water_mains_to_score.csv"] {
        let made = std::fs::read(dir.path().join("gen").join(f)).expect("generated file");
        let committed = std::fs::read(repo(&format!("demo-data/{f}"))).expect("committed file");
        assert!(made == committed, "{f} differs from the generator's output");
    }
}

/// `copse demo` runs end to end, writes every output it lists, and the model ranks
/// the input that has no effect in the invented data (valve distance) below the
/// strongest one (past repairs).
#[test]
fn demo_runs_and_says_where_everything_went() {
    let dir = tmp();
    let (so, _) = expect_code(
        &copse_in(dir.path(), &["demo", "--out", "demo-out"], None),
        0,
    );
    for f in [
        "data/water_mains.csv",
        "data/water_mains_to_score.csv",
        "water_mains.copse",
        "report.txt",
        "oob_predictions.csv",
        "plots/importance.svg",
        "plots/oob_error.svg",
        "scored_segments.csv",
    ] {
        let path = dir.path().join("demo-out").join(f);
        assert!(path.is_file(), "{f} missing");
        assert!(so.contains(&format!("demo-out/{f}")), "{f} not listed");
    }
    let svg =
        std::fs::read_to_string(dir.path().join("demo-out/plots/importance.svg")).expect("svg");
    assert!(svg.starts_with("<svg") && svg.contains("past_repairs"));
    let scored =
        std::fs::read_to_string(dir.path().join("demo-out/scored_segments.csv")).expect("scored");
    assert_eq!(scored.lines().count(), 501);
    assert!(so.contains("INVENTED"));
    assert!(so.contains("does not replace"));
    let (ins, _) = expect_code(
        &copse_in(
            dir.path(),
            &["inspect", "--model", "demo-out/water_mains.copse", "--json"],
            None,
        ),
        0,
    );
    let j = json_of(&ins);
    let rank = |name: &str| {
        j["importance"]
            .as_array()
            .expect("list")
            .iter()
            .find(|e| e["feature"] == name)
            .and_then(|e| e["rank"].as_u64())
            .expect("ranked")
    };
    assert!(rank("past_repairs") < rank("valve_distance_m"));
}
