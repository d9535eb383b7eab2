//! `copse importance`: permutation importance on labelled rows the model has not seen,
//! with standard errors over repeated shuffles and, when the inputs allow it, p-values
//! of the mirrored-null test.
use crate::args::ImportanceArgs;
use crate::commands::{emit, load_labelled};
use crate::error::{forest_error, CliError, CliResult};
use crate::output::write_file;
use crate::report::{self, Style};
use crate::ui::Ui;
use crate::{json, plots};
use copse_forest::Task;
use serde_json::json;
use std::fmt::Write;

/// Runs `copse importance`.
///
/// # Errors
/// Input errors for a bad model or data; failures when writing.
pub fn run(a: &ImportanceArgs, ui: &Ui) -> CliResult<()> {
    if let Some(plot) = &a.plot {
        crate::commands::check_destination(plot)?;
    }
    let (model, source, data) = load_labelled(&a.model, &a.data, &a.csv, ui)?;
    let imp = model
        .permutation_importance(data.x.view(), &data.outcome, a.repeats as usize, a.seed)
        .map_err(|e| forest_error(&e, &format!("cannot compute importance on {source}")))?;

    if let Some(path) = &a.plot {
        let measure = match model.task() {
            Task::Classify => "misclassification rate",
            Task::Regress => "mean squared error",
        };
        let mirror = report::shown_mirror(&imp.error);
        let about = mirror.as_ref().map_or(String::new(), |m| {
            format!("; p: mirrored-null test, {} null values", m.null_size)
        });
        let svg = plots::importance_svg(
            &imp.error,
            mirror.as_ref(),
            &format!("Which inputs matter: rise in {measure} when shuffled"),
            &format!(
                "held-out rows from {source}, {} shuffles per input, model {}{about}",
                a.repeats,
                a.model.display()
            ),
        )
        .map_err(|e| CliError::failure(format!("could not draw the chart: {e}")))?;
        write_file(path, svg.as_bytes())?;
        crate::output::commit_all()?;
        ui.wrote(&format!("importance chart: {}", path.display()));
    }

    if a.json {
        let mut map = json::model_object("importance", &model);
        let oob_imp = map.remove("importance").unwrap_or(serde_json::Value::Null);
        map.insert("oob_importance".into(), oob_imp);
        let oob_tests = map
            .remove("importance_tests")
            .unwrap_or(serde_json::Value::Null);
        map.insert("oob_importance_tests".into(), oob_tests);
        map.remove("importance_brier");
        map.remove("importance_about");
        json::put_permutation(&mut map, Some(&imp));
        json::put_p_values(&mut map, "importance", &imp.error, None);
        map.insert("source".into(), json!(source));
        map.insert("rows_read".into(), json!(data.rows));
        map.insert("repeats".into(), json!(a.repeats));
        return json::print(map);
    }

    let st = Style::new(ui.stdout_colour());
    let mut text = String::new();
    let _ = writeln!(text, "copse importance report\n");
    let _ = writeln!(text, "  {:<24}{}", "model", a.model.display());
    let _ = writeln!(text, "  {:<24}{} ({} rows)\n", "data", source, data.rows);
    let _ = writeln!(text, "{}", st.head("WHICH INPUTS MATTER ON THESE ROWS"));
    let _ = writeln!(text, "{}\n", report::importance_intro(&imp.error, true));
    report::importance_with_tests(
        &mut text,
        &imp,
        true,
        None,
        "for p-values with few inputs, train with 'copse train ... --null-permutations 199'.",
    );
    let _ = writeln!(text);
    report::caution(&mut text, st);
    emit(&text)
}
