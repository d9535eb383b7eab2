//! The report of `copse evaluate`: the model summary and how well the model predicts
//! labelled rows it has not seen, beside its out-of-bag estimate.
use super::judged::Judged;
use super::measures::{measures_block, MeasuresView};
use super::model::ModelView;
use super::ranking::{oob_baseline, ImportanceView};
use super::{caution, Style, LABEL};
use crate::numbers::{column_decimals, count, pct};
use copse_forest::{Evaluation, Forest, Metrics};
use serde::Serialize;
use std::fmt::Write;
use std::path::Path;

/// The evaluation report.
#[derive(Serialize)]
pub struct EvaluateView<'a> {
    #[serde(flatten)]
    model: ModelView<'a>,
    #[serde(flatten)]
    importance: ImportanceView<'a>,
    evaluation: EvaluationView<'a>,
    #[serde(flatten)]
    judged: Option<&'a Judged<'a>>,
    #[serde(skip)]
    forest: &'a Forest,
    #[serde(skip)]
    metrics: &'a Metrics,
    #[serde(skip)]
    model_path: &'a Path,
}

/// The measures on the rows, and the rows they come from.
#[derive(Serialize)]
struct EvaluationView<'a> {
    #[serde(flatten)]
    measures: MeasuresView<'a>,
    source: &'a str,
    rows_read: usize,
    rows_without_target: usize,
    unseen_category_cells: u64,
}

impl<'a> EvaluateView<'a> {
    /// The report on `forest` (read from `model_path`) measured on the `rows_read`
    /// rows of `source`, in which `unseen` cells held categories it never saw.
    pub fn new(
        forest: &'a Forest,
        model_path: &'a Path,
        eval: &'a Evaluation,
        source: &'a str,
        rows_read: usize,
        unseen: u64,
        judged: Option<&'a Judged<'a>>,
    ) -> Self {
        EvaluateView {
            model: ModelView::new("evaluate", forest),
            importance: ImportanceView::new(forest.oob_importance(), None, oob_baseline(forest)),
            evaluation: EvaluationView {
                measures: MeasuresView::new(Some(&eval.metrics)),
                source,
                rows_read,
                rows_without_target: eval.rows_missing_outcome,
                unseen_category_cells: unseen,
            },
            judged,
            forest,
            metrics: &eval.metrics,
            model_path,
        }
    }

    /// The printed report.
    pub fn text(&self, st: Style) -> String {
        let e = &self.evaluation;
        let mut text = String::new();
        let _ = writeln!(text, "copse evaluation report\n");
        if let Some(j) = self.judged {
            j.notices_text(&mut text, st);
        }
        let _ = writeln!(text, "{}", st.head("MODEL AND DATA"));
        let _ = writeln!(text, "  {:<LABEL$}{}", "model", self.model_path.display());
        let _ = writeln!(
            text,
            "  {:<LABEL$}{} ({} read, {} without a target value)",
            "data",
            e.source,
            count(e.rows_read, "row", "rows"),
            e.rows_without_target
        );
        if e.unseen_category_cells > 0 {
            let _ = writeln!(
                text,
                "  {:<LABEL$}{} unseen in training (treated as missing)",
                "unseen categories",
                count(
                    e.unseen_category_cells as usize,
                    "cell held a category",
                    "cells held categories"
                )
            );
        }
        let _ = writeln!(text);
        let _ = writeln!(text, "{}", st.head("HOW WELL IT PREDICTS THESE ROWS"));
        measures_block(
            &mut text,
            self.metrics,
            self.forest.classes(),
            "rows judged",
        );
        let _ = writeln!(text);
        if let Some(oob) = &self.forest.oob().metrics {
            let (now, then) = match (self.metrics, oob) {
                (Metrics::Classes(e), Metrics::Classes(o)) => (pct(e.error), pct(o.error)),
                // Numbers: the typical error in target units (root mean squared error).
                _ => {
                    let (e, o) = (self.metrics.error().sqrt(), oob.error().sqrt());
                    let d = column_decimals(e.max(o));
                    (format!("{e:.d$} (RMSE)"), format!("{o:.d$}"))
                }
            };
            let _ = writeln!(
                text,
                "  Error here {now}; the out-of-bag estimate at training was {then}. A much larger\n  \
                 error here suggests these rows differ from the training data.\n"
            );
        }
        if let Some(j) = self.judged {
            j.text(&mut text, st);
        }
        caution(&mut text, st);
        text
    }
}
