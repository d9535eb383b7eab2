//! The decision layer through the real binary: the figures in the JSON are the
//! engine's functions on the same scores (the formulas themselves are checked against
//! their published sources in `copse_forest::decision`), evaluating on training rows
//! warns, errors by group, the notices of the first block, importance led by the Brier
//! rise, and the HTML report: well formed with every section present (its rendering in
//! a real headless browser is checked in `tests/browser/`).
//!
//! Data: the invented demo register `demo-data/water_mains.csv`, split into its first
//! 1,400 rows for training and its last 600 as rows the model has not seen; iris
//! (Fisher 1936; provenance in `tests/data/README.md`) for more than two classes.
use super::html_check::well_formed_headings;
use super::{copse_in, expect_code, json_of, repo, tmp};
use copse_data::{read_labelled, CsvInput, Delimiter, Missing};
use copse_forest::decision::{
    at_cutoff, auc_std_error, catch_by_rank, reliability, wilson, STANDARD_TOP_SHARES,
};
use copse_forest::{Forest, Outcome};
use serde_json::Value;
use std::path::Path;

const TARGET: &str = "failed_within_year";

/// Writes `train.csv` (the first 1,400 rows) and `held_out.csv` (the other 600, with
/// an extra column `district` that is not an input) into `dir`.
pub(super) fn split_demo(dir: &Path) {
    let text = std::fs::read_to_string(repo("demo-data/water_mains.csv")).expect("demo data");
    let mut lines = text.lines();
    let header = lines.next().expect("a header");
    let rows: Vec<&str> = lines.collect();
    assert_eq!(rows.len(), 2000);
    let mut train = format!("{header}\n");
    for r in &rows[..1400] {
        train.push_str(r);
        train.push('\n');
    }
    let mut held = format!("{header},district\n");
    for (i, r) in rows[1400..].iter().enumerate() {
        held.push_str(&format!("{r},d{}\n", i % 3));
    }
    std::fs::write(dir.join("train.csv"), train).expect("written");
    std::fs::write(dir.join("held_out.csv"), held).expect("written");
}

/// Trains the split demo model in `dir` with `extra` options; returns stdout.
pub(super) fn train_demo(dir: &Path, extra: &[&str]) -> String {
    let mut args = vec![
        "train",
        "--data",
        "train.csv",
        "--target",
        TARGET,
        "--ignore",
        "segment_id",
        "--out",
        "m.copse",
        "--trees",
        "120",
        "--seed",
        "3",
    ];
    args.extend_from_slice(extra);
    expect_code(&copse_in(dir, &args, None), 0).0
}

/// The model and its probability of `yes` on `data`, with the truth, computed by the
/// library the way the command reads the file.
fn library_scores(dir: &Path, data: &str) -> (Vec<f64>, Vec<bool>) {
    let model = Forest::load(dir.join("m.copse")).expect("the model loads");
    let input = CsvInput::open(dir.join(data).to_str().expect("utf-8"), Delimiter::Comma)
        .expect("the file opens");
    let rows = read_labelled(input, &model, Missing::of_model(&model)).expect("rows read");
    let probs = model.predict(rows.x.view()).expect("scores");
    let yes = model
        .classes()
        .iter()
        .position(|c| c == "yes")
        .expect("yes");
    let Outcome::Classes { codes, .. } = &rows.outcome else {
        panic!("classes")
    };
    (
        probs.column(yes).to_vec(),
        codes.iter().map(|&c| c as usize == yes).collect(),
    )
}

fn f(v: &Value) -> f64 {
    v.as_f64().unwrap_or(f64::NAN)
}

fn u(v: &Value) -> usize {
    v.as_u64().expect("a count") as usize
}

/// The decision figures of `copse evaluate --json` are the engine's on the same
/// held-out scores: catch by rank (with the budget), the cut-off table, the cost
/// cut-off p* = c_FP / (c_FP + c_FN) (Elkan 2001, Theorem 1: 1:9 gives 0.1), the
/// reliability table whose parts add up to the binned Brier score (Murphy 1973), the
/// DeLong standard error of ROC AUC, and Wilson intervals (Wilson 1927).
#[test]
fn evaluate_decision_figures_are_the_engine_functions_on_the_same_scores() {
    let dir = tmp();
    split_demo(dir.path());
    train_demo(dir.path(), &[]);
    let (so, _) = expect_code(
        &copse_in(
            dir.path(),
            &[
                "evaluate",
                "--model",
                "m.copse",
                "--data",
                "held_out.csv",
                "--json",
                "--budget",
                "50",
                "--cutoff",
                "0.3",
                "--costs",
                "1:9",
            ],
            None,
        ),
        0,
    );
    let j = json_of(&so);
    let (scores, positive) = library_scores(dir.path(), "held_out.csv");
    let d = &j["decision"];
    assert_eq!(d["positive_class"], "yes");
    assert_eq!(d["scores"], "held-out");

    let want = catch_by_rank(&scores, &positive, &STANDARD_TOP_SHARES, Some(50)).expect("catch");
    let got = d["catch_by_rank"]["points"].as_array().expect("points");
    assert_eq!(got.len(), want.points.len());
    for (g, w) in got.iter().zip(&want.points) {
        assert_eq!((u(&g["top_rows"]), u(&g["caught"])), (w.top_rows, w.caught));
        assert!((f(&g["caught_share"]) - w.caught_share).abs() < 1e-12);
        assert!((f(&g["lift"]) - w.lift).abs() < 1e-12);
    }
    assert!(
        got.iter().any(|g| u(&g["top_rows"]) == 50),
        "the budget line"
    );

    let t = at_cutoff(&scores, &positive, 0.3);
    let c = &d["at_cutoff"];
    assert_eq!(
        (
            u(&c["caught"]),
            u(&c["false_alarms"]),
            u(&c["missed"]),
            u(&c["passed"])
        ),
        (t.caught, t.false_alarms, t.missed, t.passed)
    );
    let ri = wilson(t.caught, t.caught + t.missed).expect("positives");
    assert!((f(&c["recall_interval"]["low"]) - ri.low).abs() < 1e-12);

    let cost = &d["cost"];
    assert!((f(&cost["cutoff"]) - 0.1).abs() < 1e-12);
    let tc = at_cutoff(&scores, &positive, 0.1);
    assert_eq!(u(&cost["table"]["caught"]), tc.caught);
    let per_row = (tc.false_alarms as f64 + 9.0 * tc.missed as f64) / scores.len() as f64;
    assert!((f(&cost["cost_per_row"]) - per_row).abs() < 1e-12);

    let r = reliability(&scores, &positive, 10).expect("bins");
    let cal = &d["calibration"];
    assert_eq!(cal["bins"].as_array().expect("bins").len(), 10);
    assert!((f(&cal["reliability"]) - r.reliability).abs() < 1e-12);
    let sum = f(&cal["reliability"]) - f(&cal["resolution"]) + f(&cal["uncertainty"]);
    assert!((f(&cal["brier_binned"]) - sum).abs() < 1e-12);

    let (auc, se) = auc_std_error(&scores, &positive).expect("both classes");
    let a = &j["headline_figures"]["roc_auc"];
    assert!((f(&a["value"]) - auc).abs() < 1e-12 && (f(&a["std_error"]) - se).abs() < 1e-12);
    assert!((f(&a["value"]) - f(&j["evaluation"]["roc_auc"])).abs() < 1e-12);
    let e = &j["headline_figures"]["error"];
    let n = u(&j["headline_figures"]["rows"]);
    let wrong = (f(&e["value"]) * n as f64).round() as usize;
    let wi = wilson(wrong, n).expect("rows");
    assert!((f(&e["interval"]["high"]) - wi.high).abs() < 1e-12);
    // No skill: always the most common class, wrong on exactly the positive rows.
    let pos = positive.iter().filter(|&&p| p).count();
    assert!((f(&e["no_skill"]) - pos as f64 / n as f64).abs() < 1e-12);
    assert_eq!(j["training_rows"]["optimistic"], false);
}

/// Wrong conclusion 1: judged on its own training rows a forest looks nearly perfect.
/// Evaluating (and ranking importance) on the training file says the figures are
/// optimistic and points to the out-of-bag figures; the rows it has not seen do not
/// (they match only by the fingerprint's chance rate, about 2.2%, far below 10%).
#[test]
fn evaluating_on_training_rows_warns_and_fresh_rows_do_not() {
    let dir = tmp();
    split_demo(dir.path());
    train_demo(dir.path(), &[]);
    let eval = |data: &str, json: bool| {
        let mut args = vec!["evaluate", "--model", "m.copse", "--data", data];
        if json {
            args.push("--json");
        }
        expect_code(&copse_in(dir.path(), &args, None), 0)
    };
    let (text, err) = eval("train.csv", false);
    assert!(
        text.contains("READ FIRST") && text.contains("optimistic"),
        "{text}"
    );
    assert!(text.contains("out-of-bag"), "{text}");
    assert!(
        err.contains("warning") && err.contains("optimistic"),
        "{err}"
    );
    let j = json_of(&eval("train.csv", true).0);
    assert_eq!(j["training_rows"]["matching"], 1400);
    assert_eq!(j["training_rows"]["optimistic"], true);

    let (text, err) = eval("held_out.csv", false);
    assert!(
        !text.contains("optimistic") && !err.contains("optimistic"),
        "{text}"
    );
    let j = json_of(&eval("held_out.csv", true).0);
    let share = f(&j["training_rows"]["share"]);
    assert!(share < 0.05, "{share}");

    let imp = |data: &str| {
        expect_code(
            &copse_in(
                dir.path(),
                &[
                    "importance",
                    "--model",
                    "m.copse",
                    "--data",
                    data,
                    "--repeats",
                    "2",
                ],
                None,
            ),
            0,
        )
    };
    assert!(imp("train.csv").0.contains("optimistic"));
    assert!(!imp("held_out.csv").0.contains("optimistic"));
}

/// `--by` a column that is not an input: each group's rows add up to the file, and a
/// group's error and Wilson interval are those of its own rows.
#[test]
fn errors_by_group_split_the_rows_and_measure_each_group() {
    let dir = tmp();
    split_demo(dir.path());
    train_demo(dir.path(), &[]);
    let (so, _) = expect_code(
        &copse_in(
            dir.path(),
            &[
                "evaluate",
                "--model",
                "m.copse",
                "--data",
                "held_out.csv",
                "--json",
                "--by",
                "district",
            ],
            None,
        ),
        0,
    );
    let j = json_of(&so);
    let groups = j["groups"]["groups"].as_array().expect("groups");
    let names: Vec<&str> = groups
        .iter()
        .map(|g| g["group"].as_str().unwrap_or(""))
        .collect();
    assert_eq!(names, ["d0", "d1", "d2"]);
    assert_eq!(groups.iter().map(|g| u(&g["rows"])).sum::<usize>(), 600);
    // Group d1 by hand: rows 1, 4, 7, ... of the file, predicted class = the more
    // probable one (ties to the first class, 'no').
    let (scores, positive) = library_scores(dir.path(), "held_out.csv");
    let (mut rows, mut wrong) = (0, 0);
    for i in (1..600).step_by(3) {
        rows += 1;
        let called_yes = scores[i] > 0.5;
        wrong += usize::from(called_yes != positive[i]);
    }
    let e = &groups[1]["figures"]["error"];
    assert!((f(&e["value"]) - wrong as f64 / rows as f64).abs() < 1e-12);
    let w = wilson(wrong, rows).expect("rows");
    assert!((f(&e["interval"]["low"]) - w.low).abs() < 1e-12);

    let (text, _) = expect_code(
        &copse_in(
            dir.path(),
            &[
                "evaluate",
                "--model",
                "m.copse",
                "--data",
                "held_out.csv",
                "--by",
                "material",
            ],
            None,
        ),
        0,
    );
    assert!(
        text.contains("ERRORS BY GROUP (column 'material')"),
        "{text}"
    );
    for bad in [
        &["--by", "segment_id"][..],
        &["--by", "nowhere"],
        &["--positive", "maybe"],
    ] {
        let mut args = vec!["evaluate", "--model", "m.copse", "--data", "held_out.csv"];
        args.extend_from_slice(bad);
        expect_code(&copse_in(dir.path(), &args, None), 2);
    }
}

/// The training report on out-of-bag scores: the decision sections and keys, a
/// balanced model says its probabilities were shifted back to the training shares,
/// and with more than two classes only the parts that apply (or one class against
/// the rest with `--positive`).
#[test]
fn train_reports_decisions_on_out_of_bag_scores() {
    let dir = tmp();
    split_demo(dir.path());
    let j = json_of(&train_demo(dir.path(), &["--json", "--budget", "25"]));
    assert_eq!(j["decision"]["scores"], "out-of-bag");
    assert_eq!(
        u(&j["decision"]["positives"]),
        u(&j["data"]["class_counts"][1])
    );
    assert!((f(&j["headline_figures"]["error"]["value"]) - f(&j["oob"]["error"])).abs() < 1e-12);
    assert_eq!(j["probabilities_shifted"], false);
    let text = train_demo(dir.path(), &["--balanced"]);
    for head in [
        "READ FIRST",
        "CATCH BY RANK",
        "AT A CUT-OFF OF 0.5",
        "DO THE PROBABILITIES",
    ] {
        assert!(text.contains(head), "{head}\n{text}");
    }
    assert!(
        text.contains("shifted back to the training class shares"),
        "{text}"
    );

    let iris = repo("tests/data/iris.csv");
    let iris = iris.to_str().expect("utf-8");
    let args = [
        "train", "--data", iris, "--target", "species", "--out", "i.copse", "--trees", "60",
        "--json",
    ];
    let j = json_of(&expect_code(&copse_in(dir.path(), &args, None), 0).0);
    assert!(j["decision"].is_null());
    assert_eq!(
        j["headline_figures"]["wrong_within_class"]
            .as_array()
            .map(Vec::len),
        Some(3)
    );
    let mut with_positive = args.to_vec();
    with_positive.extend(["--positive", "virginica"]);
    let j = json_of(&expect_code(&copse_in(dir.path(), &with_positive, None), 0).0);
    assert_eq!(j["decision"]["positive_class"], "virginica");
    assert_eq!(u(&j["decision"]["positives"]), 50);
}

/// Wrong conclusion 3 in the reports: a 0/1 target is read as two classes, and the
/// first block of the training and evaluation reports says so (JSON `model_notes`).
#[test]
fn the_first_block_prints_the_model_notes() {
    let dir = tmp();
    let mut csv = String::from("x,z,y\n");
    for i in 0..80 {
        csv.push_str(&format!("{i},{},{}\n", (i * 7) % 11, u8::from(i % 4 == 0)));
    }
    std::fs::write(dir.path().join("codes.csv"), csv).expect("written");
    let args = [
        "train",
        "--data",
        "codes.csv",
        "--target",
        "y",
        "--out",
        "c.copse",
        "--trees",
        "30",
    ];
    let text = expect_code(&copse_in(dir.path(), &args, None), 0).0;
    let first = text.split("\n\n").nth(1).unwrap_or("");
    let words = first.split_whitespace().collect::<Vec<_>>().join(" ");
    assert!(
        words.starts_with("READ FIRST") && words.contains("two classes"),
        "{text}"
    );
    let (so, _) = expect_code(
        &copse_in(
            dir.path(),
            &[
                "evaluate",
                "--model",
                "c.copse",
                "--data",
                "codes.csv",
                "--json",
            ],
            None,
        ),
        0,
    );
    let notes = json_of(&so)["model_notes"].to_string();
    assert!(notes.contains("two classes"), "{notes}");
}

/// Importance for classes leads with the rise in Brier score, the misclassification
/// rise beside it; the chart does the same.
#[test]
fn class_importance_leads_with_the_brier_rise() {
    let dir = tmp();
    split_demo(dir.path());
    train_demo(dir.path(), &[]);
    let args = [
        "importance",
        "--model",
        "m.copse",
        "--data",
        "held_out.csv",
        "--repeats",
        "3",
    ];
    let (text, _) = expect_code(
        &copse_in(
            dir.path(),
            &[&args[..], &["--plot", "imp.svg"]].concat(),
            None,
        ),
        0,
    );
    let brier = text.find("Brier rise").expect("a Brier column");
    let misclass = text
        .find("misclass rise")
        .expect("the misclassification beside it");
    let later = text
        .find("The same inputs by the rise in misclassification")
        .expect("the tests");
    assert!(brier < misclass && misclass < later, "{text}");
    let svg = std::fs::read_to_string(dir.path().join("imp.svg")).expect("chart");
    assert!(svg.contains("rise in Brier score") && svg.contains("rise in misclassification"));
    let j = json_of(
        &expect_code(
            &copse_in(dir.path(), &[&args[..], &["--json"]].concat(), None),
            0,
        )
        .0,
    );
    assert_eq!(j["importance_leading_measure"], "brier");
}

/// The heading of the page's effect curves, which the printed report does not have.
const EFFECTS: &str = "HOW THE PREDICTIONS MOVE WITH THE TOP INPUTS";
/// The heading of the page's contribution ranking, which the printed report does not
/// have either.
pub(super) const CONTRIBUTIONS: &str = "HOW FAR EACH INPUT MOVES A PREDICTION";

/// The section headings of a printed report (unindented lines after the title).
fn printed_headings(text: &str) -> Vec<String> {
    text.lines()
        .skip(1)
        .filter(|l| !l.is_empty() && !l.starts_with(' '))
        .map(str::to_string)
        .collect()
}

pub(super) fn evaluate_with_page(dir: &Path) -> (String, String) {
    let args = [
        "evaluate",
        "--model",
        "m.copse",
        "--data",
        "held_out.csv",
        "--costs",
        "1:4",
        "--by",
        "district",
        "--report",
        "page.html",
    ];
    let (text, _) = expect_code(&copse_in(dir, &args, None), 0);
    let html = std::fs::read_to_string(dir.join("page.html")).expect("the page");
    (text, html)
}

/// The HTML page is well formed, holds every section of the printed report (as its
/// headings), the charts inline, the decision tables as tables and the caution, and
/// refers to nothing outside the file.
#[test]
fn the_html_report_is_well_formed_and_has_every_section() {
    let dir = tmp();
    split_demo(dir.path());
    let text = train_demo(dir.path(), &["--report", "train.html", "--costs", "1:9"]);
    let (eval_text, eval_html) = evaluate_with_page(dir.path());
    let train_html = std::fs::read_to_string(dir.path().join("train.html")).expect("page");
    for (text, html) in [(text, train_html), (eval_text, eval_html)] {
        let heads = well_formed_headings(&html).unwrap_or_else(|e| panic!("{e}"));
        let mut printed: Vec<String> = printed_headings(&text)
            .iter()
            .map(|h| h.replace('\'', "&#39;"))
            .collect();
        // The page adds the contribution ranking and the effect curves of the top
        // inputs before the caution.
        let caution = printed
            .iter()
            .position(|h| h == "CAUTION")
            .expect("caution");
        printed.insert(caution, EFFECTS.to_string());
        printed.insert(caution, CONTRIBUTIONS.to_string());
        assert_eq!(heads, printed);
        // Three curves (the top three inputs), each with the data's rows under it.
        assert_eq!(
            html.matches("the data&#39;s rows along the axis").count(),
            3
        );
        assert!(
            html.contains("rows of the data at each value")
                || html.contains("rows of the data in each category")
        );
        for part in [
            "CATCH BY RANK",
            "LOWEST EXPECTED COST",
            "DO THE PROBABILITIES",
            "CAUTION",
        ] {
            assert!(
                heads.iter().any(|h| h.starts_with(part)),
                "{part}: {heads:?}"
            );
        }
        assert!(html.matches("<svg").count() >= 2, "inline charts");
        assert!(html.contains("<table>") && html.contains("Elkan 2001"));
        for outside in [
            "<script", "http://", "https://", "@import", "url(", "<link", "<img",
        ] {
            // The SVG namespace is a name, not a fetch; nothing else may refer out.
            let hits = html.matches(outside).count();
            let allowed = if outside == "http://" {
                html.matches("xmlns=\"http://www.w3.org/2000/svg\"").count()
            } else {
                0
            };
            assert_eq!(hits, allowed, "{outside}");
        }
    }
}
