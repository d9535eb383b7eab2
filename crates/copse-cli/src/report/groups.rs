//! Errors by group (`copse evaluate --by COL`): the headline figures of each group of
//! rows sharing a value of one column, with their intervals, so a model's errors can
//! be checked for bias across the groups it affects. JSON key `groups`.
use super::decision::{share_with_interval, PositiveScores};
use super::figures::{FiguresView, Truth};
use super::{paragraph, Style};
use crate::numbers::sig;
use copse_forest::decision::{at_cutoff, CutoffTable};
use copse_forest::ndarray::{ArrayView2, Axis};
use serde::Serialize;
use std::collections::BTreeMap;
use std::fmt::Write;

/// Most groups a column may have: more is not a column of groups (bin it first).
pub const MOST_GROUPS: usize = 50;

/// The label of rows whose group cell is missing.
pub const MISSING_GROUP: &str = "(missing)";

/// One group's figures.
#[derive(Debug, Serialize)]
pub struct GroupView {
    /// The column's value.
    pub group: String,
    /// Rows of the group in the file.
    pub rows: usize,
    /// Its headline figures (null when none of its rows has a known target).
    pub figures: Option<FiguresView>,
    /// The positive class's table at the chosen cut-off (two classes, or `--positive`).
    pub at_cutoff: Option<CutoffTable>,
}

/// The figures per group of one column.
#[derive(Debug, Serialize)]
pub struct GroupsView {
    /// The column.
    pub column: String,
    /// The positive class of the cut-off tables, if any.
    pub positive_class: Option<String>,
    /// Groups in the order of their values.
    pub groups: Vec<GroupView>,
}

impl GroupsView {
    /// Groups the rows by `labels` (one per row) and measures each group's `preds`
    /// against `truth`; `positive` adds each group's table at `cutoff`.
    pub fn new(
        column: &str,
        labels: &[String],
        preds: ArrayView2<'_, f64>,
        truth: Truth<'_>,
        classes: &[String],
        positive: Option<&PositiveScores>,
        cutoff: f64,
    ) -> Self {
        let mut members: BTreeMap<&str, Vec<usize>> = BTreeMap::new();
        for (i, l) in labels.iter().enumerate() {
            members.entry(l.as_str()).or_default().push(i);
        }
        let groups = members
            .into_iter()
            .map(|(g, idx)| {
                let sub = preds.select(Axis(0), &idx);
                let figures = match truth {
                    Truth::Classes(c) => {
                        let codes: Vec<u32> = idx.iter().map(|&i| c[i]).collect();
                        FiguresView::new(sub.view(), Truth::Classes(&codes), classes)
                    }
                    Truth::Values(y) => {
                        let ys: Vec<f64> = idx.iter().map(|&i| y[i]).collect();
                        FiguresView::new(sub.view(), Truth::Values(&ys), classes)
                    }
                };
                let at_cutoff = positive.map(|p| {
                    let s: Vec<f64> = idx.iter().map(|&i| p.scores[i]).collect();
                    let t: Vec<bool> = idx.iter().map(|&i| p.positive[i]).collect();
                    at_cutoff(&s, &t, cutoff)
                });
                GroupView {
                    group: g.to_string(),
                    rows: idx.len(),
                    figures,
                    at_cutoff,
                }
            })
            .collect();
        GroupsView {
            column: column.to_string(),
            positive_class: positive.map(|p| p.label.clone()),
            groups,
        }
    }

    /// The printed section.
    pub fn text(&self, out: &mut String, st: Style) {
        let _ = writeln!(
            out,
            "{}",
            st.head(&format!("ERRORS BY GROUP (column '{}')", self.column))
        );
        let w = self
            .groups
            .iter()
            .map(|g| g.group.chars().count())
            .max()
            .unwrap_or(5)
            .clamp(5, 24);
        let classes = self
            .groups
            .iter()
            .any(|g| matches!(g.figures, Some(FiguresView::Classes { .. })));
        let (first, rest) = if classes {
            match &self.positive_class {
                Some(p) => (
                    "misclassified",
                    format!("  {:<26}  {:<26}", format!("'{p}' caught"), "false alarms"),
                ),
                None => ("misclassified", String::new()),
            }
        } else {
            ("root mean sq. error", format!("  {:>10}", "no skill"))
        };
        let head = format!("  {:<w$}  {:>6}  {first:<26}{rest}", "group", "rows");
        let _ = writeln!(out, "{}", head.trim_end());
        for g in &self.groups {
            let name: String = g.group.chars().take(24).collect();
            let mut row = format!("  {name:<w$}  {:>6}", g.rows);
            match &g.figures {
                None => row.push_str("  (no row with a known target)"),
                Some(f @ FiguresView::Classes { .. }) => {
                    let h = f.headline();
                    let _ = write!(
                        row,
                        "  {:<26}",
                        share_with_interval(Some(h.value), h.interval)
                    );
                    if let Some(t) = &g.at_cutoff {
                        let _ = write!(
                            row,
                            "  {:<26}  {:<26}",
                            share_with_interval(t.recall, t.recall_interval),
                            share_with_interval(t.false_alarm_rate, t.false_alarm_interval)
                        );
                    }
                }
                Some(f @ FiguresView::Values { .. }) => {
                    let h = f.headline();
                    let i = h.interval.map_or("-".to_string(), |i| {
                        format!("{} to {}", sig(i.low, 3), sig(i.high, 3))
                    });
                    let _ = write!(
                        row,
                        "  {:<26}  {:>10}",
                        format!("{} ({i})", sig(h.value, 4)),
                        h.no_skill.map_or("-".to_string(), |v| sig(v, 4))
                    );
                }
            }
            let _ = writeln!(out, "{}", row.trim_end());
        }
        let _ = writeln!(out);
        paragraph(
            out,
            "95% intervals (Wilson 1927 for shares). Groups whose intervals do not overlap \
             differ by more than chance; a small group's wide interval says little either way.",
        );
        let _ = writeln!(out);
    }
}
