//! The mean-absolute-contribution ranking beside permutation importance: as a view
//! (JSON key `contribution_ranking`: the rows explained, what is measured, and a
//! ranked list of `{feature, mean_abs, rank}`) and as a printed table with a bar per
//! input.
use super::{paragraph, Style};
use crate::numbers::{column_decimals, count, fixed};
use copse_forest::{ContributionRanking, Forest};
use serde::Serialize;
use std::fmt::Write;

/// One input in the ranking.
#[derive(Debug, Serialize)]
struct RankedPart<'a> {
    feature: &'a str,
    mean_abs: f64,
    rank: usize,
}

/// The ranking with what it measures.
#[derive(Debug, Serialize)]
pub struct ContributionView<'a> {
    /// Rows explained (evenly spaced through the data when it had more).
    rows: usize,
    /// Rows the data had.
    rows_given: usize,
    /// What a part moves: `value`, `class <label>` (two classes: the second), or
    /// `classes` (several: half the sum over classes).
    output: String,
    ranking: Vec<RankedPart<'a>>,
}

impl<'a> ContributionView<'a> {
    /// The view of `r`, computed with `forest`.
    pub fn new(forest: &'a Forest, r: &ContributionRanking) -> Self {
        let classes = forest.classes();
        let output = match classes.len() {
            0 => "value".to_string(),
            2 => format!("class {}", classes[1]),
            _ => "classes".to_string(),
        };
        let meta = forest.meta();
        let ranking = r
            .order
            .iter()
            .enumerate()
            .map(|(i, &j)| RankedPart {
                feature: &meta[j].name,
                mean_abs: r.mean_abs[j],
                rank: i + 1,
            })
            .collect();
        Self {
            rows: r.rows,
            rows_given: r.rows_given,
            output,
            ranking,
        }
    }

    /// The printed section: a heading, what the figures are, and the table.
    pub fn text(&self, out: &mut String, st: Style, target: &str) {
        let _ = writeln!(out, "{}", st.head("HOW FAR EACH INPUT MOVES A PREDICTION"));
        let moved = match self.output.as_str() {
            "value" => format!("the predicted {target}"),
            "classes" => "the class probabilities (half the sum over classes: the share of \
                          probability moved between classes)"
                .to_string(),
            class => format!("the chance that {target} is {}", &class[6..]),
        };
        let rows = if self.rows < self.rows_given {
            format!(
                "{} evenly spaced through the {}",
                count(self.rows, "row", "rows"),
                count(self.rows_given, "row", "rows")
            )
        } else {
            format!("the {}", count(self.rows, "row", "rows"))
        };
        paragraph(
            out,
            &format!(
                "Mean absolute contribution (exact Shapley values of the forest) over {rows}: \
                 how far, on average, each input moves {moved} away from the model's base \
                 value. It needs no outcomes and does not shuffle inputs apart, so it can \
                 differ from the permutation ranking above where inputs go together; it \
                 describes the model, not causes."
            ),
        );
        let _ = writeln!(out);
        self.table(out);
    }

    /// The ranked table alone, each input with a bar as long as its share of the
    /// largest mean, and a blank line after it.
    pub fn table(&self, out: &mut String) {
        let w = self
            .ranking
            .iter()
            .map(|r| r.feature.len())
            .max()
            .unwrap_or(5)
            .max(5);
        let top = self.ranking.first().map_or(0.0, |r| r.mean_abs);
        let d = column_decimals(top);
        let _ = writeln!(out, "  {:>3}  {:<w$}  {:>12}", "#", "input", "mean |part|");
        for r in &self.ranking {
            let bar = if top > 0.0 {
                "█".repeat(((r.mean_abs / top) * 24.0).round() as usize)
            } else {
                String::new()
            };
            let _ = writeln!(
                out,
                "  {:>3}  {:<w$}  {:>12}  {bar}",
                r.rank,
                r.feature,
                fixed(r.mean_abs, d)
            );
        }
        let _ = writeln!(out);
    }
}
