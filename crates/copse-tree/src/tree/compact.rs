//! The tree laid out for scoring blocks of many rows: a leaf leads back to itself, so
//! the lane loop of block descent needs no test to keep a finished row in place.
use super::descent::{descend_lanes, numeric_left, Walk};
use super::{Tree, CATEGORICAL, LEAF};

impl Tree {
    /// The tree laid out for scoring many rows: [`CompactTree::leaf_indices`] gives
    /// the same leaves as [`Tree::leaf_indices`], faster, once the layout (one pass
    /// over the nodes) is paid for; worth it when far more rows than nodes are scored.
    // The forest engine's descent kernel; not part of the stable API.
    #[doc(hidden)]
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
}

/// Step flag: the node is a leaf (its step leads back to itself).
const STEP_LEAF: u16 = 4;

/// A node of a [`CompactTree`]: go to `next` when the value of input `feature` is at
/// most `threshold` (or missing with [`MISSING_LEFT`](super::MISSING_LEFT)), else to `next + 1`. A leaf
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
// Layout for the forest engine's descent kernels; not part of the stable API.
#[doc(hidden)]
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
