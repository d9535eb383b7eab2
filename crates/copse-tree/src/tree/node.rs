//! The 16-byte node of a tree and the compact record it is serialized as.
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
    /// probabilities in [`Tree`](super::Tree)'s `leaf_values`.
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
    /// A leaf's own number as [`Tree::leaf_value`](super::Tree::leaf_value) reads
    /// it: the mean in regression, class 1's probability with two classes, the one
    /// class's share with one. Meaningless for an internal node and with three or more
    /// classes (whose leaves hold an offset into the tree's table).
    // The forest engine's summation kernel; not part of the stable API.
    #[doc(hidden)]
    #[inline(always)]
    pub fn leaf_output(&self) -> f64 {
        f64::from_bits(self.split)
    }
    /// Number of categories a category split knows (codes from 0 up to it; any other
    /// value takes the missing direction); `None` for a numeric split or a leaf.
    pub fn category_count(&self) -> Option<usize> {
        self.is_categorical()
            .then_some((self.split & 0xffff_ffff) as usize)
    }
    /// Index of the left child (the right child follows it); meaningless for a leaf
    /// (whose `child` field holds its weight: see [`Tree::leaf_weight`](super::Tree::leaf_weight)).
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
/// [`Tree::check`](super::Tree::check) refuses).
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

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn an_internal_node_fits_in_16_bytes() {
        // Issue 2 asks for at most 16 bytes per node, so a deep tree stays cache-friendly.
        assert!(std::mem::size_of::<Node>() <= 16);
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
}
