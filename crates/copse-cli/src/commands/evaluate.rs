//! `copse evaluate`: measure a model on labelled rows it has not seen.
use crate::args::EvaluateArgs;
use crate::commands::{emit, load_labelled};
use crate::error::{forest_error, CliResult};
use crate::json;
use crate::report::{self, pct, sig, Style};
use crate::ui::Ui;
use copse_forest::Metrics;
use serde_json::json;
use std::fmt::Write;

/// Runs `copse evaluate`.
///
/// # Errors
/// Input errors for a bad model or data; failures when writing.
pub fn run(a: &EvaluateArgs, ui: &Ui) -> CliResult<()> {
    let (model, source, data) = load_labelled(&a.model, &a.data, &a.csv, ui)?;
    let eval = model
        .evaluate(data.x.view(), &data.outcome)
        .map_err(|e| forest_error(&e, &format!("cannot evaluate on {source}")))?;
    let unseen: u64 = data.encoder.unseen_counts().iter().sum();

    if a.json {
        let mut map = json::model_object("evaluate", &model);
        let mut ev = json::metrics(&eval.metrics);
        if let serde_json::Value::Object(m) = &mut ev {
            m.insert("source".into(), json!(source));
            m.insert("rows_read".into(), json!(data.rows));
            m.insert(
                "rows_without_target".into(),
                json!(eval.rows_missing_outcome),
            );
            m.insert("unseen_category_cells".into(), json!(unseen));
        }
        map.insert("evaluation".into(), ev);
        return json::print(map);
    }

    let st = Style::new(ui.stdout_colour());
    let mut text = String::new();
    let _ = writeln!(text, "copse evaluation report\n");
    let _ = writeln!(text, "{}", st.head("MODEL AND DATA"));
    let _ = writeln!(text, "  {:<24}{}", "model", a.model.display());
    let _ = writeln!(
        text,
        "  {:<24}{} ({} rows read, {} without a target value)",
        "data", source, data.rows, eval.rows_missing_outcome
    );
    if unseen > 0 {
        let _ = writeln!(
            text,
            "  {:<24}{unseen} cells held categories unseen in training (treated as missing)",
            "unseen categories"
        );
    }
    let _ = writeln!(text);
    let _ = writeln!(text, "{}", st.head("HOW WELL IT PREDICTS THESE ROWS"));
    match &eval.metrics {
        Metrics::Classes(m) => report::class_block(&mut text, m, model.classes(), "rows judged"),
        Metrics::Values(m) => report::value_block(&mut text, m, "rows judged"),
    }
    let _ = writeln!(text);
    if let Some(oob) = &model.oob().metrics {
        let (now, then) = match (&eval.metrics, oob) {
            (Metrics::Classes(e), Metrics::Classes(o)) => (pct(e.error), pct(o.error)),
            _ => (sig(eval.metrics.error(), 4), sig(oob.error(), 4)),
        };
        let _ = writeln!(
            text,
            "  Error here {now}; the out-of-bag estimate at training was {then}. A much larger\n  \
             error here suggests these rows differ from the training data.\n"
        );
    }
    report::caution(&mut text, st);
    emit(&text)
}
