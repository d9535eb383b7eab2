//! `copse stability`: train one tree, bagged trees and a random forest with several
//! seeds on the same data and report how much each one's error, held-out answers and
//! importance ranking move from seed to seed: the evidence for choosing an ensemble.
use crate::args::StabilityArgs;
use crate::commands::{check_features_per_split, check_output, emit, read_training, tree_settings};
use crate::error::{forest_error, CliError, CliResult};
use crate::output::write_file;
use crate::report::{self, pct, sig, Style};
use crate::ui::Ui;
use crate::{json, plots};
use copse_forest::{
    stability_report, ForestSettings, KindStability, ModelKind, StabilityReport, StabilitySettings,
};
use serde_json::{json, Map, Value};
use std::fmt::Write;

/// Runs `copse stability`.
///
/// # Errors
/// Input errors for bad data or settings; failures when writing.
pub fn run(a: &StabilityArgs, ui: &Ui) -> CliResult<()> {
    if let Some(plot) = &a.plot {
        check_output(&a.data, plot, "chart file")?;
    }
    let data = read_training(&a.data, &a.roles, &a.csv, ui)?;
    let labelled = data.outcome.n_labelled();
    if (a.folds as usize) > labelled {
        return Err(CliError::input(format!(
            "--folds {} is more than the {labelled} rows with a target value in {}; choose 2 to \
             {labelled}",
            a.folds, data.source
        )));
    }
    if let Some(rule) = a.features_per_split {
        check_features_per_split(rule, &data)?;
    }
    let settings = StabilitySettings {
        seeds: a.seeds as usize,
        folds: a.folds as usize,
        forest: ForestSettings {
            trees: a.trees as usize,
            features_per_split: a.features_per_split.unwrap_or_default(),
            tree: tree_settings(a.impurity, a.max_depth, a.min_leaf),
            bins: a.bins as usize,
            seed: a.seed,
            ..ForestSettings::default()
        },
    };
    let total = (a.seeds * (a.folds + 2)) as u64;
    let bar = ui.bar(total, "training models");
    let result = stability_report(
        data.x.view(),
        &data.features,
        &data.outcome,
        &settings,
        &|done, _| bar.advance_to(done),
    );
    bar.finish();
    let r = result
        .map_err(|e| forest_error(&e, &format!("cannot compare models on {}", data.source)))?;
    let names: Vec<String> = data.features.iter().map(|f| f.name.clone()).collect();
    let target = &data.target;

    if let Some(path) = &a.plot {
        let sub = format!(
            "{} seeds, {} rows of {}, target '{target}'; ensembles of {} trees",
            r.seeds, r.rows, data.source, r.trees
        );
        let svg = plots::stability_svg(&r, &sub)
            .map_err(|e| CliError::failure(format!("could not draw the chart: {e}")))?;
        write_file(path, svg.as_bytes())?;
        crate::output::commit_all()?;
        ui.wrote(&format!("stability chart: {}", path.display()));
    }
    if a.json {
        return json::print(stability_json(&r, &data.source, target, &names));
    }
    let st = Style::new(ui.stdout_colour());
    emit(&stability_text(&r, st, &data.source, target, &names))
}

/// The printed report.
fn stability_text(
    r: &StabilityReport,
    st: Style,
    source: &str,
    target: &str,
    names: &[String],
) -> String {
    let mut out = String::new();
    // Label/value lines; long values wrap under the value column.
    let line = |out: &mut String, label: &str, value: &str| {
        for (i, l) in report::wrap(value, 88 - report::LABEL).iter().enumerate() {
            let label = if i == 0 { label } else { "" };
            let _ = writeln!(out, "  {label:<w$}{l}", w = report::LABEL);
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
            k.rank_tau.map_or("-".to_string(), |t| format!("{t:.2}")),
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
        for l in report::wrap(&n, 88) {
            let _ = writeln!(out, "  {l}");
        }
    }
    let _ = writeln!(out);
    if let Some(s) = summary(&r.kinds, r.classes) {
        let _ = writeln!(out, "{}", st.head("IN SHORT"));
        for l in report::wrap(&s, 88) {
            let _ = writeln!(out, "  {l}");
        }
        let _ = writeln!(out);
    }
    report::caution(&mut out, st);
    out
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

/// The JSON report.
fn stability_json(
    r: &StabilityReport,
    source: &str,
    target: &str,
    names: &[String],
) -> Map<String, Value> {
    let mut map = Map::new();
    map.insert("command".into(), json!("stability"));
    map.insert("copse_version".into(), json!(env!("CARGO_PKG_VERSION")));
    map.insert(
        "task".into(),
        json!(if r.classes { "classify" } else { "regress" }),
    );
    map.insert("target".into(), json!(target));
    map.insert("source".into(), json!(source));
    map.insert("rows".into(), json!(r.rows));
    map.insert("inputs".into(), json!(names));
    map.insert("seeds".into(), json!(r.seeds));
    map.insert("folds".into(), json!(r.folds));
    map.insert("trees".into(), json!(r.trees));
    map.insert(
        "forest_features_per_split".into(),
        json!(r.forest_features_per_split),
    );
    let models: Vec<Value> = r
        .kinds
        .iter()
        .map(|k| {
            json!({
                "model": k.kind.key(),
                "errors": k.errors,
                "error_mean": k.error_mean,
                "error_sd": k.error_sd,
                "error_min": k.error_min,
                "error_max": k.error_max,
                "answer_change": k.prediction_change,
                "ranking_tau": k.rank_tau,
                "importance_by_seed": k.importance,
            })
        })
        .collect();
    map.insert("models".into(), Value::Array(models));
    map.insert(
        "about".into(),
        json!({
            "error": if r.classes { "misclassification rate" } else { "mean squared error" },
            "one_tree_error": "cross-validated",
            "ensemble_error": "out-of-bag",
            "answer_change": if r.classes {
                "share of rows whose held-out predicted class differs between two seeds, mean over pairs"
            } else {
                "root mean squared difference of held-out predictions between two seeds over the target's standard deviation, mean over pairs"
            },
            "ranking_tau": "Kendall's tau-b between two seeds' importance values, mean over pairs",
        }),
    );
    map.insert("caution".into(), json!(report::CAUTION));
    map
}
