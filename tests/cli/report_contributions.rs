//! The HTML page's ranking by mean absolute contribution: its figures are the
//! library's on the same rows, in the same order as `copse importance --json` gives
//! for those rows, and a model trained with class balancing gets a section that says
//! why the ranking is absent.
//!
//! Data: the invented demo register `demo-data/water_mains.csv`, split as in
//! `decision_report` (1,400 rows to train on, 600 held out).
use super::decision_report::{evaluate_with_page, split_demo, train_demo, CONTRIBUTIONS};
use super::html_check::well_formed_headings;
use super::{copse_in, expect_code, json_of, tmp};
use copse_data::{read_labelled, CsvInput, Delimiter, Missing};
use copse_forest::Forest;

/// `text` with every run of white space made one space (the page's text is wrapped).
fn flat(text: &str) -> String {
    text.split_whitespace().collect::<Vec<_>>().join(" ")
}

/// The text of the page's section headed `heading` (from its `h2` to the end of its
/// `section`).
fn section<'a>(html: &'a str, heading: &str) -> &'a str {
    let start = html
        .find(&format!("<h2>{heading}</h2>"))
        .unwrap_or_else(|| panic!("{heading} on the page"));
    let end = html[start..].find("</section>").expect("the section ends") + start;
    &html[start..end]
}

/// The ranked rows of the section's printed table: (rank, input, printed figure).
fn ranked_rows(section: &str) -> Vec<(usize, String, String)> {
    section
        .lines()
        .filter_map(|l| {
            let mut w = l.split_whitespace();
            let rank = w.next()?.parse().ok()?;
            let name = w.next()?.to_string();
            let figure = w.next()?;
            figure.parse::<f64>().ok()?;
            Some((rank, name, figure.to_string()))
        })
        .collect()
}

/// The page of `copse evaluate --report` ranks the inputs by the library's mean
/// absolute contribution over the same 300 rows (drawn with the page's seed from the
/// 600 held-out rows): the same order, and every printed figure within half a unit of
/// its last printed decimal of the library's value. `copse importance --json` on a
/// file of exactly those rows gives the same order (its `contribution_ranking`).
#[test]
fn the_page_ranking_is_the_library_ranking_on_the_page_rows() {
    let dir = tmp();
    split_demo(dir.path());
    train_demo(dir.path(), &[]);
    let (_, html) = evaluate_with_page(dir.path());
    let part = section(&html, CONTRIBUTIONS);
    assert!(
        flat(part).contains("over 300 of the 600 rows of held_out.csv (drawn at random"),
        "{part}"
    );
    assert!(flat(part).contains("It describes the model, not causes."));
    assert_eq!(part.matches("<svg").count(), 1, "one bar chart");

    let model = Forest::load(dir.path().join("m.copse")).expect("the model loads");
    let path = dir.path().join("held_out.csv");
    let input = CsvInput::open(path.to_str().expect("utf-8"), Delimiter::Comma).expect("opens");
    let data = read_labelled(input, &model, Missing::of_model(&model)).expect("rows read");
    let rows = copse_forest::effects::sample_rows(600, 300, 1);
    assert_eq!(rows.len(), 300);
    let sample = data.x.select(copse_forest::ndarray::Axis(0), &rows);
    let want = model
        .contribution_ranking(sample.view(), 300)
        .expect("the ranking");
    let got = ranked_rows(part);
    assert_eq!(got.len(), model.n_features(), "{got:?}");
    for (k, (rank, name, figure)) in got.iter().enumerate() {
        let j = want.order[k];
        assert_eq!(
            (*rank, name.as_str()),
            (k + 1, model.meta()[j].name.as_str())
        );
        let decimals = figure.split('.').nth(1).map_or(0, str::len) as i32;
        let printed: f64 = figure.parse().expect("a number");
        assert!(
            (printed - want.mean_abs[j]).abs() <= 0.5 * 10f64.powi(-decimals) + 1e-12,
            "{name}: {printed} against {}",
            want.mean_abs[j]
        );
    }

    // The same rows as a file of their own, ranked by `copse importance`.
    let text = std::fs::read_to_string(&path).expect("held-out rows");
    let lines: Vec<&str> = text.lines().collect();
    let mut picked = format!("{}\n", lines[0]);
    for &i in &rows {
        picked.push_str(lines[i + 1]);
        picked.push('\n');
    }
    std::fs::write(dir.path().join("picked.csv"), picked).expect("written");
    let args = [
        "importance",
        "--model",
        "m.copse",
        "--data",
        "picked.csv",
        "--repeats",
        "1",
        "--json",
    ];
    let j = json_of(&expect_code(&copse_in(dir.path(), &args, None), 0).0);
    let order: Vec<&str> = j["contribution_ranking"]["ranking"]
        .as_array()
        .expect("a ranking")
        .iter()
        .map(|r| r["feature"].as_str().expect("a name"))
        .collect();
    let page: Vec<&str> = got.iter().map(|r| r.1.as_str()).collect();
    assert_eq!(order, page);
}

/// A model trained with class balancing has no contributions: its page still has the
/// section, saying why, with no chart, and the run succeeds.
#[test]
fn a_balanced_model_page_says_why_the_ranking_is_absent() {
    let dir = tmp();
    split_demo(dir.path());
    train_demo(dir.path(), &["--balanced", "--report", "b.html"]);
    let html = std::fs::read_to_string(dir.path().join("b.html")).expect("the page");
    let heads = well_formed_headings(&html).unwrap_or_else(|e| panic!("{e}"));
    assert!(heads.iter().any(|h| h == CONTRIBUTIONS), "{heads:?}");
    let part = section(&html, CONTRIBUTIONS);
    assert!(
        flat(part).contains(
            "Not shown: contributions are not available for a model trained with \
             class-balanced sampling"
        ),
        "{part}"
    );
    assert!(!part.contains("<svg"));
    assert!(ranked_rows(part).is_empty());
}
