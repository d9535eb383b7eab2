//! A grown tree: 16-byte nodes in one flat array, each leaf carrying its own output
//! and case weight, and prediction for one row or a batch.
use crate::error::{Error, ErrorKind, Result};
use ndarray::{Array2, ArrayView2};
use serde::{Deserialize, Serialize};

/// Node flag: missing values (and unseen categories) go to the left child.
pub(crate) const MISSING_LEFT: u16 = 1;
/// Node flag: the split is a category subset rather than a threshold.
pub(crate) const CATEGORICAL: u16 = 2;
/// `feature` value that marks a leaf.
pub(crate) const LEAF: u16 = u16::MAX;

/// One node in 16 bytes. Internal: `x[feature] <= threshold` (or category in the left
/// set) goes to `child`, otherwise to `child + 1`. Leaf: the node holds its own output
/// and case weight, so a tree of one or two outputs stores nothing per leaf beyond its
/// nodes; a leaf is known by its node index. Serialized in the compact form of
/// `NodeRecord` (this file).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(into = "NodeRecord", from = "NodeRecord")]
pub struct Node {
    /// Internal: threshold bits (numeric), or `offset << 32 | n_categories` into the
    /// category bit sets (categorical). Leaf: the bits of its output as an `f64` (the
    /// mean in regression, class 1's probability with two classes, the one class's
    /// share with one), or with three or more classes the offset of its class
    /// probabilities in [`Tree`]'s `leaf_values`.
    pub(crate) split: u64,
    /// Internal: left child. Leaf: the case weight that reached it, as `f32` bits (see
    /// [`weight_bits`]).
    pub(crate) child: u32,
    /// Input index, or `u16::MAX` for a leaf.
    pub(crate) feature: u16,
    /// `MISSING_LEFT` and `CATEGORICAL` bits.
    pub(crate) flags: u16,
}

impl Node {
    /// True for a leaf.
    pub fn is_leaf(&self) -> bool {
        self.feature == LEAF
    }
    /// Input tested by an internal node (`None` for a leaf).
    pub fn feature(&self) -> Option<usize> {
        (!self.is_leaf()).then_some(self.feature as usize)
    }
    /// Threshold of a numeric split.
    pub fn threshold(&self) -> Option<f64> {
        (!self.is_leaf() && self.flags & CATEGORICAL == 0).then(|| f64::from_bits(self.split))
    }
    /// True when missing values and unseen categories go left.
    pub fn missing_goes_left(&self) -> bool {
        self.flags & MISSING_LEFT != 0
    }
    /// True for a category-subset split.
    pub fn is_categorical(&self) -> bool {
        !self.is_leaf() && self.flags & CATEGORICAL != 0
    }
    /// Index of the left child (the right child follows it); meaningless for a leaf
    /// (whose `child` field holds its weight: see [`Tree::leaf_weight`]).
    pub fn child(&self) -> usize {
        self.child as usize
    }
}

/// Record flag: `split` is written with its bytes swapped.
const SPLIT_SWAPPED: u16 = 0x10;
/// Record flag: `child` is written with its bytes swapped.
const CHILD_SWAPPED: u16 = 0x20;

/// A [`Node`] as serialized. Encoders with variable-length integers (the model file's)
/// write a small number in fewer bytes, so the record makes the usual fields small: a
/// leaf's `feature` (`u16::MAX`) is written as 0 and an input `j` as `j + 1`; and a
/// `split` or `child` whose bytes, swapped, make a smaller number is written swapped,
/// with a flag saying so. Floating-point bits whose low bytes are zero (leaf weights
/// that are whole numbers, probabilities such as 0, 1 or 0.5) become small that way;
/// child indices and offsets, already small, stay as they are. A node then takes at
/// most 16 bytes in such a file, and usually fewer. Reading undoes each step exactly,
/// whatever the values (a record that makes no sense gives a node that
/// [`Tree::check`] refuses).
#[derive(Debug, Clone, Copy, Serialize, Deserialize)]
struct NodeRecord {
    split: u64,
    child: u32,
    feature: u16,
    flags: u16,
}

impl From<Node> for NodeRecord {
    fn from(n: Node) -> Self {
        let mut flags = n.flags;
        let mut split = n.split;
        if split.swap_bytes() < split {
            split = split.swap_bytes();
            flags |= SPLIT_SWAPPED;
        }
        let mut child = n.child;
        if child.swap_bytes() < child {
            child = child.swap_bytes();
            flags |= CHILD_SWAPPED;
        }
        NodeRecord {
            split,
            child,
            feature: n.feature.wrapping_add(1),
            flags,
        }
    }
}

impl From<NodeRecord> for Node {
    fn from(r: NodeRecord) -> Self {
        let swapped = |bit: u16| r.flags & bit != 0;
        Node {
            split: if swapped(SPLIT_SWAPPED) {
                r.split.swap_bytes()
            } else {
                r.split
            },
            child: if swapped(CHILD_SWAPPED) {
                r.child.swap_bytes()
            } else {
                r.child
            },
            feature: r.feature.wrapping_sub(1),
            flags: r.flags & !(SPLIT_SWAPPED | CHILD_SWAPPED),
        }
    }
}

/// The `f32` bits stored for a leaf's case weight `w`. Single precision is exact for
/// whole-number weights up to 2^24 (bootstrap counts and row counts, the usual case);
/// real-valued weights are kept to about 7 significant digits, which is enough for
/// what the leaf weight is used for (display and summaries; outputs are computed in
/// full precision before they are stored). A positive weight stays positive and
/// finite: it is kept between the smallest positive and the largest finite `f32`.
pub(crate) fn weight_bits(w: f64) -> u32 {
    (w as f32).clamp(f32::from_bits(1), f32::MAX).to_bits()
}

/// A leaf's output as [`Tree::leaf_value`] gives it: derefs to `[f64]` (the class
/// probabilities, or the one value in regression). Two-class and regression leaves
/// keep their output inside their node, so the slice is built here, inline, with no
/// allocation; with three or more classes it borrows the tree's table.
#[derive(Clone, Copy)]
pub struct LeafValue<'a>(Repr<'a>);

#[derive(Clone, Copy)]
enum Repr<'a> {
    /// The first `len` (1 or 2) values.
    Inline {
        values: [f64; 2],
        len: u8,
    },
    Shared(&'a [f64]),
}

impl std::ops::Deref for LeafValue<'_> {
    type Target = [f64];
    #[inline(always)]
    fn deref(&self) -> &[f64] {
        match &self.0 {
            Repr::Inline { values, len } => &values[..usize::from(*len)],
            Repr::Shared(s) => s,
        }
    }
}

impl std::fmt::Debug for LeafValue<'_> {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        <[f64] as std::fmt::Debug>::fmt(self, f)
    }
}

impl<'b> IntoIterator for &'b LeafValue<'_> {
    type Item = &'b f64;
    type IntoIter = std::slice::Iter<'b, f64>;
    fn into_iter(self) -> Self::IntoIter {
        self.iter()
    }
}

impl PartialEq for LeafValue<'_> {
    fn eq(&self, other: &Self) -> bool {
        **self == **other
    }
}

impl PartialEq<[f64]> for LeafValue<'_> {
    fn eq(&self, other: &[f64]) -> bool {
        **self == *other
    }
}

impl PartialEq<&[f64]> for LeafValue<'_> {
    fn eq(&self, other: &&[f64]) -> bool {
        **self == **other
    }
}

impl<const N: usize> PartialEq<[f64; N]> for LeafValue<'_> {
    fn eq(&self, other: &[f64; N]) -> bool {
        **self == other[..]
    }
}

impl<const N: usize> PartialEq<&[f64; N]> for LeafValue<'_> {
    fn eq(&self, other: &&[f64; N]) -> bool {
        **self == other[..]
    }
}

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

    /// The leaves' node indices, in node order: the ids that [`Tree::leaf_index`] and
    /// [`Tree::leaf_indices`] return and [`Tree::leaf_value`] and
    /// [`Tree::leaf_weight`] take. They are not consecutive: a table kept per leaf is
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

    /// Whether node `n` sends a row whose input value is `v` to the left.
    #[inline(always)]
    pub fn goes_left(&self, n: &Node, v: f64) -> bool {
        if v.is_nan() {
            return n.flags & MISSING_LEFT != 0;
        }
        if n.flags & CATEGORICAL == 0 {
            return v <= f64::from_bits(n.split);
        }
        let (offset, count) = ((n.split >> 32) as usize, (n.split & 0xffff_ffff) as usize);
        if v < 0.0 || v.fract() != 0.0 || v as usize >= count {
            // A category never seen in training follows the missing direction.
            return n.flags & MISSING_LEFT != 0;
        }
        let c = v as usize;
        self.cat_sets[offset + c / 64] >> (c % 64) & 1 == 1
    }

    /// Leaf (its node index) reached by a row whose input `j` has value `value(j)`.
    #[inline]
    pub fn leaf_index_with(&self, value: impl Fn(usize) -> f64) -> usize {
        self.leaf_from(0, value)
    }

    /// Leaf (its node index) reached from node `start` by a row whose input `j` has
    /// value `value(j)`: the rest of a descent known to pass through `start`.
    ///
    /// # Panics
    /// When `start` is not a node of the tree.
    #[inline]
    pub fn leaf_index_from(&self, start: usize, value: impl Fn(usize) -> f64) -> usize {
        assert!(start < self.nodes.len(), "node {start} is not in the tree");
        self.leaf_from(start, value)
    }

    /// Leaf reached from node `start` by a row whose input `j` has value `value(j)`.
    #[inline]
    fn leaf_from(&self, start: usize, value: impl Fn(usize) -> f64) -> usize {
        let nodes = &self.nodes[..];
        let mut i = start;
        loop {
            let n = nodes[i];
            if n.feature == LEAF {
                return i;
            }
            i = self.child_of(&n, value(n.feature as usize));
        }
    }

    /// The child of internal node `n` that a row whose input value is `v` goes to:
    /// one step of every descent, row by row and by blocks (where it is also taken at
    /// a leaf and its result discarded).
    #[inline(always)]
    fn child_of(&self, n: &Node, v: f64) -> usize {
        let left = if n.flags & CATEGORICAL == 0 {
            numeric_left(v, f64::from_bits(n.split), n.flags)
        } else {
            self.goes_left(n, v)
        };
        n.child as usize + usize::from(!left)
    }

    /// Leaves reached by a block of rows: row `r` is `rows[r * width..(r + 1) * width]`
    /// (row-major, at least [`Tree::n_features`] values each); its leaf's node index
    /// goes to `leaves[r]`. Same results as [`Tree::leaf_index`] row by row, faster:
    /// several rows descend at once, each a level per step, and a row that reaches its
    /// leaf hands its place to the next row, with no branch on where any row is. A descent
    /// row by row stalls at the end of every row (the last comparison decides whether
    /// to go on, and cannot be foreseen); here the memory accesses of the descents
    /// overlap instead.
    ///
    /// # Panics
    /// When `rows` holds fewer than `leaves.len()` rows of `width`, or `width` is less
    /// than [`Tree::n_features`].
    pub fn leaf_indices(&self, rows: &[f64], width: usize, leaves: &mut [u32]) {
        let m = leaves.len();
        self.check_block(rows, width, m);
        self.descend_block(rows, width, |k| (k, 0), leaves);
    }

    /// Like [`Tree::leaf_indices`] for the rows numbered `picks` of the block:
    /// `leaves[k]` is the leaf of row `picks[k]`.
    ///
    /// # Panics
    /// When a pick is not a row of `rows`, `leaves` is shorter than `picks`, or
    /// `width` is less than [`Tree::n_features`].
    pub fn leaf_indices_of(&self, rows: &[f64], width: usize, picks: &[u32], leaves: &mut [u32]) {
        let m = self.check_picks(rows, width, picks, None);
        self.descend_block(rows, width, |k| (picks[k] as usize, 0), &mut leaves[..m]);
    }

    /// Like [`Tree::leaf_indices_of`], but row `picks[k]` starts its descent at node
    /// `starts[k]` instead of the root (for a row known to reach that node).
    ///
    /// # Panics
    /// As [`Tree::leaf_indices_of`], and when `starts` is shorter than `picks` or
    /// names a node the tree does not have.
    pub fn leaf_indices_from(
        &self,
        rows: &[f64],
        width: usize,
        picks: &[u32],
        starts: &[u32],
        leaves: &mut [u32],
    ) {
        let m = self.check_picks(rows, width, picks, Some(starts));
        self.descend_block(
            rows,
            width,
            |k| (picks[k] as usize, starts[k] as usize),
            &mut leaves[..m],
        );
    }

    fn check_block(&self, rows: &[f64], width: usize, m: usize) {
        assert!(
            width >= self.n_features() && rows.len() >= m * width,
            "a block needs {m} rows of at least {} values",
            self.n_features()
        );
    }

    /// Checks a block of `rows` for the rows numbered `picks`, each starting at node
    /// `starts[k]` when starts are given; returns the number of picks.
    fn check_picks(
        &self,
        rows: &[f64],
        width: usize,
        picks: &[u32],
        starts: Option<&[u32]>,
    ) -> usize {
        let m = picks.len();
        let top = picks.iter().max().map_or(0, |&r| r as usize + 1);
        self.check_block(rows, width, top);
        if let Some(starts) = starts {
            assert!(
                starts.len() >= m && starts[..m].iter().all(|&s| (s as usize) < self.nodes.len()),
                "every start must be a node of the tree"
            );
        }
        m
    }

    /// The descent of [`Tree::leaf_indices`]: `leaves[k]` gets the leaf reached from
    /// node `pick(k).1` by row `pick(k).0`.
    #[inline]
    fn descend_block(
        &self,
        rows: &[f64],
        width: usize,
        pick: impl Fn(usize) -> (usize, usize),
        leaves: &mut [u32],
    ) {
        descend_lanes(self, rows, width, pick, leaves);
    }

    /// The tree laid out for scoring many rows: [`CompactTree::leaf_indices`] gives
    /// the same leaves as [`Tree::leaf_indices`], faster, once the layout (one pass
    /// over the nodes) is paid for; worth it when far more rows than nodes are scored.
    pub fn compact(&self) -> CompactTree<'_> {
        let steps = self
            .nodes
            .iter()
            .enumerate()
            .map(|(i, n)| {
                if n.feature == LEAF {
                    // Every value (NaN included) compares false with a NaN threshold
                    // and goes right, to `next + 1`: the leaf itself. The NaN's
                    // payload holds the leaf's node index.
                    Step {
                        threshold: f64::from_bits(0x7ff8_0000_0000_0000 | i as u64),
                        next: (i as u32).wrapping_sub(1),
                        feature: 0,
                        flags: STEP_LEAF,
                    }
                } else {
                    Step {
                        threshold: f64::from_bits(n.split),
                        next: n.child,
                        feature: n.feature,
                        flags: n.flags,
                    }
                }
            })
            .collect();
        let mixed = self.nodes.iter().any(|n| n.flags & CATEGORICAL != 0);
        CompactTree {
            tree: self,
            steps,
            mixed,
        }
    }

    /// Leaf (its node index) reached by one row of input values (categories as codes,
    /// NaN missing).
    ///
    /// # Panics
    /// When `row` is shorter than [`Tree::n_features`].
    #[inline]
    pub fn leaf_index(&self, row: &[f64]) -> usize {
        self.leaf_index_with(|j| row[j])
    }

    /// Output for one row: class probabilities or the value.
    ///
    /// # Panics
    /// When `row` is shorter than [`Tree::n_features`]; use [`Tree::try_predict_row`]
    /// for rows that come from outside the program.
    pub fn predict_row(&self, row: &[f64]) -> LeafValue<'_> {
        self.leaf_value(self.leaf_index(row))
    }

    /// Like [`Tree::predict_row`], but a row of the wrong width is an error.
    ///
    /// # Errors
    /// `LengthMismatch` when `row` has fewer values than the tree has inputs.
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

    /// Bytes the tree occupies in memory: nodes (leaves included, with their outputs
    /// and weights), the class probabilities of three or more classes, category sets,
    /// and the per-input impurity decreases.
    pub fn heap_bytes(&self) -> usize {
        self.nodes.len() * std::mem::size_of::<Node>()
            + (self.leaf_values.len() + self.decrease.len()) * 8
            + self.cat_sets.len() * 8
    }
}

/// One level of descent, as the lane loop of [`descend_lanes`] needs it.
trait Walk {
    /// The node after `i` for the row whose values start at `rows[base]`; a leaf
    /// gives itself.
    fn next(&self, i: usize, rows: &[f64], base: usize) -> usize;
    /// `i` if node `i` is a leaf.
    fn leaf(&self, i: usize) -> Option<u32>;
    /// The row-by-row descent from node `start`, for small blocks.
    fn one(&self, start: usize, row: &[f64]) -> u32;
}

impl Walk for Tree {
    #[inline(always)]
    fn next(&self, i: usize, rows: &[f64], base: usize) -> usize {
        let n = self.nodes[i];
        // All ones at a leaf: the leaf's input is read as input 0 and ignored, and
        // the row stays where it is, with no branch on where a row is.
        let stay = 0usize.wrapping_sub(usize::from(n.feature == LEAF));
        let v = rows[base + (n.feature as usize & !stay)];
        (self.child_of(&n, v) & !stay) | (i & stay)
    }

    #[inline(always)]
    fn leaf(&self, i: usize) -> Option<u32> {
        (self.nodes[i].feature == LEAF).then_some(i as u32)
    }

    fn one(&self, start: usize, row: &[f64]) -> u32 {
        self.leaf_from(start, |j| row[j]) as u32
    }
}

/// Whether a numeric split at `threshold` with node flags `flags` sends value `v`
/// left, without a branch on the outcome: a NaN compares false, and goes left only
/// when the node sends missing values left.
#[inline(always)]
fn numeric_left(v: f64, threshold: f64, flags: u16) -> bool {
    (v <= threshold) | (v.is_nan() & (flags & MISSING_LEFT != 0))
}

/// Step flag: the node is a leaf (its step leads back to itself).
const STEP_LEAF: u16 = 4;

/// A node of a [`CompactTree`]: go to `next` when the value of input `feature` is at
/// most `threshold` (or missing with [`MISSING_LEFT`]), else to `next + 1`. A leaf
/// leads back to itself and keeps its node index in its (NaN) threshold.
#[derive(Debug, Clone, Copy)]
struct Step {
    threshold: f64,
    next: u32,
    feature: u16,
    flags: u16,
}

/// A [`Tree`] laid out for scoring blocks of rows (see [`Tree::compact`]): a leaf
/// leads back to itself, so a row that has reached its leaf needs no test to stay
/// there. Node numbers are the tree's; the tree itself is read only at category
/// splits.
#[derive(Debug, Clone)]
pub struct CompactTree<'a> {
    tree: &'a Tree,
    steps: Vec<Step>,
    /// Whether any node splits on categories.
    mixed: bool,
}

/// A [`CompactTree`] walked with (`MIXED`) or without a look for category splits:
/// a tree without any is walked by a loop with no call in it.
struct Walker<'t, 'a, const MIXED: bool>(&'t CompactTree<'a>);

impl<const MIXED: bool> Walk for Walker<'_, '_, MIXED> {
    #[inline(always)]
    fn next(&self, i: usize, rows: &[f64], base: usize) -> usize {
        let s = self.0.steps[i];
        let v = rows[base + s.feature as usize];
        let left = if !MIXED || s.flags & CATEGORICAL == 0 {
            numeric_left(v, s.threshold, s.flags)
        } else {
            self.0.tree.goes_left(&self.0.tree.nodes[i], v)
        };
        s.next.wrapping_add(u32::from(!left)) as usize
    }

    #[inline(always)]
    fn leaf(&self, i: usize) -> Option<u32> {
        let s = &self.0.steps[i];
        (s.flags & STEP_LEAF != 0).then_some(s.threshold.to_bits() as u32)
    }

    fn one(&self, start: usize, row: &[f64]) -> u32 {
        self.0.tree.one(start, row)
    }
}

impl<'a> CompactTree<'a> {
    /// The tree this was laid out from.
    pub fn tree(&self) -> &'a Tree {
        self.tree
    }

    fn descend(
        &self,
        rows: &[f64],
        width: usize,
        pick: impl Fn(usize) -> (usize, usize),
        leaves: &mut [u32],
    ) {
        if self.mixed {
            descend_lanes(&Walker::<true>(self), rows, width, pick, leaves);
        } else {
            descend_lanes(&Walker::<false>(self), rows, width, pick, leaves);
        }
    }

    /// As [`Tree::leaf_indices`].
    ///
    /// # Panics
    /// As [`Tree::leaf_indices`].
    pub fn leaf_indices(&self, rows: &[f64], width: usize, leaves: &mut [u32]) {
        self.tree.check_block(rows, width, leaves.len());
        self.descend(rows, width, |k| (k, 0), leaves);
    }

    /// As [`Tree::leaf_indices_of`].
    ///
    /// # Panics
    /// As [`Tree::leaf_indices_of`].
    pub fn leaf_indices_of(&self, rows: &[f64], width: usize, picks: &[u32], leaves: &mut [u32]) {
        let m = self.tree.check_picks(rows, width, picks, None);
        self.descend(rows, width, |k| (picks[k] as usize, 0), &mut leaves[..m]);
    }

    /// As [`Tree::leaf_indices_from`].
    ///
    /// # Panics
    /// As [`Tree::leaf_indices_from`].
    pub fn leaf_indices_from(
        &self,
        rows: &[f64],
        width: usize,
        picks: &[u32],
        starts: &[u32],
        leaves: &mut [u32],
    ) {
        let m = self.tree.check_picks(rows, width, picks, Some(starts));
        self.descend(
            rows,
            width,
            |k| (picks[k] as usize, starts[k] as usize),
            &mut leaves[..m],
        );
    }
}

/// Leaves reached by a block of rows: `leaves[k]` gets the leaf reached from node
/// `pick(k).1` by row `pick(k).0` of `rows` (row-major, `width` values a row).
/// Several rows descend side by side, a few levels at a time with no branch on where
/// a row is; then rows at their leaves are recorded and their lanes take new rows. A
/// descent row by row stalls at the end of every row (the last comparison decides
/// whether to go on, and cannot be foreseen); here the descents overlap instead.
#[inline]
fn descend_lanes<W: Walk>(
    walk: &W,
    rows: &[f64],
    width: usize,
    pick: impl Fn(usize) -> (usize, usize),
    leaves: &mut [u32],
) {
    let m = leaves.len();
    if m < 2 * LANES || width == 0 {
        for (k, o) in leaves.iter_mut().enumerate() {
            let (r, start) = pick(k);
            *o = walk.one(start, &rows[r * width..(r + 1) * width]);
        }
        return;
    }
    // Lane state: the position (in `leaves`) of the row it carries, that row's offset
    // in `rows`, the node it stands at, and whether it carries a row.
    let mut slot = [0usize; LANES];
    let mut base = [0usize; LANES];
    let mut at = [0usize; LANES];
    let mut live = [true; LANES];
    for l in 0..LANES {
        slot[l] = l;
        (base[l], at[l]) = pick(l);
        base[l] *= width;
    }
    let (mut next, mut alive) = (LANES, LANES);
    while alive > 0 {
        for _ in 0..STEPS {
            for l in 0..LANES {
                at[l] = walk.next(at[l], rows, base[l]);
            }
        }
        for l in 0..LANES {
            if !live[l] {
                continue;
            }
            if let Some(leaf) = walk.leaf(at[l]) {
                leaves[slot[l]] = leaf;
                if next < m {
                    let (r, start) = pick(next);
                    (slot[l], base[l], at[l]) = (next, r * width, start);
                    next += 1;
                } else {
                    live[l] = false;
                    alive -= 1;
                }
            }
        }
    }
}

/// Rows descending side by side in [`Tree::leaf_indices`], and levels they go down
/// between looks at which have reached their leaves (measured: 8 and 3 beat 4 or 6
/// lanes and 2 or 4 levels).
const LANES: usize = 8;
const STEPS: usize = 3;

/// Index of the largest value; ties go to the lowest index.
pub fn argmax(v: &[f64]) -> usize {
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
    fn an_internal_node_fits_in_16_bytes() {
        // Issue 2 asks for at most 16 bytes per node, so a deep tree stays cache-friendly.
        assert!(std::mem::size_of::<Node>() <= 16);
    }

    #[test]
    fn block_descent_matches_row_by_row() {
        use crate::{BinnedData, FeatureMeta, Grower, Target, TreeSettings};
        use rand::{Rng, SeedableRng};
        // A tree with numeric and categorical splits and missing values; the block
        // descents must reach the same leaf as the row-by-row one (the definition).
        let mut rng = rand_xoshiro::Xoshiro256PlusPlus::seed_from_u64(4);
        let n = 700;
        let mut x = ndarray::Array2::<f64>::zeros((n, 4));
        let mut y = Vec::with_capacity(n);
        for i in 0..n {
            let a: f64 = rng.gen_range(-2.0..2.0);
            let c = rng.gen_range(0..6) as f64;
            x[[i, 0]] = if rng.gen_bool(0.1) { f64::NAN } else { a };
            x[[i, 1]] = if rng.gen_bool(0.1) { f64::NAN } else { c };
            x[[i, 2]] = rng.gen_range(0.0..1.0);
            x[[i, 3]] = (i % 7) as f64;
            y.push(u32::from(a + c / 3.0 + rng.gen_range(-1.0..1.0) > 1.0));
        }
        let levels = (0..6).map(|k| format!("k{k}")).collect();
        let meta = vec![
            FeatureMeta::numeric("a"),
            FeatureMeta::categorical("c", levels),
            FeatureMeta::numeric("u"),
            FeatureMeta::numeric("m"),
        ];
        let data = BinnedData::new(x.view(), &meta, 256).expect("valid data");
        let target = Target::classes(&y, 2).expect("valid classes");
        let tree = Grower::new(TreeSettings::default())
            .grow(&data, &target, &vec![1.0; n], &mut rng)
            .expect("grows");
        assert!(tree.nodes().iter().any(Node::is_categorical));
        let flat: Vec<f64> = x.iter().copied().collect();
        let truth: Vec<u32> = (0..n)
            .map(|i| tree.leaf_index(&flat[i * 4..(i + 1) * 4]) as u32)
            .collect();
        let compact = tree.compact();
        // The same inputs, all numeric: the walk without category splits.
        let numeric = vec![
            FeatureMeta::numeric("a"),
            FeatureMeta::numeric("c"),
            FeatureMeta::numeric("u"),
            FeatureMeta::numeric("m"),
        ];
        let plain_data = BinnedData::new(x.view(), &numeric, 256).expect("valid data");
        let plain = Grower::new(TreeSettings::default())
            .grow(&plain_data, &target, &vec![1.0; n], &mut rng)
            .expect("grows");
        let mut got = vec![u32::MAX; n];
        plain.compact().leaf_indices(&flat, 4, &mut got);
        let want: Vec<u32> = (0..n)
            .map(|i| plain.leaf_index(&flat[i * 4..(i + 1) * 4]) as u32)
            .collect();
        assert_eq!(got, want);
        for m in [0, 5, 16, 17, 300, n] {
            let mut got = vec![u32::MAX; m];
            tree.leaf_indices(&flat, 4, &mut got);
            assert_eq!(got, truth[..m]);
            got.fill(u32::MAX);
            compact.leaf_indices(&flat, 4, &mut got);
            assert_eq!(got, truth[..m]);
        }
        let picks: Vec<u32> = (0..n as u32).filter(|i| i % 3 != 1).rev().collect();
        let mut got = vec![u32::MAX; picks.len()];
        tree.leaf_indices_of(&flat, 4, &picks, &mut got);
        let want: Vec<u32> = picks.iter().map(|&i| truth[i as usize]).collect();
        assert_eq!(got, want);
        got.fill(u32::MAX);
        compact.leaf_indices_of(&flat, 4, &picks, &mut got);
        assert_eq!(got, want);
        // Starting from a node on the row's own path (here its first child) changes
        // nothing.
        let root = tree.nodes()[0];
        let starts: Vec<u32> = picks
            .iter()
            .map(|&i| {
                let row = &flat[i as usize * 4..(i as usize + 1) * 4];
                let v = row[root.feature().expect("the root splits")];
                (root.child() + usize::from(!tree.goes_left(&root, v))) as u32
            })
            .collect();
        let mut got = vec![u32::MAX; picks.len()];
        tree.leaf_indices_from(&flat, 4, &picks, &starts, &mut got);
        assert_eq!(got, want);
        got.fill(u32::MAX);
        compact.leaf_indices_from(&flat, 4, &picks, &starts, &mut got);
        assert_eq!(got, want);
    }

    #[test]
    fn a_node_record_gives_back_the_node_exactly() {
        // Leaves and internal nodes with values at the edges of every field: the
        // record's swaps and shift must undo to the same bits.
        let weights = [1.0f32, 3.0, 0.37, f32::from_bits(1), f32::MAX];
        let values = [0.0, 1.0, 0.5, 1.0 / 3.0, -2.5e300, 0.0, f64::MIN_POSITIVE];
        let mut nodes = Vec::new();
        for (k, &w) in weights.iter().enumerate() {
            for &v in &values {
                nodes.push(Node {
                    split: v.to_bits(),
                    child: weight_bits(f64::from(w)),
                    feature: LEAF,
                    flags: 0,
                });
                nodes.push(Node {
                    split: v.to_bits() ^ k as u64,
                    child: [0, 1, 250, 65_536, u32::MAX][k],
                    feature: [0, 1, 249, 250, LEAF - 1][k],
                    flags: [0, MISSING_LEFT, CATEGORICAL, MISSING_LEFT | CATEGORICAL, 0][k],
                });
            }
        }
        nodes.push(Node {
            split: (7u64 << 32) | 300,
            child: 12,
            feature: 3,
            flags: CATEGORICAL,
        });
        for n in nodes {
            let r = NodeRecord::from(n);
            assert_eq!(Node::from(r), n, "{r:?}");
            // Small fields stay small: a leaf's input mark and any child index below
            // 2^24 are written unswapped or as smaller numbers.
            assert!(r.child <= n.child && r.split <= n.split);
            if n.is_leaf() {
                assert_eq!(r.feature, 0);
            }
        }
        // A whole-number leaf weight's bits, swapped, are a number below 2^16.
        let r = NodeRecord::from(Node {
            split: 0.5f64.to_bits(),
            child: weight_bits(3.0),
            feature: LEAF,
            flags: 0,
        });
        assert!(r.child < 1 << 16 && r.split < 1 << 16, "{r:?}");
    }

    #[test]
    fn argmax_ties_go_to_the_lowest_index() {
        assert_eq!(argmax(&[0.25, 0.5, 0.25]), 1);
        assert_eq!(argmax(&[0.5, 0.5]), 0);
        assert_eq!(argmax(&[0.0, 0.5, 0.5]), 1);
    }
}
