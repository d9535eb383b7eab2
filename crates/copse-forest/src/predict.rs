//! Prediction with a trained forest: class probabilities (mean of the trees' leaf
//! class distributions) or values (mean of the trees' leaf means), and evaluation of
//! predictions against a known outcome.
use crate::error::{Error, ErrorKind, Result};
use crate::forest::Forest;
use crate::metrics::{class_metrics_weighted, predicted_class, value_metrics_weighted, Metrics};
use crate::outcome::Outcome;
use crate::task::Task;
use copse_tree::tree::CompactTree;
use copse_tree::Tree;
use ndarray::{Array2, ArrayView1, ArrayView2};
use rayon::prelude::*;
use serde::{Deserialize, Serialize};

/// Bounds on the rows per parallel block in batch prediction: large enough that each
/// tree, loaded into cache once per block, serves many rows; small enough to spread
/// the work over the threads. The block size does not change any result.
const PREDICT_BLOCK: (usize, usize) = (256, 16384);

/// Most bytes of input values one thread copies into a block in batch prediction: the
/// row limits above, met by a model of 20,000 inputs, would copy 2.6 GB per thread.
const PREDICT_BLOCK_BYTES: usize = 4 << 20;

/// Most bytes the rows of one scoring batch may take ([`Forest::scoring_block_rows_for`]):
/// their input values, their outputs, and what the caller holds for each. Two batches
/// circulate when reading runs ahead of scoring, so scoring memory stays near 2 x 16 MiB
/// plus the model, whatever the width of the rows.
pub const SCORING_BLOCK_BYTES: usize = 16 << 20;

/// Accuracy of a forest on a labelled data set.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Evaluation {
    /// Measures over the rows with a known outcome.
    pub metrics: Metrics,
    /// Rows left out because their outcome is missing.
    pub rows_missing_outcome: usize,
}

impl Forest {
    /// Predictions for a rows-by-inputs batch (any memory layout; columns in the
    /// training order; categories as the training codes, NaN for missing or unseen).
    /// Classes: one column per class in model order, each row summing to 1.
    /// Regression: one column. Blocks of rows run in parallel on the current rayon
    /// pool; output row `i` belongs to input row `i`.
    ///
    /// # Errors
    /// `LengthMismatch` when the number of columns is not the model's.
    ///
    /// # Example
    /// ```
    /// use copse_forest::ndarray::s;
    /// use copse_forest::{synth, Forest, ForestSettings, TrainOptions};
    ///
    /// let data = synth::twonorm(200, 1);
    /// let settings = ForestSettings { trees: 30, ..Default::default() };
    /// let options = TrainOptions { oob_importance: false, ..TrainOptions::default() };
    /// let forest = Forest::train(data.x.view(), &data.meta, &data.outcome, &settings, &options)?
    ///     .forest;
    /// let fresh = synth::twonorm(10, 2);
    /// let probs = forest.predict(fresh.x.slice(s![..3, ..]))?;
    /// assert_eq!(probs.dim(), (3, 2)); // a column per class
    /// for row in probs.rows() {
    ///     assert!((row.sum() - 1.0).abs() < 1e-12);
    /// }
    /// # Ok::<(), copse_forest::Error>(())
    /// ```
    pub fn predict(&self, x: ArrayView2<'_, f64>) -> Result<Array2<f64>> {
        self.check_columns(x)?;
        let (n, k) = (x.nrows(), self.n_outputs());
        let mut out = vec![0.0; n * k];
        // Each tree is read from memory once per block, so a block should hold more
        // rows than a tree has nodes (measured on a 100-tree model of 10,500 nodes a
        // tree: 11.5 ns per node visit with 256 rows, 4.7 with 4,096, 3.8 with
        // 16,384); but every thread needs a block.
        let per_tree = self.n_nodes() / self.trees.len().max(1);
        let scorers = self.scorers(n);
        let block = (2 * per_tree)
            .min(n.div_ceil(rayon::current_num_threads()))
            .clamp(PREDICT_BLOCK.0, PREDICT_BLOCK.1)
            .min((PREDICT_BLOCK_BYTES / (8 * self.n_features()).max(1)).max(1));
        out.par_chunks_mut(block * k.max(1))
            .enumerate()
            .for_each(|(b, chunk)| {
                let start = b * block;
                self.predict_block(&scorers, chunk.len() / k, |r| x.row(start + r), None, chunk);
            });
        Ok(Array2::from_shape_vec((n, k), out).expect("n rows of k outputs by construction"))
    }

    /// Rows to read and score together when a caller streams data through
    /// [`Forest::predict`] in batches: each tree is read from memory once per batch, so
    /// a batch should hold many more rows than a tree has nodes, two rows per node for
    /// every thread of the current rayon pool; at least 4,096 rows (a small model keeps
    /// memory small) and at most 65,536 (a batch's text and values bound the memory
    /// used, whatever the input's length). Measured on 1,000,000 rows scored by the
    /// command line, 2 threads, trees of about 10,500 nodes: 4,096-row batches 125,000
    /// rows/s, 32,768-row batches 175,000 rows/s, same output. Fewer rows when the
    /// batch's input values and outputs would pass [`SCORING_BLOCK_BYTES`] (a model of
    /// many inputs); [`Forest::scoring_block_rows_for`] counts the caller's bytes too.
    ///
    /// # Example
    /// ```
    /// use copse_forest::{synth, Forest, ForestSettings, TrainOptions};
    ///
    /// let data = synth::twonorm(100, 1);
    /// let settings = ForestSettings { trees: 5, ..Default::default() };
    /// let options = TrainOptions { oob_importance: false, ..TrainOptions::default() };
    /// let forest = Forest::train(data.x.view(), &data.meta, &data.outcome, &settings, &options)?
    ///     .forest;
    /// assert!((4096..=65536).contains(&forest.scoring_block_rows()));
    /// # Ok::<(), copse_forest::Error>(())
    /// ```
    pub fn scoring_block_rows(&self) -> usize {
        self.scoring_block_rows_for(0)
    }

    /// Rows per scoring batch, as [`Forest::scoring_block_rows`], when the caller also
    /// holds `caller_row_bytes` for each row of a batch (its text, the columns it
    /// copies to the output): the batch's input values (8 bytes each), outputs and the
    /// caller's bytes stay within [`SCORING_BLOCK_BYTES`], down to one row.
    ///
    /// # Example
    /// ```
    /// use copse_forest::{synth, Forest, ForestSettings, TrainOptions, SCORING_BLOCK_BYTES};
    ///
    /// let data = synth::twonorm(100, 1);
    /// let settings = ForestSettings { trees: 5, ..Default::default() };
    /// let options = TrainOptions { oob_importance: false, ..TrainOptions::default() };
    /// let forest = Forest::train(data.x.view(), &data.meta, &data.outcome, &settings, &options)?
    ///     .forest;
    /// // Rows that each carry 100 kB of text: a batch of 167 rows holds 16 MiB.
    /// let rows = forest.scoring_block_rows_for(100_000);
    /// assert!(rows * 100_000 <= SCORING_BLOCK_BYTES && rows > 100);
    /// # Ok::<(), copse_forest::Error>(())
    /// ```
    pub fn scoring_block_rows_for(&self, caller_row_bytes: usize) -> usize {
        let per_tree = self.n_nodes() / self.trees.len().max(1);
        let by_nodes = (2 * rayon::current_num_threads() * per_tree).clamp(4096, 65536);
        let row_bytes = 8 * (self.n_features() + self.n_outputs()) + caller_row_bytes;
        by_nodes.min((SCORING_BLOCK_BYTES / row_bytes.max(1)).max(1))
    }

    /// Prediction for one row of input values into `out` (length [`Forest::n_outputs`]).
    ///
    /// # Errors
    /// `LengthMismatch` when `row` or `out` has the wrong length.
    pub fn predict_row(&self, row: &[f64], out: &mut [f64]) -> Result<()> {
        if row.len() != self.n_features() || out.len() != self.n_outputs() {
            return Err(Error::new(
                ErrorKind::LengthMismatch,
                format!(
                    "a row of {} values and an output of {}; the model needs {} and {}",
                    row.len(),
                    out.len(),
                    self.n_features(),
                    self.n_outputs()
                ),
            ));
        }
        self.predict_block(&self.scorers(1), 1, |_| ArrayView1::from(row), None, out);
        Ok(())
    }

    /// Label of the predicted class for a row of probabilities (highest probability,
    /// ties to the first class in model order); `None` for regression.
    pub fn class_label(&self, probs: &[f64]) -> Option<&str> {
        match self.task {
            Task::Classify => self.classes.get(predicted_class(probs)).map(String::as_str),
            Task::Regress => None,
        }
    }

    /// Accuracy measures of the forest's predictions on `x` against `outcome`. Class
    /// outcomes are matched to the model's classes by label.
    ///
    /// # Errors
    /// `LengthMismatch` for a wrong number of columns or outcomes; `OutcomeMismatch`
    /// when the outcome does not fit the model or holds a class it never saw;
    /// `NoTargets` when no row has a known outcome.
    ///
    /// # Example
    /// ```
    /// use copse_forest::{synth, Forest, ForestSettings, TrainOptions};
    ///
    /// let data = synth::twonorm(300, 1);
    /// let settings = ForestSettings { trees: 50, ..Default::default() };
    /// let options = TrainOptions { oob_importance: false, ..TrainOptions::default() };
    /// let forest = Forest::train(data.x.view(), &data.meta, &data.outcome, &settings, &options)?
    ///     .forest;
    /// let test = synth::twonorm(300, 2);
    /// let e = forest.evaluate(test.x.view(), &test.outcome)?;
    /// // The best possible error on twonorm is 0.023.
    /// assert!(e.metrics.error() < 0.2);
    /// # Ok::<(), copse_forest::Error>(())
    /// ```
    pub fn evaluate(&self, x: ArrayView2<'_, f64>, outcome: &Outcome) -> Result<Evaluation> {
        self.evaluate_weighted(x, outcome, None)
    }

    /// Accuracy measures as [`Forest::evaluate`], each row counted with its case
    /// weight when `weights` are given (weighted error, Brier score, log loss, ROC AUC
    /// and confusion table in weights; weighted squared and absolute errors):
    /// see [`crate::metrics::class_metrics_weighted`].
    ///
    /// # Errors
    /// As for [`Forest::evaluate`]; `LengthMismatch` for a wrong number of weights,
    /// `BadValue` for a negative or non-finite one, `NoTargets` when the rows with a
    /// known outcome weigh nothing.
    pub fn evaluate_weighted(
        &self,
        x: ArrayView2<'_, f64>,
        outcome: &Outcome,
        weights: Option<&[f64]>,
    ) -> Result<Evaluation> {
        let outcome = self.align_rows(x, outcome)?;
        let weights = crate::case_weights::checked_weights(weights, &outcome)?.map(|(w, _)| w);
        let preds = self.predict(x)?;
        let metrics = match &outcome {
            Outcome::Classes { codes, .. } => {
                class_metrics_weighted(codes, preds.view(), weights).map(Metrics::Classes)
            }
            Outcome::Values(y) => {
                value_metrics_weighted(y, &preds.column(0).to_vec(), weights).map(Metrics::Values)
            }
        };
        let missing = x.nrows() - outcome.n_labelled();
        match metrics {
            Some(metrics) => Ok(Evaluation {
                metrics,
                rows_missing_outcome: missing,
            }),
            None => Err(Error::new(
                ErrorKind::NoTargets,
                "no row has a known outcome, so there is nothing to evaluate against",
            )),
        }
    }

    /// Predictions for `rows` rows into `out` (`rows * n_outputs`): row `r` is
    /// `row_of(r)`, except that with `swap = Some((j, vals))` its input `j` is `vals[r]`.
    /// The rows are copied once into a contiguous buffer; trees run in the outer loop
    /// so each stays in cache for the whole block, and descend several rows at a time
    /// ([`copse_tree::Tree::leaf_indices`]). Every row still sums its trees in tree
    /// order, so the result is the same as row by row.
    #[inline]
    pub(crate) fn predict_block<'a>(
        &self,
        scorers: &[Scorer<'_>],
        rows: usize,
        row_of: impl Fn(usize) -> ArrayView1<'a, f64>,
        swap: Option<(usize, &[f64])>,
        out: &mut [f64],
    ) {
        let (k, p) = (self.n_outputs(), self.n_features());
        let mut block = vec![0.0; rows * p];
        if p > 0 {
            for (r, dst) in block.chunks_exact_mut(p).enumerate() {
                let row = row_of(r);
                match row.as_slice() {
                    Some(v) => dst.copy_from_slice(v),
                    None => dst.iter_mut().zip(row.iter()).for_each(|(d, &v)| *d = v),
                }
                if let Some((j, vals)) = swap {
                    dst[j] = vals[r];
                }
            }
        }
        let mut leaves = vec![0u32; rows];
        out.iter_mut().for_each(|o| *o = 0.0);
        for scorer in scorers {
            scorer.leaf_indices(&block, p, &mut leaves);
            add_leaf_values(scorer.tree(), &leaves, k, out);
        }
        self.finish_block(out);
    }

    /// Predictions for `rows` rows into `out` (`rows * n_outputs`) from the leaves
    /// they reached, `leaves[t * rows + r]` in tree `t` for row `r`: the trees' outputs
    /// summed in tree order, as [`Forest::predict_block`] sums them, so the results are
    /// the same to the bit.
    pub(crate) fn sum_leaves(&self, leaves: &[u32], rows: usize, out: &mut [f64]) {
        let k = self.n_outputs();
        out.iter_mut().for_each(|o| *o = 0.0);
        for (t, tree) in self.trees.iter().enumerate() {
            add_leaf_values(tree, &leaves[t * rows..(t + 1) * rows], k, out);
        }
        self.finish_block(out);
    }

    /// The mean over the trees of the sums in `out`, shifted to the model's priors.
    fn finish_block(&self, out: &mut [f64]) {
        let k = self.n_outputs();
        let m = self.trees.len().max(1) as f64;
        out.iter_mut().for_each(|o| *o /= m);
        if let Some(shift) = &self.prior_shift {
            out.chunks_mut(k)
                .for_each(|row| crate::priors::shift_row(shift, row));
        }
    }

    /// How the trees descend when `rows` rows are to be scored: laid out for scoring
    /// ([`Tree::compact`], one pass over the nodes) when there are at least twice as
    /// many rows as a tree has nodes, else as they are.
    pub(crate) fn scorers(&self, rows: usize) -> Vec<Scorer<'_>> {
        let per_tree = self.n_nodes() / self.trees.len().max(1);
        self.trees
            .iter()
            .map(|t| {
                if rows >= 2 * per_tree {
                    Scorer::Compact(t.compact())
                } else {
                    Scorer::Plain(t)
                }
            })
            .collect()
    }

    /// Checks `x` has the model's number of columns.
    pub(crate) fn check_columns(&self, x: ArrayView2<'_, f64>) -> Result<()> {
        if x.ncols() != self.n_features() {
            return Err(Error::new(
                ErrorKind::LengthMismatch,
                format!(
                    "the data has {} input columns but the model was trained on {}",
                    x.ncols(),
                    self.n_features()
                ),
            ));
        }
        Ok(())
    }
}

/// Adds the outputs of `leaves` (one leaf of `tree` per row) to `out` (`k` per row).
/// Two classes and one value, the usual cases, are added straight from the leaf's own
/// number, with the same operations as [`Tree::leaf_value`] (class 0 gets `1 - p`), so
/// the sums are the same to the bit.
#[inline]
fn add_leaf_values(tree: &Tree, leaves: &[u32], k: usize, out: &mut [f64]) {
    let nodes = tree.nodes();
    match (k, tree.n_outputs()) {
        (1, 1) => {
            for (o, &leaf) in out.iter_mut().zip(leaves) {
                *o += nodes[leaf as usize].leaf_output();
            }
        }
        (2, 2) => {
            for (o, &leaf) in out.chunks_exact_mut(2).zip(leaves) {
                let v = nodes[leaf as usize].leaf_output();
                o[0] += 1.0 - v;
                o[1] += v;
            }
        }
        _ => {
            for (o, &leaf) in out.chunks_mut(k).zip(leaves) {
                o.iter_mut()
                    .zip(&tree.leaf_value(leaf as usize))
                    .for_each(|(o, v)| *o += v);
            }
        }
    }
}

/// One tree, ready to descend blocks of rows: as it is, or laid out for scoring.
pub(crate) enum Scorer<'a> {
    Plain(&'a Tree),
    Compact(CompactTree<'a>),
}

impl Scorer<'_> {
    /// Leaves of the rows of a row-major block (see [`Tree::leaf_indices`]).
    pub(crate) fn leaf_indices(&self, rows: &[f64], width: usize, leaves: &mut [u32]) {
        match self {
            Scorer::Plain(t) => t.leaf_indices(rows, width, leaves),
            Scorer::Compact(c) => c.leaf_indices(rows, width, leaves),
        }
    }

    /// Leaves of some rows of a block (see [`Tree::leaf_indices_of`]).
    pub(crate) fn leaf_indices_of(
        &self,
        rows: &[f64],
        width: usize,
        picks: &[u32],
        leaves: &mut [u32],
    ) {
        match self {
            Scorer::Plain(t) => t.leaf_indices_of(rows, width, picks, leaves),
            Scorer::Compact(c) => c.leaf_indices_of(rows, width, picks, leaves),
        }
    }

    /// The tree.
    pub(crate) fn tree(&self) -> &Tree {
        match self {
            Scorer::Plain(t) => t,
            Scorer::Compact(c) => c.tree(),
        }
    }
}
