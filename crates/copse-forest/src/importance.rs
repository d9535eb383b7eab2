//! Which inputs matter: permutation importance on each tree's out-of-bag rows
//! (Breiman 2001, section 10), permutation importance on a held-out labelled set, and
//! impurity-decrease importance (with its known bias, Strobl et al. 2007).
use crate::error::{Error, ErrorKind, Result};
use crate::forest::Forest;
use crate::metrics::{brier_row, predicted_class};
use crate::oob::{block_rows, OobMask};
use crate::outcome::Outcome;
use crate::predict::Scorer;
use crate::rng::{task_rng, Purpose};
use crate::train::{Progress, Stage};
use copse_tree::{FeatureMeta, Impurity, Tree, TreeSettings};
use ndarray::ArrayView2;
use rand::seq::SliceRandom;
use rayon::prelude::*;
use serde::{Deserialize, Serialize};
use std::sync::atomic::{AtomicUsize, Ordering};

/// Caution printed with impurity-decrease importance.
pub const IMPURITY_CAUTION: &str = "impurity-decrease importance favours inputs with many \
distinct values or categories, even when they carry no information (Strobl, Boulesteix, \
Zeileis & Hothorn 2007); prefer permutation importance to rank inputs";

/// How an importance was computed.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
pub enum ImportanceMethod {
    /// Per tree, the increase in error on its out-of-bag rows when the input is
    /// permuted among them; replicates are trees.
    OutOfBagPermutation,
    /// The increase in the forest's error on a labelled set the model has not seen when
    /// the input is permuted among its rows; replicates are repeats.
    HeldOutPermutation,
    /// Per tree, the weighted impurity decrease of the splits on the input, divided by
    /// the tree's total case weight; replicates are trees.
    ImpurityDecrease,
}

/// The quantity whose change is measured.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
pub enum ImportanceMeasure {
    /// Misclassification rate.
    Misclassification,
    /// Brier score (multi-class sum form).
    Brier,
    /// Mean squared error.
    MeanSquaredError,
    /// Gini impurity.
    Gini,
    /// Entropy in bits.
    Entropy,
    /// Variance (squared-error) impurity.
    Variance,
}

/// Importance of one input.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct FeatureImportance {
    /// Input index (column).
    pub feature: usize,
    /// Input name.
    pub name: String,
    /// Mean over replicates.
    pub mean: f64,
    /// Standard error of the mean: sample standard deviation over replicates divided
    /// by the square root of their number; `None` with fewer than two replicates.
    /// It measures how much the trees (or repeats) vary for this one data set; it does
    /// not include the variation from drawing another training set, so `mean / std_error`
    /// overstates how surely an input matters, increasingly so with more trees.
    pub std_error: Option<f64>,
    /// Rank, 1 = most important (highest mean; ties to the lower input index).
    pub rank: usize,
}

/// One importance measure for every input.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Importance {
    /// How it was computed.
    pub method: ImportanceMethod,
    /// What was measured.
    pub measure: ImportanceMeasure,
    /// Number of replicates averaged (trees or repeats).
    pub replicates: usize,
    /// One entry per input, in input order.
    pub features: Vec<FeatureImportance>,
}

impl Importance {
    /// Entries from most to least important.
    pub fn ranked(&self) -> Vec<&FeatureImportance> {
        let mut v: Vec<&FeatureImportance> = self.features.iter().collect();
        v.sort_by_key(|f| f.rank);
        v
    }

    /// A caution to show beside this measure, if it has one.
    pub fn caution(&self) -> Option<&'static str> {
        (self.method == ImportanceMethod::ImpurityDecrease).then_some(IMPURITY_CAUTION)
    }

    /// Summarizes replicates (each a value per input).
    fn from_replicates(
        method: ImportanceMethod,
        measure: ImportanceMeasure,
        meta: &[FeatureMeta],
        reps: &[Vec<f64>],
    ) -> Importance {
        let r = reps.len();
        let mut features: Vec<FeatureImportance> = meta
            .iter()
            .enumerate()
            .map(|(j, m)| {
                let mean = reps.iter().map(|v| v[j]).sum::<f64>() / r.max(1) as f64;
                let std_error = (r >= 2).then(|| {
                    let ss = reps
                        .iter()
                        .map(|v| (v[j] - mean) * (v[j] - mean))
                        .sum::<f64>();
                    (ss / (r - 1) as f64).sqrt() / (r as f64).sqrt()
                });
                FeatureImportance {
                    feature: j,
                    name: m.name.clone(),
                    mean,
                    std_error,
                    rank: 0,
                }
            })
            .collect();
        let mut order: Vec<usize> = (0..features.len()).collect();
        order.sort_by(|&a, &b| {
            features[b]
                .mean
                .total_cmp(&features[a].mean)
                .then(a.cmp(&b))
        });
        for (rank, &j) in order.iter().enumerate() {
            features[j].rank = rank + 1;
        }
        Importance {
            method,
            measure,
            replicates: r,
            features,
        }
    }
}

/// Permutation importance: the headline error measure, and for classes also the
/// Brier score (which sees changes in probability that do not flip a prediction).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct PermutationImportance {
    /// Increase in misclassification rate (classes) or mean squared error (regression).
    pub error: Importance,
    /// Increase in Brier score (classes only).
    pub brier: Option<Importance>,
}

/// Loss of predictions on a set of rows: (error, Brier), Brier 0 for regression.
#[derive(Debug, Clone, Copy, Default)]
struct Loss {
    error: f64,
    brier: f64,
}

/// Loss of one row's prediction `pred` against row `i` of `outcome` (which is known).
#[inline]
fn row_loss(outcome: &Outcome, i: usize, pred: &[f64]) -> Loss {
    match outcome {
        Outcome::Classes { codes, .. } => {
            let y = codes[i] as usize;
            Loss {
                error: f64::from(u8::from(predicted_class(pred) != y)),
                brier: brier_row(pred, y),
            }
        }
        Outcome::Values(v) => {
            let e = pred[0] - v[i];
            Loss {
                error: e * e,
                brier: 0.0,
            }
        }
    }
}

/// The nodes on the way from the root to each leaf, grouped by the input they test:
/// the leaf at node `l` has the runs `runs[span[l].0..span[l].1]`, one per input its
/// way tests (ascending), and a run's steps `steps[run.from..run.to]` are its nodes
/// testing that input, from the root down, each `node << 1 | went_left` (indexed by
/// node, as leaves are known by their node index; internal nodes have none).
struct LeafPaths {
    span: Vec<Span>,
    runs: Vec<Run>,
    steps: Vec<u32>,
    /// Whether every input is below 64, so that [`Span::tests`] names them all.
    narrow: bool,
}

/// Where a leaf's runs stand in [`LeafPaths::runs`], and the inputs below 64 its way
/// tests (bit `j` for input `j`): one look tells whether the way tests an input, and
/// which run is its (the runs being in input order).
#[derive(Debug, Clone, Copy, Default)]
struct Span {
    from: u32,
    to: u32,
    tests: u64,
}

/// The nodes of one leaf's way that test one input: `steps[from..to]`.
#[derive(Debug, Clone, Copy)]
struct Run {
    input: u32,
    from: u32,
    to: u32,
}

impl LeafPaths {
    fn of(tree: &Tree) -> Self {
        let nodes = tree.nodes();
        let mut span = vec![Span::default(); nodes.len()];
        let mut narrow = true;
        let (mut runs, mut steps) = (Vec::new(), Vec::new());
        // Depth-first, with the (input, step) pairs of the way to the current node on
        // a stack, and one buffer to sort a leaf's pairs in.
        let mut path: Vec<(u32, u32)> = Vec::new();
        let mut sorted: Vec<(u32, u32)> = Vec::new();
        let mut stack = vec![(0usize, 0usize, u32::MAX)];
        while let Some((i, depth, step)) = stack.pop() {
            // The ancestors above the parent stay; the parent's test comes next.
            path.truncate(depth.saturating_sub(1));
            if step != u32::MAX {
                let parent = &nodes[(step >> 1) as usize];
                path.push((parent.feature().unwrap_or(0) as u32, step));
            }
            let n = &nodes[i];
            if n.is_leaf() {
                sorted.clone_from(&path);
                // By input, then from the root down (a child's number exceeds its
                // parent's).
                sorted.sort_unstable();
                let first = runs.len() as u32;
                let mut tests = 0u64;
                for (k, &(j, s)) in sorted.iter().enumerate() {
                    if j < 64 {
                        tests |= 1 << j;
                    } else {
                        narrow = false;
                    }
                    if k == 0 || sorted[k - 1].0 != j {
                        let at = steps.len() as u32;
                        runs.push(Run {
                            input: j,
                            from: at,
                            to: at,
                        });
                    }
                    steps.push(s);
                    if let Some(r) = runs.last_mut() {
                        r.to += 1;
                    }
                }
                span[i] = Span {
                    from: first,
                    to: runs.len() as u32,
                    tests,
                };
            } else {
                let me = (i as u32) << 1;
                stack.push((n.child() + 1, depth + 1, me));
                stack.push((n.child(), depth + 1, me | 1));
            }
        }
        LeafPaths {
            span,
            runs,
            steps,
            narrow,
        }
    }

    /// The runs of the leaf at node `leaf`.
    fn runs(&self, leaf: u32) -> &[Run] {
        let s = self.span[leaf as usize];
        &self.runs[s.from as usize..s.to as usize]
    }

    /// The run of input `j` on the way to the leaf at node `leaf`, if the way tests it.
    #[inline]
    fn run(&self, leaf: usize, j: usize) -> Option<&Run> {
        let s = self.span[leaf];
        if self.narrow {
            if s.tests >> j & 1 == 0 {
                return None;
            }
            // The runs of the inputs below j come first.
            let below = (s.tests & ((1u64 << j) - 1)).count_ones();
            self.runs.get((s.from + below) as usize)
        } else {
            self.runs[s.from as usize..s.to as usize]
                .iter()
                .find(|r| r.input as usize == j)
        }
    }
}

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
/// is taken in row order as before.
fn tree_permutation_increase(
    tree: &Tree,
    x: ArrayView2<'_, f64>,
    outcome: &Outcome,
    rows: &[usize],
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
                de += l.error - base[pos].error;
                db += l.brier - base[pos].brier;
                block[pos * p + j] = original[pos];
            }
        }
        inc_err[j] = de / m as f64;
        inc_brier[j] = db / m as f64;
    }
    (inc_err, inc_brier)
}

/// The leaf that a row which reached `leaf` of `tree` reaches when its input `j` takes
/// the value `v` instead (its other values in `row`), `run` being the nodes on the way
/// that test `j`: the same leaf unless one of them sends `v` the other way, and then
/// the leaf below the first such node on the other side.
fn turned_leaf(
    tree: &Tree,
    paths: &LeafPaths,
    run: &Run,
    leaf: usize,
    j: usize,
    v: f64,
    row: &[f64],
) -> usize {
    for &step in &paths.steps[run.from as usize..run.to as usize] {
        let node = &tree.nodes()[(step >> 1) as usize];
        let left = tree.goes_left(node, v);
        if left != (step & 1 == 1) {
            let start = node.child() + usize::from(!left);
            return tree.leaf_index_from(start, |c| if c == j { v } else { row[c] });
        }
    }
    leaf
}

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

/// Rows scored together by the importance passes: few enough that their values stay
/// in cache beside a tree. Does not change any result.
const STRETCH: usize = 256;

/// Copies rows `rows` of `x` into `dst`, row-major, and into `columns` if given, input
/// by input (`columns[j * m + k]` is input `j` of row `rows[k]`).
fn copy_rows(
    x: ArrayView2<'_, f64>,
    rows: &[usize],
    dst: &mut [f64],
    mut columns: Option<&mut [f64]>,
) {
    let (m, p) = (rows.len(), x.ncols());
    if p == 0 {
        return;
    }
    for (k, (out, &i)) in dst.chunks_exact_mut(p).zip(rows).enumerate() {
        let row = x.row(i);
        match row.as_slice() {
            Some(s) => out.copy_from_slice(s),
            None => out.iter_mut().zip(row.iter()).for_each(|(d, &v)| *d = v),
        }
        if let Some(columns) = columns.as_deref_mut() {
            for (j, &v) in out.iter().enumerate() {
                columns[j * m + k] = v;
            }
        }
    }
}

/// Out-of-bag permutation importance (Breiman 2001, section 10): for tree `t` and
/// input `j`, the values of `j` are permuted among the tree's out-of-bag rows with
/// the generator for (seed, t, j), and the increase in the tree's error on those rows
/// is one replicate. An input the tree never tests has increase exactly 0 (its
/// permutation cannot change the tree's predictions). Trees with no out-of-bag row
/// with a known outcome are left out; `None` when no tree is left.
pub(crate) fn oob_permutation(
    trees: &[Tree],
    masks: &[OobMask],
    x: ArrayView2<'_, f64>,
    outcome: &Outcome,
    meta: &[FeatureMeta],
    seed: u64,
    progress: &(dyn Fn(Progress) + Sync),
) -> Option<PermutationImportance> {
    let n = x.nrows();
    let nt = trees.len();
    let done = AtomicUsize::new(0);
    let per_tree: Vec<Option<(Vec<f64>, Vec<f64>)>> = (0..nt)
        .into_par_iter()
        .map(|t| {
            let tree = &trees[t];
            let rows: Vec<usize> = (0..n)
                .filter(|&i| masks[t].contains(i) && !outcome.is_missing(i))
                .collect();
            let result = (!rows.is_empty()).then(|| {
                tree_permutation_increase(tree, x, outcome, &rows, |j| {
                    task_rng(seed, Purpose::OobPermute, t as u64, j as u64)
                })
            });
            let d = done.fetch_add(1, Ordering::Relaxed) + 1;
            progress(Progress {
                stage: Stage::Importance,
                done: d,
                total: nt,
            });
            result
        })
        .collect();
    let (errs, briers): (Vec<Vec<f64>>, Vec<Vec<f64>>) = per_tree.into_iter().flatten().unzip();
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

fn permutation_tables(
    method: ImportanceMethod,
    outcome: &Outcome,
    meta: &[FeatureMeta],
    errs: &[Vec<f64>],
    briers: &[Vec<f64>],
) -> PermutationImportance {
    match outcome {
        Outcome::Classes { .. } => PermutationImportance {
            error: Importance::from_replicates(
                method,
                ImportanceMeasure::Misclassification,
                meta,
                errs,
            ),
            brier: Some(Importance::from_replicates(
                method,
                ImportanceMeasure::Brier,
                meta,
                briers,
            )),
        },
        Outcome::Values(_) => PermutationImportance {
            error: Importance::from_replicates(
                method,
                ImportanceMeasure::MeanSquaredError,
                meta,
                errs,
            ),
            brier: None,
        },
    }
}

/// Impurity-decrease importance: per tree, the weighted impurity decrease of the splits
/// on each input divided by the tree's total case weight (so a tree contributes the
/// decrease per case); mean and standard error over trees.
pub(crate) fn impurity_importance(
    trees: &[Tree],
    bag_weights: &[f64],
    meta: &[FeatureMeta],
    outcome: &Outcome,
    settings: &TreeSettings,
) -> Importance {
    let reps: Vec<Vec<f64>> = trees
        .iter()
        .zip(bag_weights)
        .map(|(t, &w)| t.impurity_decrease().iter().map(|d| d / w).collect())
        .collect();
    let measure = match (outcome, settings.impurity) {
        (Outcome::Values(_), _) => ImportanceMeasure::Variance,
        (_, Impurity::Gini) => ImportanceMeasure::Gini,
        (_, Impurity::Entropy) => ImportanceMeasure::Entropy,
    };
    Importance::from_replicates(ImportanceMethod::ImpurityDecrease, measure, meta, &reps)
}

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
    pub fn permutation_importance(
        &self,
        x: ArrayView2<'_, f64>,
        outcome: &Outcome,
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
        if outcome.len() != x.nrows() {
            return Err(Error::new(
                ErrorKind::LengthMismatch,
                format!(
                    "{} data rows but {} outcomes; they must match",
                    x.nrows(),
                    outcome.len()
                ),
            ));
        }
        let outcome = self.align(outcome)?;
        let rows: Vec<usize> = (0..x.nrows()).filter(|&i| !outcome.is_missing(i)).collect();
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
        let inc = self.held_out_increases(x, &outcome, &rows, &tasks, &permuted, SHORTCUT_BYTES);
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
        rows: &[usize],
        tasks: &[(usize, usize)],
        permuted: &(dyn Fn(usize, usize) -> Vec<f64> + Sync),
        budget: usize,
    ) -> Vec<Loss> {
        let (m, nt, p) = (rows.len(), self.trees.len(), self.n_features());
        let scorers = self.scorers(m);
        // Per row and tree: its place in the tree's order (4 bytes) and at most one
        // group (8 bytes); per row its values.
        let need = m.saturating_mul(nt * 12 + p * 8);
        if need > budget || p == 0 {
            let base = self.forest_loss(&scorers, x, outcome, rows, None);
            return tasks
                .par_iter()
                .map(|&(r, j)| {
                    let vals = permuted(r, j);
                    let l = self.forest_loss(&scorers, x, outcome, rows, Some((j, &vals)));
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
                    let l = row_loss(outcome, rows[from * bs + off], o);
                    total.error += l.error;
                    total.brier += l.brier;
                }
                e += total.error;
                b += total.brier;
            }
            Loss {
                error: e / m as f64,
                brier: b / m as f64,
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
        rows: &[usize],
        swap: Option<(usize, &[f64])>,
    ) -> Loss {
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
                    total.error += l.error;
                    total.brier += l.brier;
                }
                total
            })
            .collect();
        let m = rows.len() as f64;
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
    use crate::settings::ForestSettings;
    use crate::synth;

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
    fn mixed_waveform(n: usize, seed: u64) -> synth::Synthetic {
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
    fn held_out_shortcut_equals_full_reprediction_to_the_last_bit() {
        // Classes (with a category input and missing values) and regression: the
        // shortcut and the full re-prediction must give the same numbers, bit for bit.
        for d in [mixed_waveform(240, 5), synth::friedman1(240, 6)] {
            let s = ForestSettings {
                trees: 12,
                oob_importance: false,
                ..Default::default()
            };
            let f = Forest::train(d.x.view(), &d.meta, &d.outcome, &s)
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
            let fast = f.held_out_increases(x, &outcome, &rows, &tasks, &permuted, usize::MAX);
            let full = f.held_out_increases(x, &outcome, &rows, &tasks, &permuted, 0);
            assert!(fast.iter().any(|l| l.error != 0.0), "some input matters");
            for (a, b) in fast.iter().zip(&full) {
                assert_eq!(a.error.to_bits(), b.error.to_bits());
                assert_eq!(a.brier.to_bits(), b.brier.to_bits());
            }
        }
    }

    #[test]
    fn path_shortcut_equals_full_reprediction() {
        // Also a set with a category input and missing values.
        let mixed = mixed_waveform(300, 3);
        for d in [synth::waveform40(300, 1), synth::friedman1(300, 2), mixed] {
            let s = ForestSettings {
                trees: 3,
                oob_importance: false,
                ..Default::default()
            };
            let f = Forest::train(d.x.view(), &d.meta, &d.outcome, &s)
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
                    tree_permutation_increase(tree, d.x.view(), &d.outcome, &rows, rng);
                for j in 0..d.x.ncols() {
                    let (e, b) = full_increase(tree, d.x.view(), &d.outcome, &rows, j, &mut rng(j));
                    assert!((fast_e[j] - e).abs() < 1e-9, "tree {t} input {j}");
                    assert!((fast_b[j] - b).abs() < 1e-9, "tree {t} input {j}");
                }
            }
        }
    }
}
