//! `copse importance`: permutation importance on labelled rows the model has not seen,
//! with standard errors over repeated shuffles and, when the inputs allow it, p-values
//! of the mirrored-null test.
use crate::args::ImportanceArgs;
use crate::commands::{emit, load_labelled};
use crate::error::{forest_error, CliError, CliResult};
use crate::output::write_file;
use crate::plots;
use crate::plots_decision;
use crate::report::importance::{HeldOutRows, ImportanceReport};
use crate::report::notices::TrainingRowsView;
use crate::report::ranking::shown_mirror;
use crate::report::{self, Style};
use crate::ui::Ui;

/// Runs `copse importance`.
///
/// # Errors
/// Input errors for a bad model or data; failures when writing.
pub fn run(a: &ImportanceArgs, ui: &Ui) -> CliResult<()> {
    if let Some(plot) = &a.plot {
        crate::commands::check_destination(plot)?;
    }
    let (model, source, data) = load_labelled(&a.model, &a.data, &a.csv, ui)?;
    // With the model's case weights column in the file, rows count by their weight.
    if let (Some(w), None) = (&model.card().weights, &data.weights) {
        ui.note(&format!(
            "the model was trained with case weights from '{}', which {source} lacks; every \
             row counts once",
            w.column
        ));
    }
    let imp = model
        .permutation_importance_weighted(
            data.x.view(),
            &data.outcome,
            data.weights.as_deref(),
            a.repeats as usize,
            a.seed,
        )
        .map_err(|e| forest_error(&e, &format!("cannot compute importance on {source}")))?;

    if let Some(path) = &a.plot {
        let measure = report::error_measure(model.task());
        let mirror = shown_mirror(&imp.error);
        let about = mirror.as_ref().map_or(String::new(), |m| {
            format!("; p: mirrored-null test, {} null values", m.null_size)
        });
        let sub = format!(
            "held-out rows from {source}, {} shuffles per input, model {}",
            a.repeats,
            a.model.display()
        );
        // For classes the chart leads with the rise in Brier score, which sees
        // probabilities, and shows the misclassification rise beside it.
        let drawn = match &imp.brier {
            Some(brier) => plots_decision::brier_importance_svg(
                brier,
                &imp.error,
                "Which inputs matter: rise in Brier score and in misclassification when shuffled",
                &sub,
            ),
            None => plots::importance_svg(
                &imp.error,
                mirror.as_ref(),
                &format!("Which inputs matter: rise in {measure} when shuffled"),
                &format!("{sub}{about}"),
            ),
        };
        let svg = drawn.map_err(|e| CliError::failure(format!("could not draw the chart: {e}")))?;
        write_file(path, svg.as_bytes())?;
        crate::output::commit_all()?;
        ui.wrote(&format!("importance chart: {}", path.display()));
    }

    let (baseline, training_rows) = held_out_context(&model, &data);
    // Beside the permutation ranking: how far each input moves a prediction on the
    // same rows (capped for cost; a model trained with class balancing has none).
    let contributions = match model.contribution_ranking(data.x.view(), copse_forest::RANKING_ROWS)
    {
        Ok(c) => Some(c),
        Err(e) if e.kind() == copse_forest::ErrorKind::InvalidSetting => None,
        Err(e) => return Err(forest_error(&e, &format!("cannot explain {source}"))),
    };
    if let Some(w) = &training_rows.warning {
        ui.warn(w);
    }
    let view = ImportanceReport::new(
        &model,
        &a.model,
        &imp,
        HeldOutRows {
            source: &source,
            rows_read: data.rows,
            repeats: a.repeats,
            baseline,
            contributions: contributions.as_ref(),
        },
        training_rows,
    );
    if a.json {
        return report::print_json(&view);
    }
    emit(&view.text(Style::new(ui.stdout_colour())))
}

/// What a held-out importance report shows beside the rises, for `model` on the
/// labelled rows `data`: for numbers, the forest's error on those rows (the rises are
/// printed as shares of it), and the check of the rows against the training rows.
pub fn held_out_context(
    model: &copse_forest::Forest,
    data: &copse_data::Labelled,
) -> (Option<f64>, TrainingRowsView) {
    let baseline = match model.task() {
        copse_forest::Task::Regress => model
            .evaluate(data.x.view(), &data.outcome)
            .ok()
            .map(|e| e.metrics.error())
            .filter(|&b| b > 0.0),
        copse_forest::Task::Classify => None,
    };
    (
        baseline,
        TrainingRowsView::new(model, data.x.view(), "importance"),
    )
}
