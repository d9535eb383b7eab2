//! Out-of-bag permutation importance (Breiman 2001, section 10): each tree's increase
//! in error on its own out-of-bag rows when one input is permuted among them.
use crate::importance::{permutation_tables, ImportanceMethod, PermutationImportance};
use crate::loss::{row_loss, Loss};
use crate::oob::OobMask;
use crate::outcome::Outcome;
use crate::progress::{Progress, Stage};
use crate::rng::{task_rng, Purpose};
use crate::row_block::{copy_rows, STRETCH};
use crate::turn_walk::TurnWalk;
use copse_tree::tree::CompactTree;
use copse_tree::{FeatureMeta, Tree};
use ndarray::ArrayView2;
use rand::seq::SliceRandom;
use rayon::prelude::*;
use std::sync::atomic::{AtomicUsize, Ordering};

/// One tree's increases in (error, Brier) per input when each input is permuted among
/// the tree's out-of-bag rows `rows`.
///
/// A row reaches the same leaf as before unless a node on its way that tests input
/// `j` sends the permuted value to the other side: so each row walks its way once,
/// every node on it looking at the permuted value of the input it tests too, and the
/// row is sent down the tree again, for each input, only from the first node testing
/// it that turns it, into the side it did not take ([`TurnWalk`]). The result is
/// exactly that of re-predicting every row, at a cost that grows with the rows that
/// change course rather than with the number of inputs.
///
/// Every input is permuted first (each with its own generator, as a whole column), and
/// then the rows are taken a block at a time, every input at once, so that a block's
/// values, the tree and the rows sent down again stay in cache. The turned rows are
/// copied, their permuted value in place, and descend several at a time
/// ([`Tree::leaf_indices`]). Each input's sums are still taken in row order, so the
/// results are those of going input by input. With case `weights`, each row's change
/// in loss counts with its weight and the increases are weighted means.
pub(crate) fn tree_permutation_increase(
    tree: &Tree,
    x: ArrayView2<'_, f64>,
    outcome: &Outcome,
    rows: &[usize],
    weights: Option<&[f64]>,
    rng_for: impl Fn(usize) -> rand_xoshiro::Xoshiro256PlusPlus,
) -> (Vec<f64>, Vec<f64>) {
    let p = x.ncols();
    let m = rows.len();
    let (mut inc_err, mut inc_brier) = (vec![0.0; p], vec![0.0; p]);
    if p == 0 || m == 0 {
        return (inc_err, inc_brier);
    }
    let walk = TurnWalk::new(tree, p);
    // Laid out for scoring once: the turned rows of every input descend through it.
    let compact = tree.compact();
    // The rows input by input (`columns[j * m + k]`), each input the tree tests then
    // permuted among them. (An input no row's way tests changes no prediction and
    // keeps increases of 0; permuting it too spends a little time and changes nothing,
    // as each input has its own generator.)
    let mut columns = vec![0.0; m * p];
    for (k, &i) in rows.iter().enumerate() {
        for (j, &v) in x.row(i).iter().enumerate() {
            columns[j * m + k] = v;
        }
    }
    let mut tested = vec![0u64; walk.words()];
    walk.tested(&mut tested);
    for (j, column) in columns.chunks_exact_mut(m).enumerate() {
        if tested[j / 64] >> (j % 64) & 1 == 1 {
            column.shuffle(&mut rng_for(j));
        }
    }
    let mut block = vec![0.0; STRETCH * p];
    let mut permuted = vec![0.0; STRETCH * p];
    let (mut turned, mut seen) = (vec![0u64; walk.words()], vec![0u64; walk.words()]);
    let mut turns = Vec::new();
    let mut gathered = Turned::new(p);
    let (mut de, mut db) = (vec![0.0; p], vec![0.0; p]);
    let mut sum = |t: &Turned| {
        for (k, &leaf) in t.found[..t.starts.len()].iter().enumerate() {
            let (pos, j, base) = (t.pos[k] as usize, t.input[k] as usize, t.base[k]);
            let l = row_loss(outcome, rows[pos], &tree.leaf_value(leaf as usize));
            match weights {
                None => {
                    de[j] += l.error - base.error;
                    db[j] += l.brier - base.brier;
                }
                Some(w) => {
                    let w = w[rows[pos]];
                    de[j] += w * (l.error - base.error);
                    db[j] += w * (l.brier - base.brier);
                }
            }
        }
    };
    for (c, chunk) in rows.chunks(STRETCH).enumerate() {
        let (first, k) = (c * STRETCH, chunk.len());
        let part = &mut block[..k * p];
        copy_rows(x, chunk, part, None);
        // The block's permuted values row by row, as the walk reads them.
        for (j, column) in columns.chunks_exact(m).enumerate() {
            for (r, &w) in column[first..first + k].iter().enumerate() {
                permuted[r * p + j] = w;
            }
        }
        for (r, (row, &i)) in part.chunks_exact(p).zip(chunk).enumerate() {
            let mixed = &permuted[r * p..(r + 1) * p];
            let leaf = walk.walk(row, mixed, &mut turned, &mut seen, &mut turns);
            if turns.is_empty() {
                // The row keeps its leaf for every input: its changes are exact zeros,
                // which leave the sums as they are.
                continue;
            }
            let base = row_loss(outcome, i, &tree.leaf_value(leaf as usize));
            for t in &turns {
                let j = t.input as usize;
                if gathered.push(row, j, mixed[j], first + r, t.start, base) {
                    gathered.descend(&compact, p);
                    sum(&gathered);
                    gathered.clear();
                }
            }
        }
    }
    gathered.descend(&compact, p);
    sum(&gathered);
    let total = weights.map_or(m as f64, |w| rows.iter().map(|&i| w[i]).sum());
    for j in (0..p).filter(|&j| seen[j / 64] >> (j % 64) & 1 == 1) {
        inc_err[j] = de[j] / total;
        inc_brier[j] = db[j] / total;
    }
    (inc_err, inc_brier)
}

/// Rows that a permuted input sends off their way, gathered until [`STRETCH`] of them
/// descend together: each a copy of its row with the permuted value in place, the node
/// it goes on from, and what its change in loss is summed with.
struct Turned {
    rows: Vec<f64>,
    starts: Vec<u32>,
    pos: Vec<u32>,
    input: Vec<u32>,
    base: Vec<Loss>,
    /// `0, 1, 2, ...`: the copies are the block's rows in order.
    order: Vec<u32>,
    found: Vec<u32>,
}

impl Turned {
    fn new(p: usize) -> Self {
        Turned {
            rows: vec![0.0; STRETCH * p],
            starts: Vec::with_capacity(STRETCH),
            pos: Vec::with_capacity(STRETCH),
            input: Vec::with_capacity(STRETCH),
            base: Vec::with_capacity(STRETCH),
            order: (0..STRETCH as u32).collect(),
            found: vec![0; STRETCH],
        }
    }

    /// Adds row `row` (at position `pos`) with input `j` set to `v`, going on from node
    /// `start`; true when the gathering is full.
    #[inline]
    fn push(&mut self, row: &[f64], j: usize, v: f64, pos: usize, start: u32, base: Loss) -> bool {
        let p = row.len();
        let k = self.starts.len();
        let copy = &mut self.rows[k * p..(k + 1) * p];
        copy.copy_from_slice(row);
        copy[j] = v;
        self.starts.push(start);
        self.pos.push(pos as u32);
        self.input.push(j as u32);
        self.base.push(base);
        self.starts.len() == STRETCH
    }

    /// The leaves the gathered rows reach, into `found`.
    fn descend(&mut self, compact: &CompactTree<'_>, p: usize) {
        let k = self.starts.len();
        compact.leaf_indices_from(
            &self.rows[..k * p],
            p,
            &self.order[..k],
            &self.starts,
            &mut self.found[..k],
        );
    }

    fn clear(&mut self) {
        self.starts.clear();
        self.pos.clear();
        self.input.clear();
        self.base.clear();
    }
}

/// One tree's increases in (error, Brier) per input, or `None` for a tree with no
/// out-of-bag row with a known outcome.
pub(crate) type TreeIncreases = Option<(Vec<f64>, Vec<f64>)>;

/// Out-of-bag permutation importance (Breiman 2001, section 10): for tree `t` and
/// input `j`, the values of `j` are permuted among the tree's out-of-bag rows with
/// the generator for (seed, t, j), and the increase in the tree's error on those rows
/// is one replicate. An input the tree never tests has increase exactly 0 (its
/// permutation cannot change the tree's predictions). Trees with no out-of-bag row
/// with a known outcome are left out; `None` when no tree is left. With case
/// `weights`, rows of weight 0 are left out and the others count with their weights.
#[allow(clippy::too_many_arguments)]
pub(crate) fn oob_permutation(
    trees: &[Tree],
    masks: &[OobMask],
    x: ArrayView2<'_, f64>,
    outcome: &Outcome,
    weights: Option<&[f64]>,
    meta: &[FeatureMeta],
    seed: u64,
    progress: &(dyn Fn(Progress) + Sync),
) -> Option<PermutationImportance> {
    let pieces = oob_tree_increases(trees, masks, 0, x, outcome, weights, seed, progress);
    oob_tables(pieces, outcome, meta)
}

/// Each tree's out-of-bag increases, in tree order; `trees[t]` is tree `first + t` of
/// its forest (its permutations come from that index), with out-of-bag rows
/// `masks[t]`. A tree's increases depend on nothing but the tree, its sample and the
/// data, so parts of a forest compute them apart ([`crate::part`]). With case
/// `weights`, rows of weight 0 are left out and the others count with their weights.
#[allow(clippy::too_many_arguments)]
pub(crate) fn oob_tree_increases(
    trees: &[Tree],
    masks: &[OobMask],
    first: usize,
    x: ArrayView2<'_, f64>,
    outcome: &Outcome,
    weights: Option<&[f64]>,
    seed: u64,
    progress: &(dyn Fn(Progress) + Sync),
) -> Vec<TreeIncreases> {
    let n = x.nrows();
    let rows_of = |t: usize| -> Vec<usize> {
        (0..n)
            .filter(|&i| {
                masks[t].contains(i) && !outcome.is_missing(i) && weights.is_none_or(|w| w[i] > 0.0)
            })
            .collect()
    };
    let rng_of =
        |t: usize, j: usize| task_rng(seed, Purpose::OobPermute, (first + t) as u64, j as u64);
    per_tree_increases(trees, x, outcome, weights, &rows_of, &rng_of, progress)
}

/// The importance tables from every tree's increases, in tree order; `None` when no
/// tree had out-of-bag rows.
pub(crate) fn oob_tables(
    pieces: Vec<TreeIncreases>,
    outcome: &Outcome,
    meta: &[FeatureMeta],
) -> Option<PermutationImportance> {
    let (errs, briers): (Vec<_>, Vec<_>) = pieces.into_iter().flatten().unzip();
    if errs.is_empty() {
        return None;
    }
    Some(permutation_tables(
        ImportanceMethod::OutOfBagPermutation,
        outcome,
        meta,
        &errs,
        &briers,
    ))
}

/// Every tree's increases in (error, Brier) per input when each input is permuted
/// among the rows `rows_of(t)` with the generator `rng_of(t, j)`, in tree order (`None`
/// for a tree with no rows). Shared by the out-of-bag importance (each tree's own
/// out-of-bag rows) and the hold-out importance (every tree the same held-out rows).
pub(crate) fn per_tree_increases(
    trees: &[Tree],
    x: ArrayView2<'_, f64>,
    outcome: &Outcome,
    weights: Option<&[f64]>,
    rows_of: &(dyn Fn(usize) -> Vec<usize> + Sync),
    rng_of: &(dyn Fn(usize, usize) -> rand_xoshiro::Xoshiro256PlusPlus + Sync),
    progress: &(dyn Fn(Progress) + Sync),
) -> Vec<TreeIncreases> {
    let nt = trees.len();
    let done = AtomicUsize::new(0);
    (0..nt)
        .into_par_iter()
        .map(|t| {
            let rows = rows_of(t);
            let result = (!rows.is_empty()).then(|| {
                tree_permutation_increase(&trees[t], x, outcome, &rows, weights, |j| rng_of(t, j))
            });
            let d = done.fetch_add(1, Ordering::Relaxed) + 1;
            progress(Progress {
                stage: Stage::Importance,
                done: d,
                total: nt,
            });
            result
        })
        .collect()
}

#[cfg(test)]
pub(crate) mod tests {
    use super::*;
    use crate::forest::Forest;
    use crate::settings::ForestSettings;
    use crate::synth;
    use crate::train::TrainOptions;
    use copse_tree::FeatureMeta;

    /// Slow reference: re-predict every row with input `j` permuted.
    fn full_increase(
        tree: &Tree,
        x: ArrayView2<'_, f64>,
        outcome: &Outcome,
        rows: &[usize],
        j: usize,
        rng: &mut rand_xoshiro::Xoshiro256PlusPlus,
    ) -> (f64, f64) {
        let mut vals: Vec<f64> = rows.iter().map(|&i| x[[i, j]]).collect();
        vals.shuffle(rng);
        let (mut e0, mut b0, mut e1, mut b1) = (0.0, 0.0, 0.0, 0.0);
        for (pos, &i) in rows.iter().enumerate() {
            let row = x.row(i);
            let l0 = row_loss(
                outcome,
                i,
                &tree.leaf_value(tree.leaf_index_with(|c| row[c])),
            );
            let leaf = tree.leaf_index_with(|c| if c == j { vals[pos] } else { row[c] });
            let l1 = row_loss(outcome, i, &tree.leaf_value(leaf));
            e0 += l0.error;
            b0 += l0.brier;
            e1 += l1.error;
            b1 += l1.brier;
        }
        let m = rows.len() as f64;
        ((e1 - e0) / m, (b1 - b0) / m)
    }

    /// Waveform rows whose first input is made a category (six levels) and whose first
    /// two inputs have missing values, so that rows take their sides by category
    /// subsets and by the nodes' missing directions too.
    pub(crate) fn mixed_waveform(n: usize, seed: u64) -> synth::Synthetic {
        let mut d = synth::waveform40(n, seed);
        for (i, mut row) in d.x.rows_mut().into_iter().enumerate() {
            row[0] = (row[0].abs() * 2.0).floor().min(5.0);
            if i % 7 == 0 {
                row[1] = f64::NAN;
            }
            if i % 11 == 0 {
                row[0] = f64::NAN;
            }
        }
        let levels = (0..6).map(|k| format!("k{k}")).collect();
        d.meta[0] = FeatureMeta::categorical("c", levels);
        d
    }

    #[test]
    fn path_shortcut_equals_full_reprediction() {
        // Also a set with a category input and missing values.
        let mixed = mixed_waveform(300, 3);
        for d in [synth::waveform40(300, 1), synth::friedman1(300, 2), mixed] {
            let s = ForestSettings {
                trees: 3,
                ..Default::default()
            };
            let options = TrainOptions {
                oob_importance: false,
                ..TrainOptions::default()
            };
            let f = Forest::train(d.x.view(), &d.meta, &d.outcome, &s, &options)
                .expect("trains")
                .forest;
            if d.meta[0].is_categorical() {
                assert!(f
                    .trees()
                    .iter()
                    .flat_map(Tree::nodes)
                    .any(|n| n.is_categorical()));
            }
            let rows: Vec<usize> = (0..300).step_by(2).collect();
            for (t, tree) in f.trees().iter().enumerate() {
                let rng = |j: usize| task_rng(9, Purpose::OobPermute, t as u64, j as u64);
                let (fast_e, fast_b) =
                    tree_permutation_increase(tree, d.x.view(), &d.outcome, &rows, None, rng);
                for j in 0..d.x.ncols() {
                    let (e, b) = full_increase(tree, d.x.view(), &d.outcome, &rows, j, &mut rng(j));
                    assert!((fast_e[j] - e).abs() < 1e-9, "tree {t} input {j}");
                    assert!((fast_b[j] - b).abs() < 1e-9, "tree {t} input {j}");
                }
            }
        }
    }
}
