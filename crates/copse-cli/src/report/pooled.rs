//! What every report says about a pooled model (`copse pool`): that it is not the
//! model of one run on all rows, and each partition's own out-of-bag figures and
//! importance, never a pooled out-of-bag figure (each tree saw a bootstrap of its own
//! partition only). As JSON, the `pooled` key of the model summary.
use super::measures::{measures_block, MeasuresView};
use super::ranking::{ranking, RankView};
use super::{line, paragraph, Style};
use crate::numbers::{count, sig};
use copse_forest::{Forest, Pool, POOLED_CAUTION};
use serde::Serialize;
use std::fmt::Write;

/// The pooled partitions, with the sentence that the whole has no out-of-bag figure.
#[derive(Debug, Serialize)]
pub struct PooledView<'a> {
    about: &'static str,
    /// How the pooled score is made.
    score: &'static str,
    partitions: Vec<PartitionView<'a>>,
}

/// One partition's model: its file, data, seed, trees and its own out-of-bag figures.
#[derive(Debug, Serialize)]
struct PartitionView<'a> {
    model: &'a str,
    source: &'a str,
    rows_read: usize,
    seed: u64,
    trees: usize,
    /// The partition's share of the pooled score (its trees over all trees).
    weight: f64,
    oob: MeasuresView<'a>,
    rows_never_out_of_bag: usize,
    /// Its own out-of-bag permutation importance (empty when it had none).
    oob_importance: Vec<RankView<'a>>,
}

/// How a pooled score is made.
const SCORE: &str = "the mean over all trees of every partition, so each partition weighs by \
                     its number of trees";

impl<'a> PooledView<'a> {
    /// The view of `model`'s partitions, `None` for a model of one run.
    pub fn of(model: &'a Forest) -> Option<Self> {
        let pool: &Pool = model.pool_record()?;
        let all = model.trees().len().max(1) as f64;
        Some(PooledView {
            about: POOLED_CAUTION,
            score: SCORE,
            partitions: pool
                .members
                .iter()
                .map(|m| PartitionView {
                    model: &m.name,
                    source: &m.card.source,
                    rows_read: m.card.rows_read,
                    seed: m.seed,
                    trees: m.trees,
                    weight: m.trees as f64 / all,
                    oob: MeasuresView::new(m.oob.metrics.as_ref()),
                    rows_never_out_of_bag: m.oob.rows_never_oob,
                    oob_importance: m
                        .oob_importance
                        .as_ref()
                        .map(|i| ranking(&i.error))
                        .unwrap_or_default(),
                })
                .collect(),
        })
    }
}

/// Most inputs of each partition's own importance listed in the text.
const TOP_INPUTS: usize = 5;

/// The printed section on a pooled model's partitions (nothing for a model of one
/// run); it takes the place of the out-of-bag section.
pub fn pooled_section(out: &mut String, st: Style, model: &Forest) {
    let Some(pool) = model.pool_record() else {
        return;
    };
    let _ = writeln!(
        out,
        "{}",
        st.head("POOLED PARTITIONS (forests trained apart, each on its own rows)")
    );
    paragraph(out, &format!("Note: {POOLED_CAUTION}."));
    paragraph(out, &format!("A pooled score is {SCORE}."));
    let all = model.trees().len().max(1);
    for (k, m) in pool.members.iter().enumerate() {
        let _ = writeln!(out);
        let _ = writeln!(
            out,
            "  partition {} of {}: {}",
            k + 1,
            pool.members.len(),
            m.name
        );
        line(out, "  training data", &m.card.source);
        line(out, "  rows read", &m.card.rows_read.to_string());
        line(
            out,
            "  trees",
            &format!(
                "{} (seed {}), {} of the score",
                m.trees,
                m.seed,
                sig(m.trees as f64 / all as f64, 3)
            ),
        );
        match &m.oob.metrics {
            Some(metrics) => {
                let _ = writeln!(out, "    its own out-of-bag check:");
                let mut block = String::new();
                measures_block(&mut block, metrics, model.classes(), "rows judged");
                for l in block.lines() {
                    if l.is_empty() {
                        let _ = writeln!(out);
                    } else {
                        let _ = writeln!(out, "  {l}");
                    }
                }
            }
            None => line(
                out,
                "  out-of-bag check",
                "none (no row was left out of any tree)",
            ),
        }
        if m.oob.rows_never_oob > 0 {
            line(
                out,
                "  never out of bag",
                &count(m.oob.rows_never_oob, "row", "rows"),
            );
        }
        if let Some(imp) = &m.oob_importance {
            let top: Vec<String> = imp
                .error
                .ranked()
                .into_iter()
                .take(TOP_INPUTS)
                .map(|f| f.name.clone())
                .collect();
            line(out, "  inputs that matter", &top.join(", "));
        }
    }
    let _ = writeln!(out);
}
