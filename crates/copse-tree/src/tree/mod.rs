//! A grown tree: 16-byte nodes in one flat array, each leaf carrying its own output
//! and case weight, and prediction for one row or a batch.
//!
//! The pieces: [`Node`] and its serialized record (`node.rs`), a leaf's output
//! ([`LeafValue`], `leaf_value.rs`), descent of rows one by one and by blocks
//! (`descent.rs`), and the tree laid out for scoring many rows (`CompactTree`,
//! `compact.rs`). The block descents and the compact layout are the forest engine's
//! kernels, public for it but hidden from these docs and not part of the stable API.
mod compact;
mod descent;
mod leaf_value;
mod node;
mod recode;

// Layout for the forest engine's descent kernels; not part of the stable API.
#[doc(hidden)]
pub use compact::CompactTree;
pub use leaf_value::LeafValue;
pub use node::Node;
pub(crate) use node::{weight_bits, CATEGORICAL, LEAF, MISSING_LEFT};

use crate::error::{Error, ErrorKind, Result};
use leaf_value::Repr;
use ndarray::{Array2, ArrayView2};
use serde::{Deserialize, Serialize};

/// A grown tree.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Tree {
    pub(crate) nodes: Vec<Node>,
    /// Class count (classification) or 1 (regression).
    pub(crate) n_outputs: usize,
    /// Class probabilities of the leaves, `n_outputs` per leaf, for three or more
    /// classes (a leaf's `split` holds its offset); empty for one or two outputs,
    /// whose leaves hold their output themselves.
    pub(crate) leaf_values: Vec<f64>,
    /// Bit sets of left-going categories, 64 per word.
    pub(crate) cat_sets: Vec<u64>,
    /// Weighted impurity decrease summed per input over this tree's splits.
    pub(crate) decrease: Vec<f64>,
}

impl Tree {
    /// All nodes; node 0 is the root.
    pub fn nodes(&self) -> &[Node] {
        &self.nodes
    }

    /// Number of leaves (counted: one pass over the nodes).
    pub fn n_leaves(&self) -> usize {
        self.nodes.iter().filter(|n| n.is_leaf()).count()
    }

    /// The leaves' node indices, in node order: the ids that [`Tree::leaf_index`] (and
    /// every other descent) returns and [`Tree::leaf_value`] and [`Tree::leaf_weight`]
    /// take. They are not consecutive: a table kept per leaf is
    /// indexed by node, sized by `nodes().len()`.
    pub fn leaves(&self) -> impl Iterator<Item = usize> + '_ {
        self.nodes
            .iter()
            .enumerate()
            .filter(|(_, n)| n.is_leaf())
            .map(|(i, _)| i)
    }

    /// True when the tree is one leaf: no split was possible or worth making (for
    /// example a target with a single class, or inputs that never vary). Such a tree
    /// predicts the training distribution (or mean) for every row.
    pub fn is_single_leaf(&self) -> bool {
        self.nodes.len() == 1
    }

    /// Number of inputs of the data the tree was grown on; a row passed to prediction
    /// must have at least this many values.
    pub fn n_features(&self) -> usize {
        self.decrease.len()
    }

    /// Width of a leaf output: number of classes, or 1 for regression.
    pub fn n_outputs(&self) -> usize {
        self.n_outputs
    }

    /// Output of the leaf at node `leaf`: class probabilities (summing to 1) or the
    /// mean. With two classes the leaf stores class 1's probability `p` (the class's
    /// weight over the leaf's weight) and class 0's is computed here as `1 - p`, which
    /// may differ from class 0's own weight share by one unit in the last place of 1
    /// (`f64::EPSILON`, for whole-number weights); the two sum to 1 within as much.
    /// Regression means are stored as computed.
    ///
    /// # Panics
    /// When node `leaf` is not a leaf.
    #[inline]
    pub fn leaf_value(&self, leaf: usize) -> LeafValue<'_> {
        let n = self.nodes[leaf];
        assert!(n.feature == LEAF, "node {leaf} is not a leaf");
        let v = f64::from_bits(n.split);
        LeafValue(match self.n_outputs {
            1 => Repr::Inline {
                values: [v, 0.0],
                len: 1,
            },
            2 => Repr::Inline {
                values: [1.0 - v, v],
                len: 2,
            },
            k => {
                let at = n.split as usize;
                Repr::Shared(&self.leaf_values[at..at + k])
            }
        })
    }

    /// Total case weight that reached the leaf at node `leaf` in training, in single
    /// precision (exact for whole numbers up to 2^24; see [`Node`]).
    ///
    /// # Panics
    /// When node `leaf` is not a leaf.
    pub fn leaf_weight(&self, leaf: usize) -> f64 {
        let n = self.nodes[leaf];
        assert!(n.feature == LEAF, "node {leaf} is not a leaf");
        f64::from(f32::from_bits(n.child))
    }

    /// Weighted impurity decrease of this tree's splits, summed per input.
    pub fn impurity_decrease(&self) -> &[f64] {
        &self.decrease
    }

    /// Depth of the deepest leaf (a lone root leaf has depth 0).
    pub fn depth(&self) -> usize {
        let mut deepest = 0;
        let mut stack = vec![(0usize, 0usize)];
        while let Some((i, d)) = stack.pop() {
            let n = self.nodes[i];
            if n.is_leaf() {
                deepest = deepest.max(d);
            } else {
                stack.push((n.child(), d + 1));
                stack.push((n.child() + 1, d + 1));
            }
        }
        deepest
    }

    /// Leaf (its node index) reached by one row of input values (categories as codes,
    /// NaN missing).
    ///
    /// # Panics
    /// When `row` is shorter than [`Tree::n_features`].
    ///
    /// # Example
    /// ```
    /// use copse_tree::{BinnedData, FeatureMeta, Grower, OutcomeView, TreeSettings};
    /// use ndarray::array;
    ///
    /// // The class is 1 when `size` is above 2.5; the midpoint is the threshold.
    /// let x = array![[1.0], [2.0], [3.0], [4.0]];
    /// let meta = vec![FeatureMeta::numeric("size")];
    /// let data = BinnedData::new(x.view(), &meta, 256)?;
    /// let target = OutcomeView::classes(&[0, 0, 1, 1], 2)?;
    /// let tree = Grower::new(TreeSettings::default()).grow(&data, &target, &[1.0; 4], 0)?;
    /// let leaf = tree.leaf_index(&[4.0]);
    /// assert!(tree.nodes()[leaf].is_leaf());
    /// assert_eq!(tree.leaf_weight(leaf), 2.0);
    /// assert_eq!(tree.leaf_value(leaf), &[0.0, 1.0]);
    /// # Ok::<(), copse_tree::Error>(())
    /// ```
    #[inline]
    pub fn leaf_index(&self, row: &[f64]) -> usize {
        self.leaf_index_with(|j| row[j])
    }

    /// Output for one row: class probabilities or the value.
    ///
    /// # Panics
    /// When `row` is shorter than [`Tree::n_features`]; use [`Tree::try_predict_row`]
    /// for rows that come from outside the program.
    ///
    /// # Example
    /// ```
    /// use copse_tree::{BinnedData, FeatureMeta, Grower, OutcomeView, TreeSettings};
    /// use ndarray::array;
    ///
    /// // The class is 1 when `size` is above 2.5; the midpoint is the threshold.
    /// let x = array![[1.0], [2.0], [3.0], [4.0]];
    /// let meta = vec![FeatureMeta::numeric("size")];
    /// let data = BinnedData::new(x.view(), &meta, 256)?;
    /// let target = OutcomeView::classes(&[0, 0, 1, 1], 2)?;
    /// let tree = Grower::new(TreeSettings::default()).grow(&data, &target, &[1.0; 4], 0)?;
    /// assert_eq!(tree.predict_row(&[2.4]), &[1.0, 0.0]);
    /// // A missing value follows the node's missing-value direction.
    /// assert_eq!(tree.predict_row(&[f64::NAN]).len(), 2);
    /// # Ok::<(), copse_tree::Error>(())
    /// ```
    pub fn predict_row(&self, row: &[f64]) -> LeafValue<'_> {
        self.leaf_value(self.leaf_index(row))
    }

    /// Like [`Tree::predict_row`], but a row of the wrong width is an error.
    ///
    /// # Errors
    /// `LengthMismatch` when `row` has fewer values than the tree has inputs.
    ///
    /// # Example
    /// ```
    /// use copse_tree::{BinnedData, FeatureMeta, Grower, OutcomeView, TreeSettings};
    /// use ndarray::array;
    ///
    /// // The class is 1 when `size` is above 2.5; the midpoint is the threshold.
    /// let x = array![[1.0], [2.0], [3.0], [4.0]];
    /// let meta = vec![FeatureMeta::numeric("size")];
    /// let data = BinnedData::new(x.view(), &meta, 256)?;
    /// let target = OutcomeView::classes(&[0, 0, 1, 1], 2)?;
    /// let tree = Grower::new(TreeSettings::default()).grow(&data, &target, &[1.0; 4], 0)?;
    /// assert_eq!(tree.try_predict_row(&[3.5])?, &[0.0, 1.0]);
    /// assert!(tree.try_predict_row(&[]).is_err());
    /// # Ok::<(), copse_tree::Error>(())
    /// ```
    pub fn try_predict_row(&self, row: &[f64]) -> Result<LeafValue<'_>> {
        self.check_width(row.len())?;
        Ok(self.predict_row(row))
    }

    fn check_width(&self, width: usize) -> Result<()> {
        if width < self.n_features() {
            return Err(Error::new(
                ErrorKind::LengthMismatch,
                format!(
                    "a row has {width} input values but the tree was grown on {}; \
                     supply every input column, in training order",
                    self.n_features()
                ),
            ));
        }
        Ok(())
    }

    /// Predicted class for one row: highest probability, ties to the lowest class code.
    ///
    /// # Panics
    /// When `row` is shorter than [`Tree::n_features`].
    pub fn predict_class(&self, row: &[f64]) -> usize {
        argmax(&self.predict_row(row))
    }

    /// Like [`Tree::predict_batch`], but a batch of the wrong width is an error.
    ///
    /// # Errors
    /// `LengthMismatch` when `x` has fewer columns than the tree has inputs.
    pub fn try_predict_batch(&self, x: ArrayView2<'_, f64>) -> Result<Array2<f64>> {
        self.check_width(x.ncols())?;
        Ok(self.predict_batch(x))
    }

    /// Outputs for a rows-by-inputs batch: one row of `n_outputs` per input row.
    ///
    /// # Panics
    /// When `x` has fewer columns than [`Tree::n_features`]; see
    /// [`Tree::try_predict_batch`].
    ///
    /// # Example
    /// ```
    /// use copse_tree::{BinnedData, FeatureMeta, Grower, OutcomeView, TreeSettings};
    /// use ndarray::array;
    ///
    /// // The class is 1 when `size` is above 2.5; the midpoint is the threshold.
    /// let x = array![[1.0], [2.0], [3.0], [4.0]];
    /// let meta = vec![FeatureMeta::numeric("size")];
    /// let data = BinnedData::new(x.view(), &meta, 256)?;
    /// let target = OutcomeView::classes(&[0, 0, 1, 1], 2)?;
    /// let tree = Grower::new(TreeSettings::default()).grow(&data, &target, &[1.0; 4], 0)?;
    /// let out = tree.predict_batch(array![[0.0], [9.0]].view());
    /// assert_eq!(out, array![[1.0, 0.0], [0.0, 1.0]]);
    /// # Ok::<(), copse_tree::Error>(())
    /// ```
    pub fn predict_batch(&self, x: ArrayView2<'_, f64>) -> Array2<f64> {
        let mut out = Array2::zeros((x.nrows(), self.n_outputs));
        for (row, mut o) in x.rows().into_iter().zip(out.rows_mut()) {
            let leaf = self.leaf_index_with(|j| row[j]);
            o.iter_mut()
                .zip(&self.leaf_value(leaf))
                .for_each(|(o, v)| *o = *v);
        }
        out
    }

    /// Category codes sent left by a categorical node (for display).
    pub fn left_categories(&self, n: &Node) -> Vec<usize> {
        if !n.is_categorical() {
            return Vec::new();
        }
        let (offset, count) = ((n.split >> 32) as usize, (n.split & 0xffff_ffff) as usize);
        (0..count)
            .filter(|c| self.cat_sets[offset + c / 64] >> (c % 64) & 1 == 1)
            .collect()
    }

    /// Frees the spare capacity of the tree's tables, which doubled as they grew (up
    /// to half of each spare); a forest keeps many trees.
    pub(crate) fn shrink_to_fit(&mut self) {
        self.nodes.shrink_to_fit();
        self.leaf_values.shrink_to_fit();
        self.cat_sets.shrink_to_fit();
    }

    /// Bytes the tree occupies in memory: nodes (leaves included, with their outputs
    /// and weights), the class probabilities of three or more classes, category sets,
    /// and the per-input impurity decreases.
    pub fn heap_bytes(&self) -> usize {
        self.nodes.len() * std::mem::size_of::<Node>()
            + (self.leaf_values.len() + self.decrease.len()) * 8
            + self.cat_sets.len() * 8
    }
}

/// Index of the largest value; ties go to the lowest index.
pub(crate) fn argmax(v: &[f64]) -> usize {
    let mut best = 0;
    for (i, &x) in v.iter().enumerate() {
        if x > v[best] {
            best = i;
        }
    }
    best
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn argmax_ties_go_to_the_lowest_index() {
        assert_eq!(argmax(&[0.25, 0.5, 0.25]), 1);
        assert_eq!(argmax(&[0.5, 0.5]), 0);
        assert_eq!(argmax(&[0.0, 0.5, 0.5]), 1);
    }
}
