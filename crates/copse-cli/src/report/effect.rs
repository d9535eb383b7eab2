//! The report of `copse effect`: for each input asked for, the average prediction at
//! each grid point with the data rows near it, and for each pair the interaction share
//! of its heat map; the files written; and how to read effect curves (they describe
//! the model, not causes).
use super::model::ModelView;
use super::{caution, line, paragraph, Style, LABEL};
use crate::numbers::{pct, pct_short, sig};
use serde::Serialize;
use std::fmt::Write;

/// How to read effect curves, printed in every report that shows them.
pub const READING: &str = "Each curve shows how this model's prediction moves when one input is \
set to each value and every other input is left as it is in each row: the average over the rows \
(bold) and single rows (faint). They describe the model, not causes: changing a pipe's age on \
paper does not change its material or soil, and inputs that go together in the data are varied \
apart here, so parts of a curve may rest on combinations the data never holds. Where the bars \
under a curve are low the curve rests on few rows, and beyond the data's range a forest \
predicts flat.";

/// The report of `copse effect`.
#[derive(Serialize)]
pub struct EffectView<'a> {
    #[serde(flatten)]
    pub(crate) model: ModelView<'a>,
    /// The data file.
    pub(crate) source: String,
    /// Rows read from it.
    pub(crate) rows_read: usize,
    /// Rows averaged over (all, or the sample drawn).
    pub(crate) rows_averaged: usize,
    /// What the charts and the printed averages show ("chance of 'yes'").
    pub(crate) shown: String,
    /// The class shown (null for numbers).
    pub(crate) shown_class: Option<String>,
    /// One entry per input asked for.
    pub(crate) effects: Vec<CurveView>,
    /// One entry per pair asked for.
    pub(crate) surfaces: Vec<SurfaceView>,
    /// How to read the curves.
    pub(crate) reading: &'static str,
    #[serde(skip)]
    pub(crate) chances: bool,
}

/// One input's effect curve.
#[derive(Serialize)]
pub struct CurveView {
    pub(crate) input: String,
    /// `numeric` or `categorical`.
    pub(crate) kind: &'static str,
    /// Grid values (numbers) or category labels.
    pub(crate) grid: Vec<serde_json::Value>,
    /// The average of the shown output at each grid point.
    pub(crate) average: Vec<f64>,
    /// Data rows near each grid point (numeric: nearest to it; categorical: in it).
    pub(crate) rows_near: Vec<usize>,
    /// Rows missing the input (or holding a category the model never saw).
    pub(crate) rows_missing: usize,
    /// The data rows (counting from 1) whose own curves are drawn and written.
    pub(crate) rows_drawn: Vec<usize>,
    pub(crate) csv: String,
    pub(crate) svg: String,
    #[serde(skip)]
    pub(crate) labels: Vec<String>,
}

/// One pair's heat map.
#[derive(Serialize)]
pub struct SurfaceView {
    /// The two inputs: the first down the side of the map, the second along it.
    pub(crate) inputs: [String; 2],
    pub(crate) grids: [Vec<serde_json::Value>; 2],
    /// The average of the shown output in each cell, by the first input's points.
    pub(crate) average: Vec<Vec<f64>>,
    /// Data rows near each cell.
    pub(crate) rows_near: Vec<Vec<usize>>,
    /// The share of the map's variation that is not the sum of the two inputs'
    /// separate effects (0: no interaction).
    pub(crate) interaction_share: f64,
    pub(crate) csv: String,
    pub(crate) svg: String,
}

impl EffectView<'_> {
    fn value(&self, v: f64) -> String {
        if self.chances {
            pct(v)
        } else {
            sig(v, 4)
        }
    }

    /// The printed report.
    pub fn text(&self, st: Style) -> String {
        let mut t = String::new();
        let _ = writeln!(t, "copse effect curves of {}\n", self.model.target);
        let _ = writeln!(t, "{}", st.head("ROWS"));
        let averaged = if self.rows_averaged == self.rows_read {
            "every row averaged".to_string()
        } else {
            format!("{} drawn at random and averaged", self.rows_averaged)
        };
        line(
            &mut t,
            "data",
            &format!("{}, {} rows ({averaged})", self.source, self.rows_read),
        );
        let all = if self.chances {
            " (the CSV files hold every class)"
        } else {
            ""
        };
        line(&mut t, "shown", &format!("{}{all}", self.shown));
        let _ = writeln!(t);
        for c in &self.effects {
            let _ = writeln!(
                t,
                "{}",
                st.head(&format!(
                    "EFFECT OF {} ({}, {} points)",
                    c.input,
                    c.kind,
                    c.labels.len()
                ))
            );
            let w = c
                .labels
                .iter()
                .map(|l| l.chars().count())
                .max()
                .unwrap_or(0)
                .max(c.input.chars().count())
                .max(LABEL - 2);
            let _ = writeln!(
                t,
                "  {:<w$}  {:>16}  {:>9}",
                c.input, "average", "rows near"
            );
            for ((l, &m), &n) in c.labels.iter().zip(&c.average).zip(&c.rows_near) {
                let _ = writeln!(t, "  {l:<w$}  {:>16}  {n:>9}", self.value(m));
            }
            let (lo, hi) = c
                .average
                .iter()
                .fold((f64::MAX, f64::MIN), |(a, b), &v| (a.min(v), b.max(v)));
            line(
                &mut t,
                "average moves",
                &format!("from {} to {}", self.value(lo), self.value(hi)),
            );
            if c.rows_missing > 0 {
                line(&mut t, "rows missing it", &c.rows_missing.to_string());
            }
            line(&mut t, "files", &format!("{}, {}", c.csv, c.svg));
            let _ = writeln!(t);
        }
        for s in &self.surfaces {
            let _ = writeln!(
                t,
                "{}",
                st.head(&format!("HEAT MAP OF {} AND {}", s.inputs[0], s.inputs[1]))
            );
            let flat = s.average.iter().flatten().copied();
            let (lo, hi) = flat.fold((f64::MAX, f64::MIN), |(a, b), v| (a.min(v), b.max(v)));
            line(
                &mut t,
                "average ranges",
                &format!("from {} to {}", self.value(lo), self.value(hi)),
            );
            line(
                &mut t,
                "interaction share",
                &format!(
                    "{} of the map's variation is not a sum of the two inputs' own effects",
                    pct_short(s.interaction_share)
                ),
            );
            let empty = s.rows_near.iter().flatten().filter(|&&n| n == 0).count();
            if empty > 0 {
                line(
                    &mut t,
                    "cells with no rows",
                    &format!("{empty} (crossed out on the map: the model extrapolates there)"),
                );
            }
            line(&mut t, "files", &format!("{}, {}", s.csv, s.svg));
            let _ = writeln!(t);
        }
        let _ = writeln!(t, "{}", st.head("READ THESE AS THE MODEL'S, NOT AS CAUSES"));
        paragraph(&mut t, READING);
        let _ = writeln!(t);
        caution(&mut t, st);
        t
    }
}
