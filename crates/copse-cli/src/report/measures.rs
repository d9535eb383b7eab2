//! How well a model predicts a set of rows: the measures as a view (JSON keys
//! `error`, `confusion`, `wrong_share_by_class`, `log_loss`, `brier`, `roc_auc` for
//! classes; `error` (the mean squared error), `rmse`, `mae`, `r_squared`, `mse` for
//! numbers; `rows` for both; with case weights also `weight_total`, and for classes
//! `weighted_confusion`) and as printed lines: the headline figures, then for
//! classes the confusion table and, under it, the share of each class predicted wrong.
use super::line;
use crate::numbers::{column_decimals, count, fixed, pct, sig};
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
    wrong_share_by_class: &'a [Option<f64>],
    log_loss: f64,
    brier: f64,
    roc_auc: Option<f64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    weight_total: Option<f64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    weighted_confusion: Option<&'a [Vec<f64>]>,
}

/// Measures of numbers; `error` repeats the mean squared error.
#[derive(Debug, Serialize)]
pub struct ValueMeasures {
    rows: usize,
    error: f64,
    rmse: f64,
    mae: f64,
    r_squared: Option<f64>,
    mse: f64,
    #[serde(skip_serializing_if = "Option::is_none")]
    weight_total: Option<f64>,
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
                wrong_share_by_class: &c.wrong_share_by_class,
                log_loss: c.log_loss,
                brier: c.brier,
                roc_auc: c.roc_auc,
                weight_total: c.weighted.as_ref().map(|w| w.total),
                weighted_confusion: c.weighted.as_ref().map(|w| w.confusion.as_slice()),
            }),
            Some(Metrics::Values(v)) => MeasuresView::Values(ValueMeasures {
                rows: v.rows,
                error: v.mse,
                rmse: v.mse.sqrt(),
                mae: v.mae,
                r_squared: v.r_squared,
                mse: v.mse,
                weight_total: v.weight_total,
            }),
            None => MeasuresView::Nothing(NoMeasures {
                rows: 0,
                error: None,
            }),
        }
    }
}

/// The printed measures of `m`: headline lines, and for classes the confusion table
/// with the share of each actual class predicted wrong under it.
pub fn measures_block(out: &mut String, m: &Metrics, classes: &[String], rows_label: &str) {
    match m {
        Metrics::Classes(c) => class_block(out, c, classes, rows_label),
        Metrics::Values(v) => value_block(out, v, rows_label),
    }
}

/// Class measures: the headline lines, then the confusion table, then the share of
/// each actual class predicted wrong as a small table of its own.
pub fn class_block(out: &mut String, m: &ClassMetrics, classes: &[String], rows_label: &str) {
    line(out, rows_label, &m.rows.to_string());
    let totals: Vec<u64> = m.confusion.iter().map(|r| r.iter().sum()).collect();
    let wrong_in = |c: usize| {
        let r = m.confusion.get(c).map_or(&[][..], |r| r.as_slice());
        r.iter().sum::<u64>() - r.get(c).copied().unwrap_or(0)
    };
    let wrong: u64 = (0..m.confusion.len()).map(wrong_in).sum();
    if let Some(w) = &m.weighted {
        line(out, "case weight", &sig(w.total, 6));
    }
    line(
        out,
        "misclassified",
        &format!(
            "{}{} ({})",
            pct(m.error),
            if m.weighted.is_some() {
                " of the case weight"
            } else {
                ""
            },
            count(wrong as usize, "row", "rows")
        ),
    );
    // One precision for the probability scores: four decimals.
    line(out, "log loss", &format!("{:.4}", m.log_loss));
    line(
        out,
        "Brier score",
        &format!("{:.4} (0 best, 2 worst)", m.brier),
    );
    if let Some(auc) = m.roc_auc {
        line(
            out,
            "ROC AUC",
            &format!(
                "{auc:.4} ('{}' as the positive class)",
                classes.get(1).map_or("", |s| s)
            ),
        );
    }
    let _ = writeln!(out);
    let _ = writeln!(
        out,
        "  confusion table (rows: actual class; columns: predicted class)"
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
    let _ = writeln!(out, "{head}");
    for (i, c) in classes.iter().enumerate() {
        let mut row = format!("  {c:<lw$}");
        for n in m.confusion.get(i).map(|r| r.as_slice()).unwrap_or(&[]) {
            let _ = write!(row, "  {n:>cw$}");
        }
        let _ = writeln!(out, "{row}");
    }
    let _ = writeln!(out);
    let _ = writeln!(out, "  predicted wrong, by actual class");
    let nw = totals
        .iter()
        .map(|n| n.to_string().len())
        .max()
        .unwrap_or(1);
    for (i, c) in classes.iter().enumerate() {
        let share = m
            .wrong_share_by_class
            .get(i)
            .copied()
            .flatten()
            .map_or("-".to_string(), pct);
        let total = totals.get(i).copied().unwrap_or(0);
        let _ = writeln!(
            out,
            "  {c:<lw$}  {share:>6}   {:>nw$} of {total:>nw$}",
            wrong_in(i)
        );
    }
    if let Some(w) = &m.weighted {
        weighted_table(out, &w.confusion, classes, lw);
    }
}

/// The confusion table in case weights (rows: actual class; columns: predicted).
fn weighted_table(out: &mut String, table: &[Vec<f64>], classes: &[String], lw: usize) {
    let top = table.iter().flatten().fold(0.0f64, |a, &b| a.max(b));
    let d = column_decimals(top);
    let cells: Vec<Vec<String>> = table
        .iter()
        .map(|r| r.iter().map(|&v| format!("{v:.d$}")).collect())
        .collect();
    let cw = classes
        .iter()
        .map(|c| c.len())
        .chain(cells.iter().flatten().map(String::len))
        .max()
        .unwrap_or(0)
        .max(5);
    let _ = writeln!(out);
    let _ = writeln!(
        out,
        "  confusion table in case weights (rows: actual class; columns: predicted class)"
    );
    let mut head = format!("  {:<lw$}", "");
    for c in classes {
        let _ = write!(head, "  {c:>cw$}");
    }
    let _ = writeln!(out, "{head}");
    for (c, r) in classes.iter().zip(&cells) {
        let mut row = format!("  {c:<lw$}");
        for v in r {
            let _ = write!(row, "  {v:>cw$}");
        }
        let _ = writeln!(out, "{row}");
    }
}

/// Regression measures: the typical error in target units first (root mean squared
/// error, then mean absolute error), then R².
pub fn value_block(out: &mut String, m: &ValueMetrics, rows_label: &str) {
    line(out, rows_label, &m.rows.to_string());
    if let Some(w) = m.weight_total {
        line(
            out,
            "case weight",
            &format!("{} (every figure below weighs rows by it)", sig(w, 6)),
        );
    }
    // Both errors in target units, to the same number of decimals.
    let d = column_decimals(m.mse.sqrt().max(m.mae));
    line(
        out,
        "typical error (RMSE)",
        &format!(
            "{:.d$} (root mean squared error, target units)",
            m.mse.sqrt()
        ),
    );
    line(
        out,
        "mean absolute error",
        &format!("{:.d$} (target units)", m.mae),
    );
    line(
        out,
        "R²",
        &m.r_squared.map_or("- (target constant)".to_string(), |r| {
            format!(
                "{} (1 - mean squared error / variance of the target)",
                fixed(r, 3)
            )
        }),
    );
}
