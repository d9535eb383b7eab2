//! The first block of a report, printed before any figure: what the data layer noticed
//! when the model was trained (the model card's notes, such as class codes read as
//! numbers), whether the probabilities were shifted back from class-balanced training,
//! and, when a model is judged on a file, how many of its rows were training rows.
//! JSON keys `model_notes`, `probabilities_shifted` and `training_rows`.
use super::{paragraph, Style};
use crate::numbers::{pct, sig};
use copse_forest::ndarray::ArrayView2;
use copse_forest::{Forest, Metrics};
use serde::Serialize;
use std::fmt::Write;

/// Above this share of rows matching the training rows, figures are called optimistic.
/// New rows match by chance at about 2.2% (the fingerprint's false-match rate), so
/// 10% is far above chance yet low enough that the figures have moved: a forest's
/// error on its own training rows is near zero.
pub const OPTIMISTIC_SHARE: f64 = 0.10;

/// How many judged rows were training rows.
#[derive(Debug, Serialize)]
pub struct TrainingRowsView {
    /// Rows judged.
    pub rows: usize,
    /// Rows matching the model's fingerprint of its training rows.
    pub matching: usize,
    /// `matching / rows`.
    pub share: f64,
    /// The chance that a row not in training matches (Bloom filter, 1 byte a row).
    pub false_match_rate: f64,
    /// Whether the share is above [`OPTIMISTIC_SHARE`], so the figures are optimistic.
    pub optimistic: bool,
    /// The warning printed when they are.
    pub warning: Option<String>,
}

impl TrainingRowsView {
    /// The check of the rows of `x` against `model`'s training rows.
    pub fn new(model: &Forest, x: ArrayView2<'_, f64>, command: &str) -> Self {
        let rows = x.nrows();
        let matching = model.training_row_matches(x);
        let share = matching as f64 / rows.max(1) as f64;
        let optimistic = share > OPTIMISTIC_SHARE;
        let oob = match &model.oob().metrics {
            Some(Metrics::Classes(m)) => format!(" (misclassified {})", pct(m.error)),
            Some(Metrics::Values(m)) => format!(" (mean squared error {})", sig(m.mse, 4)),
            None => String::new(),
        };
        let warning = optimistic.then(|| {
            format!(
                "{} of these {rows} rows ({}) were rows the model was trained on, so the \
                 figures of this {command} report are optimistic: a forest predicts its own \
                 training rows far better than new ones. For an honest figure use the \
                 out-of-bag check made at training{oob}, shown by 'copse inspect', or rows \
                 the model has not seen.",
                matching,
                pct(share)
            )
        });
        TrainingRowsView {
            rows,
            matching,
            share,
            false_match_rate: model.training_row_false_match_rate(),
            optimistic,
            warning,
        }
    }
}

/// The first block's contents.
#[derive(Debug, Serialize)]
pub struct NoticesView<'a> {
    /// The model card's notes about its training data.
    pub model_notes: &'a [String],
    /// Whether class probabilities were shifted back to the training class shares
    /// (a model trained with `--balanced`).
    pub probabilities_shifted: bool,
    /// The check against the training rows (commands that judge a file).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub training_rows: Option<TrainingRowsView>,
}

impl<'a> NoticesView<'a> {
    /// The notices of `model`, with the training-row check when given.
    pub fn new(model: &'a Forest, training_rows: Option<TrainingRowsView>) -> Self {
        NoticesView {
            model_notes: &model.card().notes,
            probabilities_shifted: model.prior_shift().is_some(),
            training_rows,
        }
    }

    /// The printed block (nothing when there is nothing to say).
    pub fn text(&self, out: &mut String, st: Style) {
        let mut items: Vec<String> = self.model_notes.to_vec();
        if self.probabilities_shifted {
            items.push(
                "The model was trained with --balanced (the same count of rows from each class \
                 per tree); its probabilities have been shifted back to the training class \
                 shares (Saerens, Latinne & Decaestecker 2002), so they can be read as chances."
                    .to_string(),
            );
        }
        if let Some(t) = &self.training_rows {
            match &t.warning {
                Some(w) => items.push(format!("WARNING: {w}")),
                None => items.push(format!(
                    "{} of these {} rows ({}) match the model's training rows; about {} of new \
                     rows match by chance.",
                    t.matching,
                    t.rows,
                    pct(t.share),
                    pct(t.false_match_rate)
                )),
            }
        }
        if items.is_empty() {
            return;
        }
        let _ = writeln!(out, "{}", st.head("READ FIRST"));
        for i in items {
            paragraph(out, &format!("- {i}"));
        }
        let _ = writeln!(out);
    }
}
