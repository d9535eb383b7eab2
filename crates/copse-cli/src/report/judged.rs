//! What `copse train` (on out-of-bag scores) and `copse evaluate` (on held-out scores)
//! add to their reports to get from a score to a decision: the first block of notices,
//! the headline figures with intervals and no-skill baselines, the decision tables,
//! and the errors by group. Built once from the scores, read by the text, the JSON
//! (flattened: `model_notes`, `probabilities_shifted`, `training_rows`,
//! `headline_figures`, `decision`, `groups`) and the HTML page.
use super::decision::{DecisionView, PositiveScores};
use super::figures::{FiguresView, Truth};
use super::groups::GroupsView;
use super::notices::{NoticesView, TrainingRowsView};
use super::Style;
use crate::decision_args::DecisionArgs;
use crate::error::CliResult;
use copse_forest::ndarray::ArrayView2;
use copse_forest::{Forest, Outcome};
use serde::Serialize;
use std::fmt::Write;

/// The decision layer of one report.
#[derive(Debug, Serialize)]
pub struct Judged<'a> {
    /// The first block.
    #[serde(flatten)]
    pub notices: NoticesView<'a>,
    /// The headline figures with intervals and baselines (null when no row was judged).
    pub headline_figures: Option<FiguresView>,
    /// The decision tables (null for numbers, or more than two classes without
    /// `--positive`).
    pub decision: Option<DecisionView>,
    /// The figures per group (`copse evaluate --by`).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub groups: Option<GroupsView>,
    /// Where the scores come from, for headings.
    #[serde(skip)]
    pub scores: &'static str,
    /// For a model trained with case weights: that the sections of this layer count
    /// every row once (the headline measures weigh rows).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub rows_counted_once: Option<&'static str>,
    /// For a model trained with row groups: that the intervals treat rows as
    /// independent, so they are too narrow when rows of a group are alike.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub rows_taken_as_independent: Option<&'static str>,
}

/// What [`Judged::rows_taken_as_independent`] says.
pub const ROWS_TAKEN_AS_INDEPENDENT: &str = "the intervals below treat rows as independent \
cases; rows of one group are not, so the intervals are narrower than they should be";

/// What [`Judged::rows_counted_once`] says.
pub const ROWS_COUNTED_ONCE: &str = "the intervals, baselines, decision tables and groups \
count every row once, not by its case weight";

/// The scores of a report and what to do with them.
pub struct Scores<'a> {
    /// Predictions: rows by classes (probabilities) or one column of values; NaN rows
    /// have no prediction.
    pub preds: ArrayView2<'a, f64>,
    /// The known outcome of the same rows, in the model's class order.
    pub outcome: &'a Outcome,
    /// `out-of-bag` or `held-out`.
    pub kind: &'static str,
    /// The training-row check, for commands that judge a file.
    pub training_rows: Option<TrainingRowsView>,
    /// The column to group by and each row's value in it (`None`: missing).
    pub by: Option<(&'a str, &'a [Option<String>])>,
}

impl<'a> Judged<'a> {
    /// Judges `s` with `model` and the decision options `args`.
    ///
    /// # Errors
    /// An input error for a `--positive` that is not a class of the model.
    pub fn new(model: &'a Forest, s: Scores<'_>, args: &DecisionArgs) -> CliResult<Self> {
        let truth = match s.outcome {
            Outcome::Classes { codes, .. } => Truth::Classes(codes),
            Outcome::Values(y) => Truth::Values(y),
        };
        let positive = match (super::decision::positive_class(model, args)?, s.outcome) {
            (Some(c), Outcome::Classes { codes, .. }) => {
                Some(PositiveScores::new(model, c, s.preds, codes))
            }
            _ => None,
        };
        let decision = positive
            .as_ref()
            .map(|p| DecisionView::new(model, p, s.kind, args))
            .filter(|d| d.rows > 0);
        let groups = s.by.map(|(column, cells)| {
            let labels: Vec<String> = cells
                .iter()
                .map(|c| {
                    c.clone()
                        .unwrap_or_else(|| super::groups::MISSING_GROUP.to_string())
                })
                .collect();
            GroupsView::new(
                column,
                &labels,
                s.preds,
                truth,
                model.classes(),
                positive.as_ref(),
                args.cutoff_or_default(),
            )
        });
        Ok(Judged {
            notices: NoticesView::new(model, s.training_rows),
            headline_figures: FiguresView::new(s.preds, truth, model.classes()),
            decision,
            groups,
            scores: s.kind,
            rows_counted_once: model.card().weights.is_some().then_some(ROWS_COUNTED_ONCE),
            rows_taken_as_independent: model
                .card()
                .groups
                .is_some()
                .then_some(ROWS_TAKEN_AS_INDEPENDENT),
        })
    }

    /// The first block of the report.
    pub fn notices_text(&self, out: &mut String, st: Style) {
        self.notices.text(out, st);
    }

    /// The sections after the headline measures: intervals and baselines, decision
    /// tables, groups.
    pub fn text(&self, out: &mut String, st: Style) {
        for note in [self.rows_counted_once, self.rows_taken_as_independent]
            .into_iter()
            .flatten()
        {
            let _ = writeln!(out, "  Note: {note}.");
            let _ = writeln!(out);
        }
        if let Some(f) = &self.headline_figures {
            let _ = writeln!(
                out,
                "{}",
                st.head(&format!(
                    "HOW SURE THE {} FIGURES ARE (95% intervals; what a model without skill scores)",
                    self.scores.to_uppercase()
                ))
            );
            f.text(out);
            let _ = writeln!(out);
        }
        if let Some(d) = &self.decision {
            d.text(out, st);
        }
        if let Some(g) = &self.groups {
            g.text(out, st);
        }
    }
}
