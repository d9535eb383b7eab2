//! Leaf rows: which training rows each leaf of each tree was grown on, with how many
//! times the tree drew them, and the training outcomes; kept in the model when asked
//! for at training time ([`crate::TrainOptions::keep_leaf_rows`]), because outcome
//! quantiles and ranges ([`crate::intervals`]) need them.
//!
//! Layout: the outcomes of the training rows with a known outcome, sorted ascending
//! (8 bytes a row, once); and per tree, for every row the tree drew, the rank of its
//! outcome in that sorted list (4 bytes) and its draw count (1 byte), grouped by leaf,
//! with the start of each node's group (4 bytes a node; internal nodes hold empty
//! groups). Under the bootstrap a tree draws about 63.2% of the rows at least once
//! (1 - 1/e, common practice), so a model grows by about `0.632 * 5 = 3.2` bytes per
//! row and tree, plus 4 bytes per node (8 bytes a row once). Storing ranks rather than
//! row numbers lets a quantile be read off the members in rank order without sorting
//! outcomes at scoring time.
//!
//! A draw count above 255 is stored as 255; with bootstrap samples that needs one row
//! drawn 255 times out of `n` draws, which has probability below `1 / 255!`.
use crate::error::{Error, ErrorKind, Result};
use copse_tree::Tree;
use ndarray::ArrayView2;
use serde::{Deserialize, Serialize};

/// Bytes kept per member of a leaf (a drawn row in one tree): its outcome's rank (4)
/// and its draw count (1).
pub const LEAF_MEMBER_BYTES: usize = 5;
/// Bytes kept per tree node: the start of its group of members.
pub const LEAF_NODE_BYTES: usize = 4;

/// The training rows of every leaf, and the training outcomes.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct LeafRows {
    /// Outcomes of the training rows with a known outcome, ascending.
    pub(crate) outcomes: Vec<f64>,
    /// One entry per tree, in tree order.
    pub(crate) trees: Vec<TreeRows>,
    /// How often training outcomes fell inside their out-of-bag range, measured at
    /// training (`None` when no row was out of bag).
    pub(crate) oob_check: Option<IntervalCheck>,
}

/// One tree's leaf members.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub(crate) struct TreeRows {
    /// Node `v`'s members are entries `starts[v]..starts[v + 1]` (one more entry than
    /// nodes; internal nodes have none).
    pub(crate) starts: Vec<u32>,
    /// Each member's outcome rank (an index into [`LeafRows::outcomes`]).
    pub(crate) ranks: Vec<u32>,
    /// Each member's draw count (at least 1).
    pub(crate) counts: Vec<u8>,
}

impl TreeRows {
    /// The members of `tree`, grown on case weights `weights` (whole draw counts) over
    /// the rows of `x`; `rank[i]` is row `i`'s outcome rank. Each drawn row descends
    /// the tree on its raw values, which takes it to the leaf growing put it in (the
    /// thresholds lie between the bins training used).
    pub(crate) fn collect(
        tree: &Tree,
        x: ArrayView2<'_, f64>,
        weights: &[f64],
        rank: &[u32],
    ) -> Self {
        let nodes = tree.nodes().len();
        let mut starts = vec![0u32; nodes + 1];
        let mut placed: Vec<(u32, u32)> = Vec::new();
        for (i, &w) in weights.iter().enumerate() {
            if w > 0.0 {
                let leaf = tree.leaf_index_with(|j| x[[i, j]]);
                starts[leaf + 1] += 1;
                placed.push((i as u32, leaf as u32));
            }
        }
        for v in 0..nodes {
            starts[v + 1] += starts[v];
        }
        let mut next: Vec<u32> = starts[..nodes].to_vec();
        let mut ranks = vec![0u32; placed.len()];
        let mut counts = vec![0u8; placed.len()];
        for (i, leaf) in placed {
            let at = next[leaf as usize] as usize;
            next[leaf as usize] += 1;
            ranks[at] = rank[i as usize];
            counts[at] = weights[i as usize].round().clamp(1.0, 255.0) as u8;
        }
        TreeRows {
            starts,
            ranks,
            counts,
        }
    }

    /// The members of node `v`: (outcome ranks, draw counts).
    #[inline]
    pub(crate) fn members(&self, v: usize) -> (&[u32], &[u8]) {
        let (a, b) = (self.starts[v] as usize, self.starts[v + 1] as usize);
        (&self.ranks[a..b], &self.counts[a..b])
    }

    fn heap_bytes(&self) -> usize {
        4 * self.starts.capacity() + 4 * self.ranks.capacity() + self.counts.capacity()
    }
}

/// Each labelled row's outcome rank (ties by row order), and the sorted outcomes;
/// rows with a missing outcome get `u32::MAX` (they are never drawn).
pub(crate) fn outcome_ranks(y: &[f64]) -> (Vec<u32>, Vec<f64>) {
    let mut order: Vec<u32> = (0..y.len() as u32)
        .filter(|&i| !y[i as usize].is_nan())
        .collect();
    order.sort_by(|&a, &b| y[a as usize].total_cmp(&y[b as usize]).then(a.cmp(&b)));
    let mut rank = vec![u32::MAX; y.len()];
    for (r, &i) in order.iter().enumerate() {
        rank[i as usize] = r as u32;
    }
    let sorted = order.iter().map(|&i| y[i as usize]).collect();
    (rank, sorted)
}

impl LeafRows {
    pub(crate) fn new(outcomes: Vec<f64>, trees: Vec<TreeRows>) -> Self {
        LeafRows {
            outcomes,
            trees,
            oob_check: None,
        }
    }

    /// Training rows with a known outcome (the rows quantiles are drawn from).
    pub fn rows(&self) -> usize {
        self.outcomes.len()
    }

    /// Number of trees.
    pub fn trees(&self) -> usize {
        self.trees.len()
    }

    /// The training outcomes, ascending.
    pub fn outcomes(&self) -> &[f64] {
        &self.outcomes
    }

    /// Leaf members over all trees (drawn rows counted once per tree).
    pub fn members(&self) -> usize {
        self.trees.iter().map(|t| t.ranks.len()).sum()
    }

    /// Share of training outcomes inside their out-of-bag range and its mean width,
    /// measured at training; `None` when no row was out of bag (or for a model read
    /// from a file whose check is absent).
    pub fn oob_check(&self) -> Option<&IntervalCheck> {
        self.oob_check.as_ref()
    }

    /// Bytes the table occupies in memory.
    pub fn heap_bytes(&self) -> usize {
        8 * self.outcomes.capacity() + self.trees.iter().map(TreeRows::heap_bytes).sum::<usize>()
    }

    /// Checks the table fits `trees` and can be read without a fault: one entry per
    /// tree, one start per node plus one, starts rising to the member count, members
    /// only in leaves, ranks inside the outcomes, counts of at least 1, outcomes finite
    /// and ascending.
    pub(crate) fn check(&self, trees: &[Tree]) -> Result<()> {
        let bad = |what: String| {
            Err(Error::new(
                ErrorKind::InvalidModel,
                format!(
                    "the model is inconsistent: its leaf rows {what}; retrain or use another \
                     model file"
                ),
            ))
        };
        if self.trees.len() != trees.len() {
            return bad(format!(
                "cover {} trees, the model has {}",
                self.trees.len(),
                trees.len()
            ));
        }
        let m = self.outcomes.len();
        if m > u32::MAX as usize
            || self.outcomes.iter().any(|v| !v.is_finite())
            || self.outcomes.windows(2).any(|w| w[0] > w[1])
        {
            return bad("hold outcomes that are not finite and ascending".into());
        }
        for (t, (rows, tree)) in self.trees.iter().zip(trees).enumerate() {
            let nodes = tree.nodes();
            let sound = rows.starts.len() == nodes.len() + 1
                && rows.starts.first() == Some(&0)
                && rows.starts.last().map(|&s| s as usize) == Some(rows.ranks.len())
                && rows.counts.len() == rows.ranks.len()
                && rows.starts.windows(2).all(|w| w[0] <= w[1])
                && nodes
                    .iter()
                    .enumerate()
                    .all(|(v, n)| n.is_leaf() || rows.starts[v] == rows.starts[v + 1])
                && rows.ranks.iter().all(|&r| (r as usize) < m)
                && rows.counts.iter().all(|&c| c > 0);
            if !sound {
                return bad(format!("of tree {t} do not fit its nodes or outcomes"));
            }
        }
        if let Some(c) = &self.oob_check {
            if !c.is_sound() {
                return bad("carry an out-of-bag check that makes no sense".into());
            }
        }
        Ok(())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn ranks_sort_outcomes_and_skip_missing_ones() {
        let (rank, sorted) = outcome_ranks(&[3.0, f64::NAN, -1.0, 3.0, 0.5]);
        assert_eq!(sorted, vec![-1.0, 0.5, 3.0, 3.0]);
        assert_eq!(rank, vec![2, u32::MAX, 0, 3, 1]);
    }
}

/// How often outcomes fell inside their ranges: the out-of-bag check made at training
/// ([`LeafRows::oob_check`]).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct IntervalCheck {
    /// The coverage the ranges were made for (0.9: from the 5% to the 95% quantile).
    pub level: f64,
    /// Rows judged: rows with a known outcome that at least one tree left out.
    pub rows: usize,
    /// Rows whose outcome lay inside its range (ends included).
    pub inside: usize,
    /// Mean width of the ranges (high end minus low end), in outcome units.
    pub mean_width: f64,
}

impl IntervalCheck {
    /// Share of the rows judged whose outcome lay inside its range (NaN with no row).
    pub fn share_inside(&self) -> f64 {
        self.inside as f64 / self.rows as f64
    }

    pub(crate) fn is_sound(&self) -> bool {
        self.level > 0.0
            && self.level < 1.0
            && self.inside <= self.rows
            && self.rows > 0
            && self.mean_width.is_finite()
            && self.mean_width >= 0.0
    }
}
