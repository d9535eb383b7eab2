//! The report of `copse stability`: one tree, bagged trees and a random forest trained
//! with several seeds on the same data, and how much each one's error, held-out
//! answers and importance ranking move from seed to seed.
use super::{caution, error_measure, paragraph, wrap, Style, CAUTION, LABEL, WIDTH};
use crate::numbers::{fixed, pct, sig};
use copse_forest::{KindStability, ModelKind, StabilityReport, Task};
use serde::Serialize;
use std::fmt::Write;

/// The stability report.
#[derive(Serialize)]
pub struct StabilityView<'a> {
    command: &'static str,
    copse_version: &'static str,
    task: &'static str,
    target: &'a str,
    source: &'a str,
    rows: usize,
    inputs: &'a [String],
    seeds: usize,
    folds: usize,
    trees: usize,
    forest_features_per_split: usize,
    models: Vec<KindView<'a>>,
    about: About,
    caution: &'static str,
    #[serde(skip)]
    report: &'a StabilityReport,
}

/// How one kind of model varied over the seeds.
#[derive(Serialize)]
struct KindView<'a> {
    model: &'static str,
    errors: &'a [f64],
    error_mean: f64,
    error_sd: f64,
    error_min: f64,
    error_max: f64,
    answer_change: Option<f64>,
    ranking_tau: Option<f64>,
    importance_by_seed: &'a [Vec<f64>],
}

/// What the measures of the report are.
#[derive(Serialize)]
struct About {
    error: String,
    one_tree_error: &'static str,
    ensemble_error: &'static str,
    answer_change: &'static str,
    ranking_tau: &'static str,
}

impl<'a> StabilityView<'a> {
    /// The report of `r`, made on `source` with target `target` and inputs `inputs`.
    pub fn new(
        r: &'a StabilityReport,
        source: &'a str,
        target: &'a str,
        inputs: &'a [String],
    ) -> Self {
        let task = if r.classes {
            Task::Classify
        } else {
            Task::Regress
        };
        StabilityView {
            command: "stability",
            copse_version: env!("CARGO_PKG_VERSION"),
            task: task.name(),
            target,
            source,
            rows: r.rows,
            inputs,
            seeds: r.seeds,
            folds: r.folds,
            trees: r.trees,
            forest_features_per_split: r.forest_features_per_split,
            models: r
                .kinds
                .iter()
                .map(|k| KindView {
                    model: k.kind.key(),
                    errors: &k.errors,
                    error_mean: k.error_mean,
                    error_sd: k.error_sd,
                    error_min: k.error_min,
                    error_max: k.error_max,
                    answer_change: k.prediction_change,
                    ranking_tau: k.rank_tau,
                    importance_by_seed: &k.importance,
                })
                .collect(),
            about: About {
                error: error_measure(task).to_string(),
                one_tree_error: "cross-validated",
                ensemble_error: "out-of-bag",
                answer_change: if r.classes {
                    "share of rows whose held-out predicted class differs between two seeds, mean over pairs"
                } else {
                    "root mean squared difference of held-out predictions between two seeds over the target's standard deviation, mean over pairs"
                },
                ranking_tau:
                    "Kendall's tau-b between two seeds' importance values, mean over pairs",
            },
            caution: CAUTION,
            report: r,
        }
    }

    /// The printed report.
    pub fn text(&self, st: Style) -> String {
        let (r, source, target, names) = (self.report, self.source, self.target, self.inputs);
        let mut out = String::new();
        // Label/value lines; long values wrap under the value column.
        let line = |out: &mut String, label: &str, value: &str| {
            for (i, l) in wrap(value, WIDTH - LABEL).iter().enumerate() {
                let label = if i == 0 { label } else { "" };
                let _ = writeln!(out, "  {label:<w$}{l}", w = LABEL);
            }
        };
        let _ = writeln!(out, "copse stability report\n");
        let _ = writeln!(out, "{}", st.head("DATA"));
        line(&mut out, "source", source);
        line(&mut out, "rows", &format!("{} with a target value", r.rows));
        line(
            &mut out,
            "target",
            &format!(
                "{target} ({})",
                if r.classes {
                    "classification"
                } else {
                    "regression"
                }
            ),
        );
        line(&mut out, "inputs", &names.len().to_string());
        let _ = writeln!(out);

        let _ = writeln!(out, "{}", st.head("WHAT WAS COMPARED"));
        line(
            &mut out,
            "seeds",
            &format!(
                "{}: every kind of model is trained once per seed on the same rows",
                r.seeds
            ),
        );
        line(
            &mut out,
            "one tree",
            &format!(
                "every input at every split, no resampling; judged by {}-fold cross-validation \
             with folds drawn by the seed (grown on the same rows, a tree is the same for \
             every seed)",
                r.folds
            ),
        );
        line(
            &mut out,
            "bagged trees",
            &format!(
                "{} trees on bootstrap samples, every input at every split; judged out of bag",
                r.trees
            ),
        );
        line(
            &mut out,
            "random forest",
            &format!(
                "{} trees on bootstrap samples, {} of {} inputs per split; judged out of bag",
                r.trees,
                r.forest_features_per_split,
                names.len()
            ),
        );
        let _ = writeln!(out);

        let _ = writeln!(
            out,
            "{}",
            st.head("HOW MUCH EACH MODEL MOVES WHEN ONLY THE SEED CHANGES")
        );
        let fmt_err = |v: f64| error_words(v, r.classes);
        let (err_head, change_head) = if r.classes {
            ("error", "answers changed")
        } else {
            ("mean sq. error", "answer shift")
        };
        let mut rows: Vec<[String; 5]> = vec![[
            String::new(),
            err_head.to_string(),
            "spread over seeds".to_string(),
            change_head.to_string(),
            "ranking tau".to_string(),
        ]];
        for k in &r.kinds {
            rows.push([
                k.kind.to_string(),
                fmt_err(k.error_mean),
                format!(
                    "± {} ({} to {})",
                    fmt_err(k.error_sd),
                    fmt_err(k.error_min),
                    fmt_err(k.error_max)
                ),
                k.prediction_change.map_or("-".to_string(), pct),
                k.rank_tau.map_or("-".to_string(), |t| fixed(t, 2)),
            ]);
        }
        let width = |c: usize| rows.iter().map(|r| r[c].chars().count()).max().unwrap_or(0);
        let w: Vec<usize> = (0..5).map(width).collect();
        for row in &rows {
            let _ = writeln!(
                out,
                "  {:<w0$}  {:>w1$}  {:<w2$}  {:>w3$}  {:>w4$}",
                row[0],
                row[1],
                row[2],
                row[3],
                row[4],
                w0 = w[0],
                w1 = w[1],
                w2 = w[2],
                w3 = w[3],
                w4 = w[4]
            );
        }
        let _ = writeln!(out);
        let change_words = if r.classes {
            "answers changed: share of rows whose held-out predicted class differs between two \
         seeds, averaged over every pair of seeds."
        } else {
            "answer shift: root mean squared difference between two seeds' held-out predictions, \
         as a share of the target's standard deviation, averaged over every pair of seeds."
        };
        let notes = [
            format!(
                "{err_head}: cross-validated for one tree, out-of-bag for the ensembles; spread: \
             standard deviation over the seeds, then smallest to largest."
            ),
            format!(
            "{change_words} Held-out: each row is predicted by a model that did not learn from \
             it."
        ),
            "ranking tau: Kendall's tau-b between two seeds' importance values (1 = the same \
         order, 0 = unrelated), averaged over every pair of seeds. Importance is the rise in \
         error when an input is shuffled: on held-out folds for one tree, out of bag for the \
         ensembles."
                .to_string(),
        ];
        for n in notes {
            paragraph(&mut out, &n);
        }
        let _ = writeln!(out);
        if let Some(s) = summary(&r.kinds, r.classes) {
            let _ = writeln!(out, "{}", st.head("IN SHORT"));
            paragraph(&mut out, &s);
            let _ = writeln!(out);
        }
        caution(&mut out, st);
        out
    }
}

/// One sentence comparing the single tree with the random forest.
fn summary(kinds: &[KindStability], classes: bool) -> Option<String> {
    let tree = kinds.iter().find(|k| k.kind == ModelKind::SingleTree)?;
    let forest = kinds.iter().find(|k| k.kind == ModelKind::Forest)?;
    let (tc, fc) = (tree.prediction_change?, forest.prediction_change?);
    let what = if classes {
        "the held-out answers of"
    } else {
        "the held-out predictions of"
    };
    let moved = if classes { "changed for" } else { "shifted by" };
    let unit = if classes {
        "of rows"
    } else {
        "of a standard deviation"
    };
    Some(format!(
        "Between two seeds, {what} one tree {moved} {} {unit}, those of the random forest {moved} \
         {}; the error was {} against {}.",
        pct(tc),
        pct(fc),
        error_words(tree.error_mean, classes),
        error_words(forest.error_mean, classes)
    ))
}

/// An error as printed: a percentage for classes, four significant digits for numbers.
fn error_words(v: f64, classes: bool) -> String {
    if classes {
        pct(v)
    } else {
        sig(v, 4)
    }
}
