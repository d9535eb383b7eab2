//! Per-row contributions: the exact Shapley values of the forest's prediction, with
//! the expectation over absent inputs taken along the trees' own paths and weighted by
//! training cover (Lundberg et al. 2020, "From local explanations to global
//! understanding with explainable AI for trees", Nature Machine Intelligence 2:56-67),
//! in time polynomial in the tree's depth.
//!
//! For a set `S` of inputs, a tree's expected output given `x_S` is found by walking
//! it: a node testing an input of `S` sends the row where its value goes (so category
//! sets and the learned missing direction count as in prediction); a node testing any
//! other input averages its two children weighted by their training cover (the case
//! weight of the leaves below). Input `i`'s contribution is the Shapley value of `i`
//! in the game `S -> E[f | x_S]`; the base value is the expectation with no input
//! known, the cover-weighted mean of the leaves. The forest's contributions are the
//! mean of its trees' (the Shapley value is linear in the game).
//!
//! Two walks compute the same values, never listing the subsets: the published
//! Algorithm 2 ([`ContributionWalk::Paths`], `path_walk.rs`) and a leaf-wise closed
//! form ([`ContributionWalk::Leaves`], the default, `leaf_walk.rs`), which does less
//! work per leaf (500 rows of the demo model, 500 trees of about 400 nodes and depth
//! up to 25: 11.9 s of processor time by paths, 6.8 s leaf by leaf; on the 100 deeper
//! trees of the benchmark's T100k model, a third of the time). The tests check both
//! against each other and against a sum over all subsets.
mod leaf_walk;
mod path_walk;
mod ranking;
#[cfg(test)]
mod tests;

use crate::error::{Error, ErrorKind, Result};
use crate::forest::Forest;
use copse_tree::Tree;
use ndarray::{Array3, ArrayView2};
use rayon::prelude::*;

pub use ranking::{ContributionRanking, RANKING_ROWS};

/// Contributions of the inputs to the forest's predictions for a batch of rows.
#[derive(Debug, Clone, PartialEq)]
pub struct Contributions {
    /// Expected prediction with no input known, per output (a class's probability,
    /// or the value): the same for every row.
    pub base: Vec<f64>,
    /// Rows by inputs by outputs: how much each input moved each output of the row's
    /// prediction away from the base. Per row and output, the base plus the sum over
    /// inputs is the prediction.
    pub values: Array3<f64>,
}

/// How [`Forest::contributions_by`] walks the trees; both give the exact Shapley
/// values, equal to rounding.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum ContributionWalk {
    /// Leaf by leaf, from a closed form in the cover shares of the inputs the row
    /// follows and of those it does not (the module's notes): the faster.
    #[default]
    Leaves,
    /// Algorithm 2 of Lundberg et al. 2020, following each root-leaf path once and
    /// unwinding every input at each leaf.
    Paths,
}

/// A tree with the training cover of every node.
struct Covered<'a> {
    tree: &'a Tree,
    cover: Vec<f64>,
}

impl Forest {
    /// Contributions of every input to the prediction of every row of `x` (columns in
    /// the training order, categories as codes, NaN missing). Rows run in parallel on
    /// the current rayon pool; row `i` of the result belongs to row `i` of `x`. The
    /// base value plus a row's contributions equals [`Forest::predict`] to rounding.
    ///
    /// A model trained with class-balanced sampling is refused: its predictions are
    /// the trees' mean shifted back to the training class shares, a nonlinear step
    /// after the mean, so contributions of the trees' mean would not add up to them.
    ///
    /// # Errors
    /// `LengthMismatch` for a wrong number of columns; `InvalidSetting` for a model
    /// trained with class-balanced sampling.
    ///
    /// # Example
    /// ```
    /// use copse_forest::ndarray::Axis;
    /// use copse_forest::{synth, Forest, ForestSettings, TrainOptions};
    ///
    /// let data = synth::friedman1(200, 1);
    /// let settings = ForestSettings { trees: 20, ..Default::default() };
    /// let options = TrainOptions { oob_importance: false, ..TrainOptions::default() };
    /// let forest = Forest::train(data.x.view(), &data.meta, &data.outcome, &settings, &options)?
    ///     .forest;
    /// let c = forest.contributions(data.x.view())?;
    /// let p = forest.predict(data.x.view())?;
    /// // Row 0: the base plus every input's part of the one output.
    /// let sum = c.base[0] + c.values.index_axis(Axis(0), 0).sum();
    /// assert!((sum - p[[0, 0]]).abs() < 1e-9);
    /// # Ok::<(), copse_forest::Error>(())
    /// ```
    pub fn contributions(&self, x: ArrayView2<'_, f64>) -> Result<Contributions> {
        self.contributions_by(x, ContributionWalk::default())
    }

    /// As [`Forest::contributions`], with the walk chosen.
    ///
    /// # Errors
    /// As for [`Forest::contributions`].
    pub fn contributions_by(
        &self,
        x: ArrayView2<'_, f64>,
        walk: ContributionWalk,
    ) -> Result<Contributions> {
        self.check_columns(x)?;
        if self.prior_shift.is_some() {
            return Err(Error::new(
                ErrorKind::InvalidSetting,
                "contributions are not available for a model trained with class-balanced \
                 sampling: its probabilities are shifted back to the training class shares \
                 after the trees' mean, so no sum of per-input parts gives them; train \
                 without class balancing to explain predictions",
            ));
        }
        let (n, m, k) = (x.nrows(), self.n_features(), self.n_outputs());
        let covered: Vec<Covered<'_>> = self
            .trees
            .iter()
            .map(|tree| Covered {
                tree,
                cover: cover(tree),
            })
            .collect();
        let trees = covered.len().max(1) as f64;
        let mut base = vec![0.0; k];
        for c in &covered {
            let root = c.cover[0];
            for leaf in c.tree.leaves() {
                let share = if root > 0.0 {
                    c.tree.leaf_weight(leaf) / root
                } else {
                    0.0
                };
                for (b, v) in base.iter_mut().zip(&c.tree.leaf_value(leaf)) {
                    *b += share * v;
                }
            }
        }
        base.iter_mut().for_each(|b| *b /= trees);
        let depth = self.trees.iter().map(Tree::depth).max().unwrap_or(0) + 2;
        let mut values = vec![0.0; n * m * k];
        let chunks = values.par_chunks_mut((m * k).max(1)).enumerate();
        let finish = |out: &mut [f64]| out.iter_mut().for_each(|v| *v /= trees);
        match walk {
            ContributionWalk::Leaves => {
                // A path holds at most `depth` distinct inputs, and never more than m.
                let weights = leaf_walk::Weights::new(depth.min(m.max(1)));
                chunks.for_each_init(
                    || (leaf_walk::Scratch::new(m, depth), vec![0.0; m]),
                    |(scratch, row), (r, out)| {
                        row.iter_mut().zip(x.row(r)).for_each(|(a, b)| *a = *b);
                        for c in &covered {
                            leaf_walk::tree(c, row, out, scratch, &weights);
                        }
                        finish(out);
                    },
                );
            }
            ContributionWalk::Paths => {
                // A path holds at most depth + 1 steps, and each level keeps its own
                // copy.
                let buffer = depth * (depth + 1) / 2;
                chunks.for_each_init(
                    || (path_walk::buffer(buffer), vec![0.0; m]),
                    |(path, row), (r, out)| {
                        row.iter_mut().zip(x.row(r)).for_each(|(a, b)| *a = *b);
                        for c in &covered {
                            path_walk::tree(c, row, out, path);
                        }
                        finish(out);
                    },
                );
            }
        }
        let values = Array3::from_shape_vec((n, m, k), values)
            .expect("n rows of m inputs of k outputs by construction");
        Ok(Contributions { base, values })
    }
}

/// Training cover of every node: the case weight of the leaves below it.
fn cover(tree: &Tree) -> Vec<f64> {
    fn fill(tree: &Tree, node: usize, cover: &mut [f64]) -> f64 {
        let n = tree.nodes()[node];
        let c = if n.is_leaf() {
            tree.leaf_weight(node)
        } else {
            fill(tree, n.child(), cover) + fill(tree, n.child() + 1, cover)
        };
        cover[node] = c;
        c
    }
    let mut cover = vec![0.0; tree.nodes().len()];
    fill(tree, 0, &mut cover);
    cover
}
