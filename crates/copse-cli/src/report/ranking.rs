//! Importance rankings: as a view (a ranked list of `{feature, mean, std_error, rank}`
//! with, when tested, each input's p-values, what the list measures and the tests run)
//! and as the printed table with a bar per input and the notes on its p-values.
use super::{paragraph, Style};
use crate::numbers::{self, column_decimals, fixed, p_value, signed};
use copse_forest::{
    mirrored_null_test, Forest, Importance, Metrics, PermutationImportance, Significance,
    SignificanceTest, MIRROR_FEW_NULL, MIRROR_MIN_NULL,
};
use serde::Serialize;
use std::fmt::Write;

/// One input in a ranking.
#[derive(Debug, Serialize)]
pub struct RankView<'a> {
    feature: &'a str,
    mean: f64,
    std_error: Option<f64>,
    rank: usize,
    /// The input's p-values, when the ranking was tested.
    #[serde(flatten)]
    p: Option<PValues>,
}

/// The p-values of one input: `p_mirror` from the mirrored-null test (null when the
/// test cannot give p-values worth reporting; `importance_tests` says why), and
/// `p_shuffle` from the shuffled-target test when one was run.
#[derive(Debug, Serialize)]
struct PValues {
    p_mirror: Option<f64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    p_shuffle: Option<Option<f64>>,
}

/// The ranking of `imp`, most important first, without p-values.
pub fn ranking(imp: &Importance) -> Vec<RankView<'_>> {
    imp.ranked()
        .into_iter()
        .map(|f| RankView {
            feature: &f.name,
            mean: f.mean,
            std_error: f.std_error,
            rank: f.rank,
            p: None,
        })
        .collect()
}

/// The ranking of `imp` with each input's p-values from `mirror` (the mirrored-null
/// test of `imp`, if it has a null sample) and `shuffle` (if run).
fn tested_ranking<'a>(
    imp: &'a Importance,
    mirror: Option<&Significance>,
    shuffle: Option<&Significance>,
) -> Vec<RankView<'a>> {
    let mut list = ranking(imp);
    for (view, f) in list.iter_mut().zip(imp.ranked()) {
        let j = f.feature;
        view.p = Some(PValues {
            p_mirror: mirror.and_then(|m| m.p_values.get(j).copied()),
            p_shuffle: shuffle.map(|s| s.p_values.get(j).copied()),
        });
    }
    list
}

/// What a ranking measures; for numbers, `baseline_mse` is the error the rises are
/// printed against (the forest's out-of-bag mean squared error, or its mean squared
/// error on the held-out rows), while the ranking's `mean` and `std_error` stay in
/// squared target units.
#[derive(Debug, Serialize)]
pub struct AboutView {
    method: String,
    measure: &'static str,
    replicates: usize,
    #[serde(skip_serializing_if = "Option::is_none")]
    baseline_mse: Option<f64>,
}

/// The out-of-bag mean squared error of a model of numbers, against which its
/// out-of-bag importance is printed (`None` for classes or without out-of-bag rows).
pub fn oob_baseline(model: &Forest) -> Option<f64> {
    match &model.oob().metrics {
        Some(Metrics::Values(v)) if v.mse > 0.0 => Some(v.mse),
        _ => None,
    }
}

/// A test of a ranking: its null size, the independent draws behind it, the smallest
/// p-value it can give (null when it has no null sample), and whether its p-values are
/// reported (with the reason when they are not).
#[derive(Debug, Serialize)]
pub struct TestView {
    test: String,
    measure: &'static str,
    null_size: usize,
    null_draws: usize,
    smallest_p: Option<f64>,
    reported: bool,
    #[serde(skip_serializing_if = "Option::is_none")]
    not_reported_because: Option<String>,
}

impl TestView {
    fn new(s: &Significance) -> Self {
        TestView {
            test: s.test.to_string(),
            measure: s.measure.key(),
            null_size: s.null_size,
            null_draws: s.null_draws,
            smallest_p: Some(s.smallest_p()),
            reported: s.reportable(),
            not_reported_because: (!s.reportable()).then(|| too_few_draws(s.null_draws)),
        }
    }
}

/// Inputs whose rise is at or below zero: the mirrored-null test's independent draws.
fn draws(imp: &Importance) -> usize {
    imp.features.iter().filter(|f| f.mean <= 0.0).count()
}

/// Why the mirrored-null test gives no p-values with `draws` inputs at or below zero.
fn too_few_draws(draws: usize) -> String {
    format!(
        "{} at or below zero, and the mirrored-null test needs at least {MIRROR_MIN_NULL}",
        numbers::count(draws, "input has a rise", "inputs have a rise")
    )
}

/// A permutation importance with its tests: as JSON the keys `importance` (the tested
/// ranking, empty when there is none), `importance_about` (null when there is none),
/// `importance_brier` (classes) and `importance_tests`.
#[derive(Debug, Serialize)]
pub struct ImportanceView<'a> {
    /// The ranking by the rise in error, with p-values.
    pub importance: Vec<RankView<'a>>,
    /// What the ranking measures.
    pub importance_about: Option<AboutView>,
    /// The ranking by the rise in Brier score (classes).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub importance_brier: Option<Vec<RankView<'a>>>,
    /// The tests behind the p-values: the mirrored-null test, and the shuffled-target
    /// test when run.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub importance_tests: Option<Vec<TestView>>,
}

impl<'a> ImportanceView<'a> {
    /// The view of `imp`, if any, with the p-values of `shuffle` when given; for
    /// numbers, `baseline` is the mean squared error the rises are printed against.
    pub fn new(
        imp: Option<&'a PermutationImportance>,
        shuffle: Option<&Significance>,
        baseline: Option<f64>,
    ) -> Self {
        let Some(p) = imp else {
            return ImportanceView {
                importance: Vec::new(),
                importance_about: None,
                importance_brier: None,
                importance_tests: None,
            };
        };
        let mirror = mirrored_null_test(&p.error);
        let mirror_test = match &mirror {
            Some(m) => TestView::new(m),
            None => TestView {
                test: SignificanceTest::MirroredNull.to_string(),
                measure: p.error.measure.key(),
                null_size: 0,
                null_draws: draws(&p.error),
                smallest_p: None,
                reported: false,
                not_reported_because: Some(
                    "no input has a rise below zero, so there is no null sample".to_string(),
                ),
            },
        };
        let shown = mirror.as_ref().filter(|m| m.reportable());
        ImportanceView {
            importance: tested_ranking(&p.error, shown, shuffle),
            importance_about: Some(AboutView {
                method: p.error.method.to_string(),
                measure: p.error.measure.key(),
                replicates: p.error.replicates,
                baseline_mse: baseline,
            }),
            importance_brier: p.brier.as_ref().map(ranking),
            importance_tests: Some(
                std::iter::once(mirror_test)
                    .chain(shuffle.map(TestView::new))
                    .collect(),
            ),
        }
    }
}

/// Column heading of a test's p-values.
pub fn p_head(test: SignificanceTest) -> &'static str {
    match test {
        SignificanceTest::MirroredNull => "p mirror",
        SignificanceTest::ResponsePermutation => "p shuffle",
    }
}

/// The importance ranking: one line per input with its mean rise, standard error, a
/// bar, and with `show_brier` (for classes) the rise in Brier score beside it. Per-tree
/// out-of-bag importance leaves the Brier column out: a fully grown tree's leaves are
/// pure, so its Brier rise is exactly twice its error rise and adds nothing. One
/// p-value column follows per test in `p` (p-values in input order). With a
/// `baseline` error (numbers), each rise and its standard error are printed as a share
/// of it, since a rise in squared target units is hard to read.
pub fn importance_table(
    out: &mut String,
    imp: &PermutationImportance,
    show_brier: bool,
    p: &[&Significance],
    baseline: Option<f64>,
) {
    let brier = if show_brier { imp.brier.as_ref() } else { None };
    let err = &imp.error;
    let ranked = err.ranked();
    let w = ranked
        .iter()
        .map(|f| f.name.len())
        .max()
        .unwrap_or(5)
        .max(5);
    let top = ranked.iter().map(|f| f.mean).fold(0.0f64, f64::max);
    let brier_of = |j: usize| brier.and_then(|b| b.features.get(j)).map(|b| b.mean);
    // One number of decimals for the whole column: four significant digits of the top.
    let d_err = column_decimals(top);
    let top_brier = imp.brier.as_ref().map_or(0.0, |b| {
        b.features.iter().map(|f| f.mean).fold(0.0f64, f64::max)
    });
    let d_brier = column_decimals(top_brier);
    // A rise as printed: a share of the baseline with one decimal, or the rise itself.
    let shown = |v: f64| match baseline {
        Some(b) => format!("{}%", signed(100.0 * v / b, 1)),
        None => signed(v, d_err),
    };
    let shown_se = |s: f64| match baseline {
        Some(b) => format!("{}%", fixed(100.0 * s / b, 1)),
        None => fixed(s, d_err),
    };
    let rise_head = if baseline.is_some() {
        "rise, % of base"
    } else {
        "rise"
    };
    let rw = rise_head.len().max(11);
    let mut head = format!(
        "  {:>3}  {:<w$}  {:>rw$}  {:>9}",
        "#", "input", rise_head, "± s.e."
    );
    if brier.is_some() {
        let _ = write!(head, "  {:>11}", "Brier rise");
    }
    for sig in p {
        let _ = write!(head, "  {:>9}", p_head(sig.test));
    }
    let _ = writeln!(out, "{head}");
    for f in ranked {
        let se = f.std_error.map_or("-".to_string(), shown_se);
        let mut row = format!(
            "  {:>3}  {:<w$}  {:>rw$}  {:>9}",
            f.rank,
            f.name,
            shown(f.mean),
            se
        );
        if let Some(b) = brier_of(f.feature) {
            let _ = write!(row, "  {:>11}", signed(b, d_brier));
        }
        for sig in p {
            let v = sig
                .p_values
                .get(f.feature)
                .map_or("-".to_string(), |&v| p_value(v));
            let _ = write!(row, "  {v:>9}");
        }
        let bar = if top > 0.0 && f.mean > 0.0 {
            "█".repeat(((f.mean / top) * 24.0).round() as usize)
        } else {
            String::new()
        };
        let _ = writeln!(out, "{row}  {bar}");
    }
}

/// Explains what an importance table measures.
pub fn importance_intro(imp: &Importance, held_out: bool, baseline: Option<f64>) -> String {
    let what = imp.measure.to_string();
    let text = if held_out {
        format!(
            "Rise in the model's {what} on these rows when one input's values are shuffled \
             (mean of {} ± standard error). Near zero or below: no detectable effect.",
            numbers::count(imp.replicates, "shuffle", "shuffles")
        )
    } else {
        format!(
            "Rise in out-of-bag {what} when one input's values are shuffled among a tree's \
             out-of-bag rows (mean over {} ± standard error). Near zero or below: no \
             detectable effect.",
            numbers::count(imp.replicates, "tree", "trees")
        )
    };
    let text = match baseline {
        Some(b) => format!(
            "{text} Each rise is shown as a share of the forest's {}{what} ({}, in squared \
             target units; the JSON gives the rises in those units).",
            if held_out { "" } else { "out-of-bag " },
            numbers::sig(b, 4)
        ),
        None => text,
    };
    super::wrap(&text, super::WIDTH)
        .iter()
        .map(|l| format!("  {l}"))
        .collect::<Vec<_>>()
        .join("\n")
}

/// The mirrored-null test of an importance, when its null sample is large enough to
/// show ([`MIRROR_MIN_NULL`]).
pub fn shown_mirror(imp: &Importance) -> Option<Significance> {
    mirrored_null_test(imp).filter(Significance::reportable)
}

/// The importance table with its p-value columns and, under it, what each p-value
/// means: the mirrored-null test when the importances allow it, and the shuffled-target
/// test when given. `hint` says how to get p-values when the mirrored test cannot give
/// them.
pub fn importance_with_tests(
    out: &mut String,
    imp: &PermutationImportance,
    show_brier: bool,
    shuffle: Option<&Significance>,
    baseline: Option<f64>,
    hint: &str,
) {
    let mirror = mirrored_null_test(&imp.error);
    let mirror_shown = mirror.as_ref().filter(|s| s.reportable());
    let cols: Vec<&Significance> = mirror_shown.into_iter().chain(shuffle).collect();
    importance_table(out, imp, show_brier, &cols, baseline);
    let mut notes = Vec::new();
    match mirror_shown {
        Some(m) => {
            let mut note = format!(
                "p mirror: the {} inputs whose rise is at or below zero, each rise below zero \
                 also mirrored, stand in for inputs that do not matter ({} values, so the \
                 smallest possible p is {}); p is the share of those values, counting the \
                 input's own rise as one more, that are at least as large (mirrored-null \
                 test, Janitza, Celik & Boulesteix 2018). It assumes most inputs do not \
                 matter, and on out-of-bag importance it is an approximation that runs \
                 slightly liberal.",
                m.null_draws,
                m.null_size,
                p_value(m.smallest_p())
            );
            if m.null_draws < MIRROR_FEW_NULL {
                note.push_str(&format!(
                    " With fewer than {MIRROR_FEW_NULL} such inputs these p-values are coarse \
                     (the method's authors advise about 100 null values)."
                ));
            }
            notes.push(note);
        }
        // Withheld: with shuffled-target p-values beside it there is nothing to say;
        // without, one short line says why and where p-values come from (the JSON's
        // `importance_tests` gives the full reason).
        None if shuffle.is_some() => {}
        None => notes.push(format!(
            "No p mirror ({}); {hint}",
            match &mirror {
                Some(m) => format!(
                    "{} at or below zero, {MIRROR_MIN_NULL} needed",
                    numbers::count(m.null_draws, "rise", "rises")
                ),
                None => "no rise below zero".to_string(),
            }
        )),
    }
    if let Some(s) = shuffle {
        notes.push(format!(
            "p shuffle: the target was shuffled {} times and a forest trained on each; p is \
             the share of those forests, counting the real one, that give the input at least \
             this rise (Altmann, Tolosi, Sander & Lengauer 2010); smallest possible p {}.",
            s.null_size,
            p_value(s.smallest_p())
        ));
    }
    for n in notes {
        let _ = writeln!(out);
        paragraph(out, &n);
    }
}

/// The out-of-bag importance section of a model, with the p-values of a
/// shuffled-target test if one was run.
pub fn importance_section(
    out: &mut String,
    st: Style,
    model: &Forest,
    shuffle: Option<&Significance>,
) {
    let _ = writeln!(out, "{}", st.head("WHICH INPUTS MATTER"));
    match model.oob_importance() {
        Some(imp) => {
            let baseline = oob_baseline(model);
            let _ = writeln!(out, "{}", importance_intro(&imp.error, false, baseline));
            let _ = writeln!(out);
            importance_with_tests(
                out,
                imp,
                false,
                shuffle,
                baseline,
                "see --shuffled-target-runs N.",
            );
        }
        None if model.pool_record().is_some() => {
            let _ = writeln!(
                out,
                "  a pooled model has no out-of-bag importance of its own (each partition's is \
                 listed\n  with it); run 'copse importance' on held-out data to rank its inputs"
            );
        }
        None => {
            let _ = writeln!(
                out,
                "  not available: no tree had out-of-bag rows; run 'copse importance' on held-out data"
            );
        }
    }
    let _ = writeln!(out);
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_model_without_out_of_bag_importance_gives_an_empty_list_and_no_tests() {
        let view = ImportanceView::new(None, None, None);
        assert_eq!(
            crate::report::json_text(&view).unwrap(),
            r#"{"importance":[],"importance_about":null}"#
        );
    }
}
