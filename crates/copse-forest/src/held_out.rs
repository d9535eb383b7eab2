//! Permutation importance on a labelled data set the model has not seen: the increase
//! in the whole forest's error when one input is permuted among the rows.
use crate::error::{Error, ErrorKind, Result};
use crate::forest::Forest;
use crate::importance::{permutation_tables, ImportanceMethod, PermutationImportance};
use crate::leaf_paths::{turned_leaf, LeafPaths};
use crate::loss::{row_loss, Loss};
use crate::oob::block_rows;
use crate::outcome::Outcome;
use crate::predict::Scorer;
use crate::rng::{task_rng, Purpose};
use crate::row_block::{copy_rows, STRETCH};
use ndarray::ArrayView2;
use rand::seq::SliceRandom;
use rayon::prelude::*;

/// A tree's rows grouped by the leaf they reach: `order` holds their positions, leaf
/// by leaf, and each group is `(leaf, end of its positions in order)`.
struct LeafGroups {
    order: Vec<u32>,
    groups: Vec<(u32, u32)>,
}

/// Most bytes the held-out path shortcut may hold (the rows grouped by leaf in every
/// tree, and the rows' values); beyond it every row is predicted again for every
/// permutation.
const SHORTCUT_BYTES: usize = 1 << 29;

impl Forest {
    /// Permutation importance on a labelled data set the model has not seen: for each
    /// input and each of `repeats` repeats, the input's values are permuted among the
    /// rows with a known outcome (generator seeded by (seed, input, repeat)) and the
    /// increase in the forest's error is one replicate. Runs on the current rayon pool;
    /// the result is the same for any number of threads.
    ///
    /// # Errors
    /// `InvalidSetting` for `repeats` of 0; `LengthMismatch` for a wrong number of
    /// columns or outcomes; `OutcomeMismatch` for an outcome that does not fit the
    /// model; `NoTargets` with fewer than two known outcomes.
    ///
    /// # Example
    /// ```
    /// use copse_forest::{synth, Forest, ForestSettings, TrainOptions};
    ///
    /// // Friedman #1: inputs 0 to 4 drive the outcome, 5 to 9 are noise.
    /// let data = synth::friedman1(300, 1);
    /// let settings = ForestSettings { trees: 40, ..Default::default() };
    /// let options = TrainOptions { oob_importance: false, ..TrainOptions::default() };
    /// let forest = Forest::train(data.x.view(), &data.meta, &data.outcome, &settings, &options)?
    ///     .forest;
    /// let test = synth::friedman1(200, 2);
    /// let imp = forest.permutation_importance(test.x.view(), &test.outcome, 2, 7)?;
    /// assert!(imp.error.ranked()[0].feature < 5);
    /// assert!(imp.brier.is_none()); // Brier scores are for classes
    /// # Ok::<(), copse_forest::Error>(())
    /// ```
    pub fn permutation_importance(
        &self,
        x: ArrayView2<'_, f64>,
        outcome: &Outcome,
        repeats: usize,
        seed: u64,
    ) -> Result<PermutationImportance> {
        self.permutation_importance_weighted(x, outcome, None, repeats, seed)
    }

    /// Permutation importance as [`Forest::permutation_importance`], each row's loss
    /// counted with its case weight when `weights` are given (rows of weight 0 are left
    /// out): the increases are in weighted mean error and Brier score.
    ///
    /// # Errors
    /// As for [`Forest::permutation_importance`]; `LengthMismatch`, `BadValue` or
    /// `NoTargets` for weights of the wrong length, a negative or non-finite one, or
    /// rows that weigh nothing.
    pub fn permutation_importance_weighted(
        &self,
        x: ArrayView2<'_, f64>,
        outcome: &Outcome,
        weights: Option<&[f64]>,
        repeats: usize,
        seed: u64,
    ) -> Result<PermutationImportance> {
        if repeats == 0 {
            return Err(Error::new(
                ErrorKind::InvalidSetting,
                "permutation repeats must be at least 1 (at least 2 for a standard error)",
            ));
        }
        self.check_columns(x)?;
        let outcome = self.align_rows(x, outcome)?;
        let weights = crate::case_weights::checked_weights(weights, &outcome)?.map(|(w, _)| w);
        let rows: Vec<usize> = (0..x.nrows())
            .filter(|&i| !outcome.is_missing(i) && weights.is_none_or(|w| w[i] > 0.0))
            .collect();
        if rows.len() < 2 {
            return Err(Error::new(
                ErrorKind::NoTargets,
                "fewer than two rows have a known outcome; permutation importance needs more",
            ));
        }
        let p = self.n_features();
        let tasks: Vec<(usize, usize)> = (0..repeats)
            .flat_map(|r| (0..p).map(move |j| (r, j)))
            .collect();
        let permuted = |r: usize, j: usize| -> Vec<f64> {
            let mut vals: Vec<f64> = rows.iter().map(|&i| x[[i, j]]).collect();
            vals.shuffle(&mut task_rng(
                seed,
                Purpose::HeldOutPermute,
                j as u64,
                r as u64,
            ));
            vals
        };
        let inc = self.held_out_increases(
            x,
            &outcome,
            (&rows, weights),
            &tasks,
            &permuted,
            SHORTCUT_BYTES,
        );
        let errs: Vec<Vec<f64>> = inc
            .chunks(p)
            .map(|c| c.iter().map(|l| l.error).collect())
            .collect();
        let briers: Vec<Vec<f64>> = inc
            .chunks(p)
            .map(|c| c.iter().map(|l| l.brier).collect())
            .collect();
        Ok(permutation_tables(
            ImportanceMethod::HeldOutPermutation,
            &outcome,
            &self.meta,
            &errs,
            &briers,
        ))
    }

    /// The increase in the forest's mean loss on `rows` for each task `(repeat, input
    /// j)`, input `j` taking the values `permuted(repeat, j)`.
    ///
    /// When its tables fit in `budget` bytes (the rows grouped by leaf in every tree,
    /// and the rows' values), by the path shortcut: a row's leaf in a tree changes only if a
    /// node on its way that tests `j` sends the new value the other way, and then the
    /// row goes down again from there; every row's prediction is still summed over its
    /// trees in tree order and its loss added in the blocks of [`Forest::forest_loss`],
    /// so the numbers are those of re-predicting every row, to the last bit (a test
    /// checks both ways agree). Otherwise by re-predicting every row for every task.
    fn held_out_increases(
        &self,
        x: ArrayView2<'_, f64>,
        outcome: &Outcome,
        (rows, weights): (&[usize], Option<&[f64]>),
        tasks: &[(usize, usize)],
        permuted: &(dyn Fn(usize, usize) -> Vec<f64> + Sync),
        budget: usize,
    ) -> Vec<Loss> {
        let (m, nt, p) = (rows.len(), self.trees.len(), self.n_features());
        // Without weights every row weighs exactly 1.0 and the total is the row count,
        // so the figures are those of the unweighted means to the last bit.
        let weight = |i: usize| weights.map_or(1.0, |w| w[i]);
        let total_weight = weights.map_or(m as f64, |w| rows.iter().map(|&i| w[i]).sum());
        let scorers = self.scorers(m);
        // Per row and tree: its place in the tree's order (4 bytes) and at most one
        // group (8 bytes); per row its values.
        let need = m.saturating_mul(nt * 12 + p * 8);
        if need > budget || p == 0 {
            let base = self.forest_loss(&scorers, x, outcome, (rows, weights), None);
            return tasks
                .par_iter()
                .map(|&(r, j)| {
                    let vals = permuted(r, j);
                    let l =
                        self.forest_loss(&scorers, x, outcome, (rows, weights), Some((j, &vals)));
                    Loss {
                        error: l.error - base.error,
                        brier: l.brier - base.brier,
                    }
                })
                .collect();
        }
        // The rows, row-major; for every tree, the rows grouped by the leaf they reach
        // (`order`, positions in `rows`), each group `(leaf, end of its positions)`.
        let mut block = vec![0.0; m * p];
        copy_rows(x, rows, &mut block, None);
        let grouped: Vec<LeafGroups> = scorers
            .par_iter()
            .map(|scorer| {
                let mut leaves = vec![0u32; m];
                for (part, found) in block.chunks(STRETCH * p).zip(leaves.chunks_mut(STRETCH)) {
                    scorer.leaf_indices(part, p, found);
                }
                let mut order: Vec<u32> = (0..m as u32).collect();
                order.sort_by_key(|&pos| leaves[pos as usize]);
                let mut groups: Vec<(u32, u32)> = Vec::new();
                for (end, &pos) in order.iter().enumerate() {
                    let leaf = leaves[pos as usize];
                    match groups.last_mut() {
                        Some(g) if g.0 == leaf => g.1 = end as u32 + 1,
                        _ => groups.push((leaf, end as u32 + 1)),
                    }
                }
                LeafGroups { order, groups }
            })
            .collect();
        let paths: Vec<LeafPaths> = self.trees.par_iter().map(LeafPaths::of).collect();
        let k = self.n_outputs();
        let bs = block_rows(m);
        let loss_with = |swap: Option<(usize, &[f64])>| -> Loss {
            // Trees in the outer loop, and within a tree the rows of one leaf together,
            // keep the tables looked at in cache; each row still sums its trees in tree
            // order.
            let mut pred = vec![0.0; m * k];
            for (t, tree) in self.trees.iter().enumerate() {
                let LeafGroups { order, groups } = &grouped[t];
                let mut from = 0;
                for &(leaf, end) in groups {
                    let leaf = leaf as usize;
                    let run = swap.and_then(|(j, _)| paths[t].run(leaf, j));
                    for &pos in &order[from..end as usize] {
                        let pos = pos as usize;
                        let reached = match (run, swap) {
                            (Some(run), Some((j, vals))) => {
                                let row = &block[pos * p..(pos + 1) * p];
                                turned_leaf(tree, &paths[t], run, leaf, j, vals[pos], row)
                            }
                            _ => leaf,
                        };
                        pred[pos * k..(pos + 1) * k]
                            .iter_mut()
                            .zip(&tree.leaf_value(reached))
                            .for_each(|(o, v)| *o += v);
                    }
                    from = end as usize;
                }
            }
            let trees = nt.max(1) as f64;
            pred.iter_mut().for_each(|o| *o /= trees);
            // Losses added in the blocks of `forest_loss`, in the same order.
            let (mut e, mut b) = (0.0, 0.0);
            for (from, part) in pred.chunks(bs * k).enumerate() {
                let mut total = Loss::default();
                for (off, o) in part.chunks_exact(k).enumerate() {
                    let i = rows[from * bs + off];
                    let l = row_loss(outcome, i, o);
                    total.error += weight(i) * l.error;
                    total.brier += weight(i) * l.brier;
                }
                e += total.error;
                b += total.brier;
            }
            Loss {
                error: e / total_weight,
                brier: b / total_weight,
            }
        };
        let base = loss_with(None);
        tasks
            .par_iter()
            .map(|&(r, j)| {
                let vals = permuted(r, j);
                let l = loss_with(Some((j, &vals)));
                Loss {
                    error: l.error - base.error,
                    brier: l.brier - base.brier,
                }
            })
            .collect()
    }

    /// Mean loss of the forest on `rows`, with input `j` (if any) taking the values
    /// `vals` instead. Blocks of rows run in parallel and their sums are added in
    /// block order, so the result does not depend on the number of threads.
    fn forest_loss(
        &self,
        scorers: &[Scorer<'_>],
        x: ArrayView2<'_, f64>,
        outcome: &Outcome,
        (rows, weights): (&[usize], Option<&[f64]>),
        swap: Option<(usize, &[f64])>,
    ) -> Loss {
        let weight = |i: usize| weights.map_or(1.0, |w| w[i]);
        let bs = block_rows(rows.len());
        let k = self.n_outputs();
        let parts: Vec<Loss> = rows
            .par_chunks(bs)
            .enumerate()
            .map(|(b, chunk)| {
                let mut pred = vec![0.0; chunk.len() * k];
                let swap = swap.map(|(j, vals)| (j, &vals[b * bs..b * bs + chunk.len()]));
                self.predict_block(scorers, chunk.len(), |r| x.row(chunk[r]), swap, &mut pred);
                let mut total = Loss::default();
                for (off, &i) in chunk.iter().enumerate() {
                    let l = row_loss(outcome, i, &pred[off * k..(off + 1) * k]);
                    total.error += weight(i) * l.error;
                    total.brier += weight(i) * l.brier;
                }
                total
            })
            .collect();
        let m = weights.map_or(rows.len() as f64, |w| rows.iter().map(|&i| w[i]).sum());
        let (e, b) = parts
            .iter()
            .fold((0.0, 0.0), |(e, b), l| (e + l.error, b + l.brier));
        Loss {
            error: e / m,
            brier: b / m,
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::oob_importance::tests::mixed_waveform;
    use crate::settings::ForestSettings;
    use crate::synth;
    use crate::train::TrainOptions;

    #[test]
    fn held_out_shortcut_equals_full_reprediction_to_the_last_bit() {
        // Classes (with a category input and missing values) and regression: the
        // shortcut and the full re-prediction must give the same numbers, bit for bit.
        for d in [mixed_waveform(240, 5), synth::friedman1(240, 6)] {
            let s = ForestSettings {
                trees: 12,
                ..Default::default()
            };
            let options = TrainOptions {
                oob_importance: false,
                ..TrainOptions::default()
            };
            let f = Forest::train(d.x.view(), &d.meta, &d.outcome, &s, &options)
                .expect("trains")
                .forest;
            let fresh = if d.meta[0].is_categorical() {
                mixed_waveform(200, 8)
            } else {
                synth::friedman1(200, 9)
            };
            let outcome = f.align(&fresh.outcome).expect("same classes");
            let rows: Vec<usize> = (0..200).collect();
            let tasks: Vec<(usize, usize)> = (0..2)
                .flat_map(|r| (0..fresh.x.ncols()).map(move |j| (r, j)))
                .collect();
            let x = fresh.x.view();
            let permuted = |r: usize, j: usize| -> Vec<f64> {
                let mut vals: Vec<f64> = rows.iter().map(|&i| x[[i, j]]).collect();
                vals.shuffle(&mut task_rng(
                    3,
                    Purpose::HeldOutPermute,
                    j as u64,
                    r as u64,
                ));
                vals
            };
            // Also with case weights (whole and fractional).
            let w: Vec<f64> = (0..200).map(|i| (i % 4) as f64 * 0.75).collect();
            for weights in [None, Some(w.as_slice())] {
                let set = (rows.as_slice(), weights);
                let fast = f.held_out_increases(x, &outcome, set, &tasks, &permuted, usize::MAX);
                let full = f.held_out_increases(x, &outcome, set, &tasks, &permuted, 0);
                assert!(fast.iter().any(|l| l.error != 0.0), "some input matters");
                for (a, b) in fast.iter().zip(&full) {
                    assert_eq!(a.error.to_bits(), b.error.to_bits());
                    assert_eq!(a.brier.to_bits(), b.brier.to_bits());
                }
            }
        }
    }
}
