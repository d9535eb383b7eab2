//! How well a model predicts a set of rows: the measures as a view (JSON keys
//! `error`, `confusion`, `class_error`, `log_loss`, `brier`, `roc_auc` for classes;
//! `error` (the mean squared error), `mse`, `mae`, `variance_explained` for numbers;
//! `rows` for both) and as printed lines with the confusion table.
use super::line;
use crate::numbers::{pct, sig};
use copse_forest::{ClassMetrics, Metrics, ValueMetrics};
use serde::Serialize;
use std::fmt::Write;

/// The measures of a set of rows, or none when no row could be judged.
#[derive(Debug, Serialize)]
#[serde(untagged)]
pub enum MeasuresView<'a> {
    /// Class measures.
    Classes(ClassMeasures<'a>),
    /// Measures of numbers.
    Values(ValueMeasures),
    /// No row judged: `rows` 0 and a null `error`.
    Nothing(NoMeasures),
}

/// Class measures.
#[derive(Debug, Serialize)]
pub struct ClassMeasures<'a> {
    rows: usize,
    error: f64,
    confusion: &'a [Vec<u64>],
    class_error: &'a [Option<f64>],
    log_loss: f64,
    brier: f64,
    roc_auc: Option<f64>,
}

/// Measures of numbers; `error` repeats the mean squared error.
#[derive(Debug, Serialize)]
pub struct ValueMeasures {
    rows: usize,
    error: f64,
    mse: f64,
    mae: f64,
    variance_explained: Option<f64>,
}

/// No measures: no row was judged.
#[derive(Debug, Serialize)]
pub struct NoMeasures {
    rows: usize,
    error: Option<f64>,
}

impl<'a> MeasuresView<'a> {
    /// The view of `m`, or of nothing when `None`.
    pub fn new(m: Option<&'a Metrics>) -> Self {
        match m {
            Some(Metrics::Classes(c)) => MeasuresView::Classes(ClassMeasures {
                rows: c.rows,
                error: c.error,
                confusion: &c.confusion,
                class_error: &c.class_error,
                log_loss: c.log_loss,
                brier: c.brier,
                roc_auc: c.roc_auc,
            }),
            Some(Metrics::Values(v)) => MeasuresView::Values(ValueMeasures {
                rows: v.rows,
                error: v.mse,
                mse: v.mse,
                mae: v.mae,
                variance_explained: v.variance_explained,
            }),
            None => MeasuresView::Nothing(NoMeasures {
                rows: 0,
                error: None,
            }),
        }
    }
}

/// The printed measures of `m`: headline lines, and for classes the confusion table.
pub fn measures_block(out: &mut String, m: &Metrics, classes: &[String], rows_label: &str) {
    match m {
        Metrics::Classes(c) => class_block(out, c, classes, rows_label),
        Metrics::Values(v) => value_block(out, v, rows_label),
    }
}

/// Class measures: headline lines and the confusion table.
pub fn class_block(out: &mut String, m: &ClassMetrics, classes: &[String], rows_label: &str) {
    line(out, rows_label, &m.rows.to_string());
    let wrong: u64 = m
        .confusion
        .iter()
        .enumerate()
        .map(|(c, r)| r.iter().sum::<u64>() - r.get(c).copied().unwrap_or(0))
        .sum();
    line(
        out,
        "misclassified",
        &format!("{} ({wrong} rows)", pct(m.error)),
    );
    line(out, "log loss", &sig(m.log_loss, 4));
    line(
        out,
        "Brier score",
        &format!("{} (0 best, 2 worst)", sig(m.brier, 4)),
    );
    if let Some(auc) = m.roc_auc {
        line(
            out,
            "ROC AUC",
            &format!(
                "{} ('{}' as the positive class)",
                sig(auc, 4),
                classes.get(1).map_or("", |s| s)
            ),
        );
    }
    let _ = writeln!(out);
    let _ = writeln!(
        out,
        "  rows: actual class; columns: predicted class; last column: share of the row predicted wrong"
    );
    let lw = classes.iter().map(|c| c.len()).max().unwrap_or(0).max(8);
    let cw = classes
        .iter()
        .map(|c| c.len())
        .chain(m.confusion.iter().flatten().map(|n| n.to_string().len()))
        .max()
        .unwrap_or(0)
        .max(5);
    let mut head = format!("  {:<lw$}", "");
    for c in classes {
        let _ = write!(head, "  {c:>cw$}");
    }
    let _ = write!(head, "  | wrong");
    let _ = writeln!(out, "{head}");
    for (i, c) in classes.iter().enumerate() {
        let mut row = format!("  {c:<lw$}");
        for n in m.confusion.get(i).map(|r| r.as_slice()).unwrap_or(&[]) {
            let _ = write!(row, "  {n:>cw$}");
        }
        let e = m
            .class_error
            .get(i)
            .copied()
            .flatten()
            .map_or("-".to_string(), pct);
        let _ = write!(row, "  | {e:>6}");
        let _ = writeln!(out, "{row}");
    }
}

/// Regression measures.
pub fn value_block(out: &mut String, m: &ValueMetrics, rows_label: &str) {
    line(out, rows_label, &m.rows.to_string());
    line(out, "mean squared error", &sig(m.mse, 4));
    line(out, "root mean sq. error", &sig(m.mse.sqrt(), 4));
    line(out, "mean absolute error", &sig(m.mae, 4));
    line(
        out,
        "variance explained",
        &m.variance_explained
            .map_or("- (target constant)".to_string(), pct),
    );
}
