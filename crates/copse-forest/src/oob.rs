//! Out-of-bag estimates: each row is predicted by the trees that did not see it, which
//! estimates the forest's error without a holdout (Breiman 1996, "Out-of-bag
//! estimation"; Breiman 2001, section 3.1).
use crate::metrics::{class_metrics_weighted, predicted_class, value_metrics_weighted, Metrics};
use crate::oob_summary::{OobReport, OobSummary};
use crate::outcome::Outcome;
use crate::predict::Scorer;
use crate::priors::{shift_row, shifted_class};
use crate::progress::{Progress, Stage};
use copse_tree::Tree;
use ndarray::{Array2, ArrayView2};
use rayon::prelude::*;
use std::sync::atomic::{AtomicUsize, Ordering};

/// Which rows a tree left out of its sample, one bit per data row (set = out of bag).
/// Kept for the whole of training: `trees * rows / 8` bytes.
#[derive(Debug, Clone)]
pub(crate) struct OobMask(Vec<u64>);

impl OobMask {
    /// Rows with weight 0 are out of bag.
    pub(crate) fn from_weights(w: &[f64]) -> Self {
        let mut bits = vec![0u64; w.len().div_ceil(64)];
        for (i, &x) in w.iter().enumerate() {
            if x == 0.0 {
                bits[i / 64] |= 1 << (i % 64);
            }
        }
        OobMask(bits)
    }

    /// True when row `i` is out of bag.
    #[inline]
    pub(crate) fn contains(&self, i: usize) -> bool {
        self.0[i / 64] >> (i % 64) & 1 == 1
    }
}

/// Per-block results of the out-of-bag pass.
struct Block {
    preds: Vec<f64>,
    trees_out: Vec<u32>,
    /// Per tree: rows whose first out-of-bag tree it is (their case weights).
    d_cover: Vec<f64>,
    /// Per tree: change in the number (case weight) of misclassified rows.
    d_wrong: Vec<f64>,
    /// Per tree: change in the (weighted) sum of squared errors.
    d_sse: Vec<f64>,
}

/// Rows per block; depends only on the row count so that sums over blocks are taken
/// in the same order whatever the number of threads. Blocks of a few thousand rows
/// let each tree, once in cache, serve many rows.
pub(crate) fn block_rows(n: usize) -> usize {
    n.div_ceil(64).clamp(256, 4096)
}

/// Most rows that pass through all trees together (several blocks): each tree is
/// read from memory once per such group, so a group should hold more rows than a tree
/// has nodes. Grouping does not change any result: every block keeps its own sums.
const GROUP_ROWS: usize = 16384;

/// Most nodes laid out for scoring at once: the trees are scored in runs of whole
/// trees holding at most this many nodes (or one tree), so the pass holds one run's
/// layout (16 bytes a node) rather than a second copy of the whole forest. A million
/// nodes is 16 MB, and a run of trees still serves every group of rows.
const RUN_NODES: usize = 1 << 20;

/// Computes out-of-bag predictions, the error curve and the summary measures.
///
/// With `shift` (class-balanced models, [`crate::priors`]) every row's class
/// probabilities, and the class it is counted as predicting along the error curve, are
/// shifted back to the training class shares. With case `weights` every figure and
/// the error curve weigh each row by its weight (the per-row predictions do not
/// change).
#[allow(clippy::too_many_arguments)]
pub(crate) fn out_of_bag(
    trees: &[Tree],
    masks: &[OobMask],
    x: ArrayView2<'_, f64>,
    outcome: &Outcome,
    weights: Option<&[f64]>,
    shift: Option<&[f64]>,
    progress: &(dyn Fn(Progress) + Sync),
) -> (OobReport, OobSummary) {
    let n = x.nrows();
    let nt = trees.len();
    let per_tree = trees.iter().map(|t| t.nodes().len()).sum::<usize>() / nt.max(1);
    let pass = Pass {
        masks,
        x,
        outcome,
        k: outcome_width(outcome),
        bs: block_rows(n),
        shift,
        weights,
    };
    let n_blocks = n.div_ceil(pass.bs);
    let group = group_blocks(n, per_tree, pass.bs);
    let mut groups: Vec<Group> = (0..n_blocks.div_ceil(group))
        .map(|g| pass.group(g * group, ((g + 1) * group).min(n_blocks), nt))
        .collect();
    // Runs of trees in tree order, each laid out, scored over every group and
    // dropped before the next: every row still meets its trees in tree order.
    let runs = tree_runs(trees, RUN_NODES);
    let total = n_blocks * runs.len();
    let done = AtomicUsize::new(0);
    for run in runs {
        let scorers = scorers(&trees[run.clone()], n, per_tree);
        groups.par_iter_mut().for_each(|g| {
            pass.score_group(g, run.start, &scorers);
            let d = done.fetch_add(g.blocks.len(), Ordering::Relaxed) + g.blocks.len();
            progress(Progress {
                stage: Stage::OutOfBag,
                done: d,
                total,
            });
        });
    }
    let blocks: Vec<Block> = groups
        .into_iter()
        .flat_map(|g| g.blocks)
        .map(|mut out| {
            mean_of_sums(&mut out, pass.k, shift);
            out
        })
        .collect();
    let curve = error_curve(&blocks, nt, outcome);
    summarize(blocks, n, pass.k, outcome, weights, curve)
}

/// Consecutive runs of whole trees of at most `limit` nodes each (a larger tree alone),
/// covering all of `trees`; one empty run when there are none.
fn tree_runs(trees: &[Tree], limit: usize) -> Vec<std::ops::Range<usize>> {
    let mut runs = Vec::new();
    let (mut start, mut nodes) = (0, 0);
    for (t, tree) in trees.iter().enumerate() {
        let size = tree.nodes().len();
        if t > start && nodes + size > limit {
            runs.push(start..t);
            (start, nodes) = (t, 0);
        }
        nodes += size;
    }
    runs.push(start..trees.len());
    runs
}

/// Each tree laid out for scoring once, when there are rows enough to pay for it.
fn scorers(trees: &[Tree], n: usize, per_tree: usize) -> Vec<Scorer<'_>> {
    trees
        .iter()
        .map(|t| {
            if n >= 2 * per_tree {
                Scorer::Compact(t.compact())
            } else {
                Scorer::Plain(t)
            }
        })
        .collect()
}

/// Blocks per group: about two rows per node of a tree, at most [`GROUP_ROWS`] rows,
/// and no more than a thread's share of the rows.
fn group_blocks(n: usize, per_tree: usize, bs: usize) -> usize {
    (2 * per_tree)
        .min(GROUP_ROWS)
        .min(n.div_ceil(rayon::current_num_threads()))
        .div_ceil(bs)
        .max(1)
}

/// What every group of the out-of-bag pass reads.
struct Pass<'a, 'x> {
    masks: &'a [OobMask],
    x: ArrayView2<'x, f64>,
    outcome: &'a Outcome,
    /// Outputs per row.
    k: usize,
    /// Rows per block.
    bs: usize,
    /// Class-share shift of a balanced model.
    shift: Option<&'a [f64]>,
    /// Case weights of the rows, if any.
    weights: Option<&'a [f64]>,
}

/// Where a group's rows stand in the running error measures: whether each row's
/// out-of-bag prediction so far is wrong (classes), or its squared error (values);
/// only the one the outcome needs is kept.
struct Running {
    was_wrong: Vec<bool>,
    prev_sq: Vec<f64>,
}

/// A group of blocks of rows that pass through the trees together, with what it
/// carries from one run of trees to the next.
struct Group {
    /// Data row of the group's first row.
    start: usize,
    /// Rows in the group.
    len: usize,
    blocks: Vec<Block>,
    running: Running,
}

impl Pass<'_, '_> {
    /// Blocks `first..last` of rows, for a forest of `nt` trees, before any tree.
    fn group(&self, first: usize, last: usize, nt: usize) -> Group {
        let (n, bs, k) = (self.x.nrows(), self.bs, self.k);
        let blocks: Vec<Block> = (first..last)
            .map(|b| {
                let len = ((b + 1) * bs).min(n) - b * bs;
                Block {
                    preds: vec![0.0; len * k],
                    trees_out: vec![0; len],
                    d_cover: vec![0.0; nt],
                    d_wrong: vec![0.0; nt],
                    d_sse: vec![0.0; nt],
                }
            })
            .collect();
        let start = first * bs;
        let len = (last * bs).min(n) - start;
        let classes = self.outcome.is_classes();
        let running = Running {
            was_wrong: vec![false; if classes { len } else { 0 }],
            prev_sq: vec![0.0; if classes { 0 } else { len }],
        };
        Group {
            start,
            len,
            blocks,
            running,
        }
    }

    /// Each row of group `g` predicted by the trees of `scorers` (trees `first..` of
    /// the forest) that left it out, summed onto its blocks' sums, and the per-tree
    /// changes of the error measures recorded.
    ///
    /// Trees in the outer loop keep each tree in cache for the whole group of rows,
    /// copied once into a contiguous buffer, whose out-of-bag rows descend several at
    /// a time. Each row still meets its trees in tree order (the error curve needs
    /// it), and each tree the rows of a block in row order, so every sum is taken in
    /// the same order as row by row.
    fn score_group(&self, g: &mut Group, first: usize, scorers: &[Scorer<'_>]) {
        let (start, len) = (g.start, g.len);
        let p = self.x.ncols();
        let rows = self.copy_rows(start, start + len);
        let mut picks: Vec<u32> = Vec::with_capacity(len);
        let mut leaves = vec![0u32; len];
        for (i, scorer) in scorers.iter().enumerate() {
            let t = first + i;
            picks.clear();
            picks.extend(
                (0..len)
                    .filter(|&r| self.masks[t].contains(start + r))
                    .map(|r| r as u32),
            );
            scorer.leaf_indices_of(&rows, p, &picks, &mut leaves);
            for (&r, &leaf) in picks.iter().zip(&leaves) {
                self.add_leaf(g, scorer.tree(), t, r as usize, leaf);
            }
        }
    }

    /// Rows `start..end` of the data, row-major in one buffer.
    fn copy_rows(&self, start: usize, end: usize) -> Vec<f64> {
        let p = self.x.ncols();
        let mut rows = vec![0.0; (end - start) * p];
        if p > 0 {
            for (dst, i) in rows.chunks_exact_mut(p).zip(start..end) {
                let row = self.x.row(i);
                match row.as_slice() {
                    Some(v) => dst.copy_from_slice(v),
                    None => dst.iter_mut().zip(row.iter()).for_each(|(d, &v)| *d = v),
                }
            }
        }
        rows
    }

    /// Adds leaf `leaf` of `tree` (tree `t` of the forest) to row `r` of group `g`,
    /// and records how the error measures change with it.
    fn add_leaf(&self, g: &mut Group, tree: &Tree, t: usize, r: usize, leaf: u32) {
        let (bs, k) = (self.bs, self.k);
        let i = g.start + r;
        let running = &mut g.running;
        let (out, rb) = (&mut g.blocks[r / bs], r % bs);
        let sums = &mut out.preds[rb * k..(rb + 1) * k];
        sums.iter_mut()
            .zip(&tree.leaf_value(leaf as usize))
            .for_each(|(s, v)| *s += v);
        out.trees_out[rb] += 1;
        let count = out.trees_out[rb];
        if self.outcome.is_missing(i) {
            return;
        }
        // Without weights every row weighs exactly 1.0, so these sums are counts.
        let w = self.weights.map_or(1.0, |w| w[i]);
        if count == 1 {
            out.d_cover[t] += w;
        }
        match self.outcome {
            Outcome::Classes { codes, .. } => {
                let class = match self.shift {
                    Some(w) => shifted_class(w, sums),
                    None => predicted_class(sums),
                };
                let wrong = class != codes[i] as usize;
                out.d_wrong[t] +=
                    w * (f64::from(u8::from(wrong)) - f64::from(u8::from(running.was_wrong[r])));
                running.was_wrong[r] = wrong;
            }
            Outcome::Values(y) => {
                let e = sums[0] / f64::from(count) - y[i];
                out.d_sse[t] += w * (e * e - running.prev_sq[r]);
                running.prev_sq[r] = e * e;
            }
        }
    }
}

/// Turns a block's sums of leaf outputs into means over the trees that left each row
/// out (NaN for a row no tree left out), shifted to the training class shares when
/// `shift` is given.
fn mean_of_sums(out: &mut Block, k: usize, shift: Option<&[f64]>) {
    for (r, o) in out.preds.chunks_mut(k).enumerate() {
        let count = out.trees_out[r];
        if count == 0 {
            o.iter_mut().for_each(|v| *v = f64::NAN);
        } else {
            o.iter_mut().for_each(|v| *v /= f64::from(count));
            if let Some(w) = shift {
                shift_row(w, o);
            }
        }
    }
}

/// Entry `t`: the out-of-bag error of trees `0..=t`, the per-tree changes added over
/// the blocks in block order.
fn error_curve(blocks: &[Block], nt: usize, outcome: &Outcome) -> Vec<Option<f64>> {
    let (mut cover, mut wrong, mut sse) = (0.0f64, 0.0f64, 0.0f64);
    let mut curve = Vec::with_capacity(nt);
    for t in 0..nt {
        for b in blocks {
            cover += b.d_cover[t];
            wrong += b.d_wrong[t];
            sse += b.d_sse[t];
        }
        curve.push((cover > 0.0).then(|| match outcome {
            Outcome::Classes { .. } => wrong / cover,
            Outcome::Values(_) => sse.max(0.0) / cover,
        }));
    }
    curve
}

/// The per-row predictions of all blocks, and the summary measures over them.
fn summarize(
    blocks: Vec<Block>,
    n: usize,
    k: usize,
    outcome: &Outcome,
    weights: Option<&[f64]>,
    error_curve: Vec<Option<f64>>,
) -> (OobReport, OobSummary) {
    let mut preds = Vec::with_capacity(n * k);
    let mut trees_out = Vec::with_capacity(n);
    // Each block is freed as soon as it is copied.
    for b in blocks {
        preds.extend_from_slice(&b.preds);
        trees_out.extend_from_slice(&b.trees_out);
    }
    let predictions =
        Array2::from_shape_vec((n, k), preds).expect("blocks hold n rows of k outputs");
    let metrics = match outcome {
        Outcome::Classes { codes, .. } => {
            class_metrics_weighted(codes, predictions.view(), weights).map(Metrics::Classes)
        }
        Outcome::Values(y) => {
            value_metrics_weighted(y, &predictions.column(0).to_vec(), weights).map(Metrics::Values)
        }
    };
    let rows_labelled = outcome.n_labelled();
    let rows_never_oob = (0..n)
        .filter(|&i| !outcome.is_missing(i) && trees_out[i] == 0)
        .count();
    let summary = OobSummary {
        metrics,
        rows_labelled,
        rows_never_oob,
        rows_missing_outcome: n - rows_labelled,
        error_curve,
    };
    (
        OobReport {
            predictions,
            trees_out,
        },
        summary,
    )
}

/// Width of a prediction row for this outcome.
pub(crate) fn outcome_width(outcome: &Outcome) -> usize {
    match outcome {
        Outcome::Classes { labels, .. } => labels.len(),
        Outcome::Values(_) => 1,
    }
}
