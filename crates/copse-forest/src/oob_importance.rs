//! Out-of-bag permutation importance (Breiman 2001, section 10): each tree's increase
//! in error on its own out-of-bag rows when one input is permuted among them.
use crate::importance::{permutation_tables, ImportanceMethod, PermutationImportance};
use crate::leaf_paths::LeafPaths;
use crate::loss::{row_loss, Loss};
use crate::oob::OobMask;
use crate::outcome::Outcome;
use crate::progress::{Progress, Stage};
use crate::rng::{task_rng, Purpose};
use crate::row_block::{copy_rows, STRETCH};
use copse_tree::{FeatureMeta, Tree};
use ndarray::ArrayView2;
use rand::seq::SliceRandom;
use rayon::prelude::*;
use std::sync::atomic::{AtomicUsize, Ordering};

/// One tree's increases in (error, Brier) per input when each input is permuted among
/// the tree's out-of-bag rows `rows`.
///
/// A row reaches the same leaf as before unless a node on its way that tests input
/// `j` sends the permuted value to the other side: so only the rows whose way tests
/// `j` are looked at, each only at those nodes, and a row is sent down the tree again
/// only from the first of them that turns it, into the side it did not take. The
/// result is exactly that of re-predicting every row, at a cost that grows with the
/// rows that change course rather than with the number of inputs. Rows are copied into
/// contiguous blocks and descend several at a time ([`Tree::leaf_indices`]); every sum
/// is taken in row order as before. With case `weights`, each row's change in loss
/// counts with its weight and the increases are weighted means.
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
    let nodes = tree.nodes();
    // The tree's rows, copied once row by row (for the descents) and input by input
    // (the values each permutation starts from), and read in order from then on.
    let mut block = vec![0.0; m * p];
    let mut columns = vec![0.0; m * p];
    copy_rows(x, rows, &mut block, Some(&mut columns));
    let mut leaves = vec![0u32; m];
    // Laid out for scoring once: the tree serves all its out-of-bag rows once per input.
    let compact = tree.compact();
    if p > 0 {
        for (part, out) in block.chunks(STRETCH * p).zip(leaves.chunks_mut(STRETCH)) {
            compact.leaf_indices(part, p, out);
        }
    }
    // Baseline loss of each row, and the nodes on its way.
    let paths = LeafPaths::of(tree);
    let base: Vec<Loss> = rows
        .iter()
        .zip(&leaves)
        .map(|(&i, &leaf)| row_loss(outcome, i, &tree.leaf_value(leaf as usize)))
        .collect();
    // Invert: for each input, the positions (in `rows`) of the rows whose way tests
    // it, and the run of its nodes that do.
    let mut per_feature = vec![0usize; p + 1];
    for &leaf in &leaves {
        for r in paths.runs(leaf) {
            per_feature[r.input as usize + 1] += 1;
        }
    }
    for j in 0..p {
        per_feature[j + 1] += per_feature[j];
    }
    let mut fill = per_feature.clone();
    let mut affected = vec![0u32; per_feature[p]];
    let mut entry = vec![(0u32, 0u32); per_feature[p]];
    for (pos, &leaf) in leaves.iter().enumerate() {
        for r in paths.runs(leaf) {
            let j = r.input as usize;
            affected[fill[j]] = pos as u32;
            entry[fill[j]] = (r.from, r.to);
            fill[j] += 1;
        }
    }
    let (mut inc_err, mut inc_brier) = (vec![0.0; p], vec![0.0; p]);
    let total = weights.map_or(m as f64, |w| rows.iter().map(|&i| w[i]).sum());
    let (mut picks, mut starts) = (Vec::with_capacity(STRETCH), Vec::with_capacity(STRETCH));
    let mut found = vec![0u32; STRETCH];
    let mut vals = Vec::with_capacity(m);
    for (j, original) in columns.chunks_exact(m.max(1)).enumerate().take(p) {
        let hit = &affected[per_feature[j]..per_feature[j + 1]];
        let runs = &entry[per_feature[j]..per_feature[j + 1]];
        if hit.is_empty() {
            // The tree never tests input j: its predictions cannot change.
            continue;
        }
        vals.clear();
        vals.extend_from_slice(original);
        vals.shuffle(&mut rng_for(j));
        let (mut de, mut db) = (0.0, 0.0);
        for (part, runs) in hit.chunks(STRETCH).zip(runs.chunks(STRETCH)) {
            // The rows that change course, each from the side it did not take at the
            // first node (testing j) that turns it; the others keep their leaf and add
            // exact zeros, which leave the sums as they are.
            picks.clear();
            starts.clear();
            for (&pos, &(from, to)) in part.iter().zip(runs) {
                let v = vals[pos as usize];
                for &step in &paths.steps[from as usize..to as usize] {
                    let node = &nodes[(step >> 1) as usize];
                    let left = tree.goes_left(node, v);
                    if left != (step & 1 == 1) {
                        picks.push(pos);
                        starts.push((node.child() + usize::from(!left)) as u32);
                        // Only a row that descends again needs its permuted value in
                        // the block (and back out after).
                        block[pos as usize * p + j] = v;
                        break;
                    }
                }
            }
            let found = &mut found[..picks.len()];
            compact.leaf_indices_from(&block, p, &picks, &starts, found);
            for (&pos, &leaf) in picks.iter().zip(found.iter()) {
                let pos = pos as usize;
                let l = row_loss(outcome, rows[pos], &tree.leaf_value(leaf as usize));
                match weights {
                    None => {
                        de += l.error - base[pos].error;
                        db += l.brier - base[pos].brier;
                    }
                    Some(w) => {
                        let w = w[rows[pos]];
                        de += w * (l.error - base[pos].error);
                        db += w * (l.brier - base[pos].brier);
                    }
                }
                block[pos * p + j] = original[pos];
            }
        }
        inc_err[j] = de / total;
        inc_brier[j] = db / total;
    }
    (inc_err, inc_brier)
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
