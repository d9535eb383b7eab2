//! `copse evaluate`: measure a model on labelled rows it has not seen, with intervals,
//! no-skill baselines, the decision tables, errors by group, and a check that the rows
//! were not training rows.
use crate::args::EvaluateArgs;
use crate::commands::train::judged_subtitle;
use crate::commands::{check_output, emit, load_labelled_by, make_folder, report_page};
use crate::error::{forest_error, CliError, CliResult};
use crate::report::evaluate::EvaluateView;
use crate::report::groups::MOST_GROUPS;
use crate::report::html::Page;
use crate::report::judged::{Judged, Scores};
use crate::report::notices::TrainingRowsView;
use crate::report::{self, Style};
use crate::ui::Ui;
use copse_data::Labelled;
use copse_forest::metrics::{class_metrics_weighted, value_metrics_weighted};
use copse_forest::{Evaluation, Forest, Metrics, Outcome, Task};

/// Runs `copse evaluate`.
///
/// # Errors
/// Input errors for a bad model or data; failures when writing.
pub fn run(a: &EvaluateArgs, ui: &Ui) -> CliResult<()> {
    if let Some(page) = &a.report {
        check_output(&a.data, page, "HTML report")?;
    }
    if let Some(dir) = &a.plots {
        make_folder(dir)?;
    }
    let (model, source, data, by_cells) =
        load_labelled_by(&a.model, &a.data, &a.csv, ui, a.by.as_deref())?;
    if model.task() == Task::Regress && a.decision.any_given() && a.decision.positive.is_none() {
        ui.warn("--cutoff, --budget and --costs are for class models; this model predicts numbers, so they were not used");
    }
    if let Some(cells) = &by_cells {
        let mut distinct: Vec<&Option<String>> = cells.iter().collect();
        distinct.sort();
        distinct.dedup();
        if distinct.len() > MOST_GROUPS {
            return Err(CliError::input(format!(
                "--by {}: the column has {} distinct values in {source}, more than the {MOST_GROUPS} \
                 groups a report can show; choose a column of groups, or add one that bins this column",
                a.by.as_deref().unwrap_or(""),
                distinct.len()
            )));
        }
    }
    if let (Some(w), None) = (&model.card().weights, &data.weights) {
        ui.note(&format!(
            "the model was trained with case weights from '{}', which {source} lacks; the \
             figures count every row once",
            w.column
        ));
    }
    let Measured {
        eval,
        judged,
        unseen,
    } = measure(
        &model,
        &data,
        &source,
        a.by.as_deref().zip(by_cells.as_deref()),
        &a.decision,
    )?;
    if let Some(w) = judged
        .notices
        .training_rows
        .as_ref()
        .and_then(|t| t.warning.as_ref())
    {
        ui.warn(w);
    }

    let view = EvaluateView::new(
        &model,
        &a.model,
        &eval,
        &source,
        data.rows,
        unseen,
        Some(&judged),
    );
    let charts = match (&judged.decision, a.plots.is_some() || a.report.is_some()) {
        (Some(d), true) => report_page::decision_charts(d, &judged_subtitle(&model))?,
        _ => Vec::new(),
    };
    let mut written = Vec::new();
    if let Some(dir) = &a.plots {
        written.extend(report_page::write_charts(dir, &charts)?);
    }
    if let Some(page) = &a.report {
        let class = report_page::page_class(&model, judged.decision.as_ref());
        let (section, effects) = report_page::page_sections(&model, data.x.view(), &source, class)?;
        let plain = report_page::with_section(&view.text(Style::new(false)), &section);
        let mut page_charts: Vec<_> = charts.into_iter().map(|(_, c)| c).collect();
        page_charts.extend(effects);
        report_page::write_page(
            page,
            &Page {
                text: &plain,
                subtitle: format!("model {}, rows from {source}", a.model.display()),
                decision: judged.decision.as_ref(),
                charts: page_charts,
            },
        )?;
        written.push(("report page".to_string(), page.clone()));
    }
    crate::output::commit_all()?;
    for (what, path) in &written {
        ui.wrote(&format!("{what}: {}", path.display()));
    }
    if a.json {
        return report::print_json(&view);
    }
    emit(&view.text(Style::new(ui.stdout_colour())))
}

/// What `copse evaluate` measures on labelled rows, from one prediction.
pub struct Measured<'a> {
    /// The engine's measures.
    pub eval: Evaluation,
    /// The decision layer on the same predictions, with the training-row check.
    pub judged: Judged<'a>,
    /// Cells holding categories the model never saw.
    pub unseen: u64,
}

/// Measures `model` on the labelled rows `data` read from `source`, grouped by the
/// column `by` (its name and each row's cell) when given, with the decision options
/// `decision`.
///
/// # Errors
/// Input errors for rows the model cannot judge or decision options that do not fit.
pub fn measure<'a>(
    model: &'a Forest,
    data: &Labelled,
    source: &str,
    by: Option<(&str, &[Option<String>])>,
    decision: &crate::decision_args::DecisionArgs,
) -> CliResult<Measured<'a>> {
    let context = format!("cannot evaluate on {source}");
    // One prediction serves the measures and the decision tables; the measures are the
    // engine's own (`Forest::evaluate` computes them the same way), and when none can
    // be computed the engine's evaluation says why.
    let preds = model
        .predict(data.x.view())
        .map_err(|e| forest_error(&e, &context))?;
    // With the model's case weights column in the file, every figure weighs rows by it.
    let weights = data.weights.as_deref();
    let metrics = match &data.outcome {
        Outcome::Classes { codes, .. } => {
            class_metrics_weighted(codes, preds.view(), weights).map(Metrics::Classes)
        }
        Outcome::Values(y) => {
            value_metrics_weighted(y, &preds.column(0).to_vec(), weights).map(Metrics::Values)
        }
    };
    let eval = match metrics {
        Some(metrics) => Evaluation {
            metrics,
            rows_missing_outcome: data.rows - data.outcome.n_labelled(),
        },
        None => model
            .evaluate_weighted(data.x.view(), &data.outcome, weights)
            .map_err(|e| forest_error(&e, &context))?,
    };
    let unseen: u64 = data.encoder.unseen_counts().iter().sum();
    let judged = Judged::new(
        model,
        Scores {
            preds: preds.view(),
            outcome: &data.outcome,
            kind: "held-out",
            training_rows: Some(TrainingRowsView::new(model, data.x.view(), "evaluation")),
            by,
        },
        decision,
    )?;
    Ok(Measured {
        eval,
        judged,
        unseen,
    })
}
