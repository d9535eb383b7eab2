//! The report of `copse importance`: permutation importance on labelled rows the model
//! has not seen, with its tests, beside the model summary (whose out-of-bag importance
//! is listed as `oob_importance` in JSON).
use super::brier_ranking::brier_led_table;
use super::contribution::ContributionView;
use super::model::ModelView;
use super::notices::{NoticesView, TrainingRowsView};
use super::paragraph;
use super::ranking::{
    importance_intro, importance_with_tests, oob_baseline, ImportanceView, RankView, TestView,
};
use super::{caution, Style, LABEL};
use crate::numbers::count;
use copse_forest::{ContributionRanking, Forest, PermutationImportance};
use serde::Serialize;
use std::fmt::Write;
use std::path::Path;

/// The held-out importance report.
#[derive(Serialize)]
pub struct ImportanceReport<'a> {
    #[serde(flatten)]
    model: ModelView<'a>,
    /// The model's out-of-bag ranking (empty when it has none).
    oob_importance: Vec<RankView<'a>>,
    /// The tests of the out-of-bag ranking (null when it has none).
    oob_importance_tests: Option<Vec<TestView>>,
    /// The ranking on the held-out rows.
    #[serde(flatten)]
    held_out: ImportanceView<'a>,
    source: &'a str,
    rows_read: usize,
    repeats: u32,
    /// The first block: model notes and the training-row check.
    #[serde(flatten)]
    notices: NoticesView<'a>,
    /// The measure the printed ranking and the chart lead with: `brier` for classes
    /// (it sees probabilities), the error measure for numbers.
    importance_leading_measure: &'static str,
    /// Inputs by mean absolute contribution on the same rows (null for a model trained
    /// with class balancing, whose predictions no sum of parts gives).
    contribution_ranking: Option<ContributionView<'a>>,
    #[serde(skip)]
    imp: &'a PermutationImportance,
    #[serde(skip)]
    baseline: Option<f64>,
    #[serde(skip)]
    model_path: &'a Path,
    #[serde(skip)]
    model_target: &'a str,
}

/// The rows a held-out importance was measured on.
pub struct HeldOutRows<'a> {
    /// The file's name.
    pub source: &'a str,
    /// Rows read from it.
    pub rows_read: usize,
    /// Shuffles per input.
    pub repeats: u32,
    /// For numbers, the forest's mean squared error on those rows.
    pub baseline: Option<f64>,
    /// The inputs by mean absolute contribution on those rows, when available.
    pub contributions: Option<&'a ContributionRanking>,
}

impl<'a> ImportanceReport<'a> {
    /// The report of `imp`, measured as `rows` says with `forest` (read from
    /// `model_path`).
    pub fn new(
        forest: &'a Forest,
        model_path: &'a Path,
        imp: &'a PermutationImportance,
        rows: HeldOutRows<'a>,
        training_rows: TrainingRowsView,
    ) -> Self {
        let HeldOutRows {
            source,
            rows_read,
            repeats,
            baseline,
            contributions,
        } = rows;
        let oob = ImportanceView::new(forest.oob_importance(), None, oob_baseline(forest));
        ImportanceReport {
            model: ModelView::new("importance", forest),
            oob_importance: oob.importance,
            oob_importance_tests: oob.importance_tests,
            held_out: ImportanceView::new(Some(imp), None, baseline),
            source,
            rows_read,
            repeats,
            notices: NoticesView::new(forest, Some(training_rows)),
            importance_leading_measure: if imp.brier.is_some() {
                "brier"
            } else {
                imp.error.measure.key()
            },
            contribution_ranking: contributions.map(|c| ContributionView::new(forest, c)),
            imp,
            baseline,
            model_path,
            model_target: &forest.card().target,
        }
    }

    /// The printed report.
    pub fn text(&self, st: Style) -> String {
        let mut text = String::new();
        let _ = writeln!(text, "copse importance report\n");
        self.notices.text(&mut text, st);
        let _ = writeln!(text, "  {:<LABEL$}{}", "model", self.model_path.display());
        let _ = writeln!(
            text,
            "  {:<LABEL$}{} ({})\n",
            "data",
            self.source,
            count(self.rows_read, "row", "rows")
        );
        let _ = writeln!(text, "{}", st.head("WHICH INPUTS MATTER ON THESE ROWS"));
        let brier_led = brier_led_table(self.imp);
        if let Some(table) = &brier_led {
            paragraph(
                &mut text,
                &format!(
                    "Rise in the Brier score on these rows when one input's values are shuffled \
                     (mean of {} shuffles ± standard error), which sees every change in the \
                     probabilities; the rise in misclassification sits beside it, and is nearly \
                     zero for every input when a class is rare. Near zero or below: no \
                     detectable effect.",
                    self.repeats
                ),
            );
            let _ = writeln!(text);
            text.push_str(table);
            let _ = writeln!(text);
            paragraph(
                &mut text,
                "The same inputs by the rise in misclassification, with its tests:",
            );
            let _ = writeln!(text);
        } else {
            let _ = writeln!(
                text,
                "{}\n",
                importance_intro(&self.imp.error, true, self.baseline)
            );
        }
        importance_with_tests(
            &mut text,
            self.imp,
            brier_led.is_none(),
            None,
            self.baseline,
            "see 'copse train --shuffled-target-runs'.",
        );
        let _ = writeln!(text);
        if let Some(c) = &self.contribution_ranking {
            c.text(&mut text, st, self.model_target);
        }
        caution(&mut text, st);
        text
    }
}
