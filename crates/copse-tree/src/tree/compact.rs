//! The tree laid out for scoring blocks of many rows: a leaf leads back to itself, so
//! the lane loop of block descent needs no test to keep a finished row in place.
use super::descent::{descend_lanes, numeric_left, Walk};
use super::{Tree, CATEGORICAL, LEAF, MISSING_LEFT};

impl Tree {
    /// The tree laid out for scoring many rows: [`CompactTree::leaf_indices`] gives
    /// the same leaves as [`Tree::leaf_indices`], faster, once the layout (one pass
    /// over the nodes) is paid for; worth it when far more rows than nodes are scored.
    // The forest engine's descent kernel; not part of the stable API.
    #[doc(hidden)]
    pub fn compact(&self) -> CompactTree<'_> {
        // A category split over at most 64 categories keeps its left set in its step, as
        // a 64-bit mask, so that the walk tests it with no branch and no look into the
        // tree; codes from the set's size up to 63 take the missing direction there, as
        // the tree sends every code it never saw in training.
        let small = |n: &super::Node| {
            n.flags & CATEGORICAL == 0 || (n.split & 0xffff_ffff) <= CATEGORY_MASK_BITS
        };
        let mixed = self.nodes.iter().any(|n| n.flags & CATEGORICAL != 0);
        let in_masks = mixed && self.nodes.iter().all(small);
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
                } else if in_masks && n.flags & CATEGORICAL != 0 {
                    Step {
                        threshold: f64::from_bits(self.category_mask(n)),
                        next: n.child,
                        feature: n.feature,
                        flags: n.flags,
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
        let walk = match (mixed, in_masks) {
            (false, _) => WalkKind::Numeric,
            (true, true) => WalkKind::Masks,
            (true, false) => WalkKind::Mixed,
        };
        CompactTree {
            tree: self,
            steps,
            walk,
        }
    }

    /// The left set of category split `n` (at most 64 categories) as a 64-bit mask:
    /// bit `c` for category code `c`, and above the set's size the missing direction.
    fn category_mask(&self, n: &super::Node) -> u64 {
        let (offset, count) = ((n.split >> 32) as usize, n.split & 0xffff_ffff);
        let set = if count == 0 { 0 } else { self.cat_sets[offset] };
        let known = if count >= 64 {
            u64::MAX
        } else {
            (1u64 << count) - 1
        };
        let unseen = if n.flags & MISSING_LEFT != 0 {
            !known
        } else {
            0
        };
        (set & known) | unseen
    }
}

/// Most categories a split may have for its left set to be kept in its step.
const CATEGORY_MASK_BITS: u64 = 64;

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
    /// How the steps are walked.
    walk: WalkKind,
}

/// How a [`CompactTree`]'s steps are walked.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum WalkKind {
    /// No category split: a threshold test at every step.
    Numeric,
    /// Category splits of at most 64 categories, their left sets in their steps: both
    /// tests at every step, one kept, with no branch on the kind of split.
    Masks,
    /// Some category split has more than 64 categories: category splits are looked up
    /// in the tree.
    Mixed,
}

/// A [`CompactTree`] walked as its [`WalkKind`] says (`KIND`: 0 numeric, 1 masks, 2
/// mixed): a tree without category splits is walked by a loop with no call in it.
struct Walker<'t, 'a, const KIND: u8>(&'t CompactTree<'a>);

impl<const KIND: u8> Walk for Walker<'_, '_, KIND> {
    #[inline(always)]
    fn next(&self, i: usize, rows: &[f64], base: usize) -> usize {
        let s = self.0.steps[i];
        let v = rows[base + s.feature as usize];
        let left = match KIND {
            0 => numeric_left(v, s.threshold, s.flags),
            1 => {
                // Both tests, then a choice without a branch: a category code is a whole
                // number from 0 to 63, anything else (NaN included) takes the missing
                // direction, which the mask also holds for codes above the set's size.
                let by_value = numeric_left(v, s.threshold, s.flags);
                let c = v as i64;
                let code = (c as f64 == v) & ((c as u64) < 64);
                let in_set = (s.threshold.to_bits() >> (c as u64 & 63)) & 1 == 1;
                let by_code = if code {
                    in_set
                } else {
                    s.flags & MISSING_LEFT != 0
                };
                if s.flags & CATEGORICAL != 0 {
                    by_code
                } else {
                    by_value
                }
            }
            _ if s.flags & CATEGORICAL == 0 => numeric_left(v, s.threshold, s.flags),
            _ => self.0.tree.goes_left(&self.0.tree.nodes[i], v),
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
        match self.walk {
            WalkKind::Numeric => descend_lanes(&Walker::<0>(self), rows, width, pick, leaves),
            WalkKind::Masks => descend_lanes(&Walker::<1>(self), rows, width, pick, leaves),
            WalkKind::Mixed => descend_lanes(&Walker::<2>(self), rows, width, pick, leaves),
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

#[cfg(test)]
mod tests {
    use crate::{BinnedData, FeatureMeta, Grower, OutcomeView, TreeSettings};
    use rand::{RngExt, SeedableRng};

    /// A tree split on one category input of `levels` categories (and a numeric
    /// input), the class depending on both.
    fn tree_with_categories(levels: usize, seed: u64) -> crate::Tree {
        let mut rng = rand_xoshiro::Xoshiro256PlusPlus::seed_from_u64(seed);
        let n = 1500;
        let mut x = ndarray::Array2::<f64>::zeros((n, 2));
        let mut y = Vec::with_capacity(n);
        for i in 0..n {
            let c = rng.random_range(0..levels);
            let a: f64 = rng.random_range(-1.0..1.0);
            x[[i, 0]] = if rng.random_bool(0.05) {
                f64::NAN
            } else {
                c as f64
            };
            x[[i, 1]] = if rng.random_bool(0.05) { f64::NAN } else { a };
            y.push(u32::from((c * 7 % 5) as f64 / 4.0 + a > 0.6));
        }
        let names = (0..levels).map(|k| format!("k{k}")).collect();
        let meta = vec![
            FeatureMeta::categorical("c", names),
            FeatureMeta::numeric("a"),
        ];
        let data = BinnedData::new(x.view(), &meta, 256).expect("valid data");
        let target = OutcomeView::classes(&y, 2).expect("valid classes");
        Grower::new(TreeSettings::default())
            .grow(&data, &target, &vec![1.0; n], 2)
            .expect("grows")
    }

    /// The category test kept in a step (at most 64 categories) and the one that looks
    /// into the tree (more) send every value where the tree's own test does, the
    /// definition: codes, codes the tree never saw, and values that are no code at all.
    #[test]
    fn category_steps_agree_with_the_tree_for_every_kind_of_value() {
        for (levels, seed) in [(6, 1), (40, 2), (64, 3), (70, 4)] {
            let tree = tree_with_categories(levels, seed);
            assert!(
                tree.nodes().iter().any(crate::Node::is_categorical),
                "{levels} levels"
            );
            let odd = [
                -1.0,
                -0.0,
                0.5,
                levels as f64,
                levels as f64 - 0.5,
                63.0,
                64.0,
                65.0,
                1e300,
                f64::INFINITY,
                f64::NEG_INFINITY,
                f64::NAN,
            ];
            let codes: Vec<f64> = (0..levels).map(|c| c as f64).chain(odd).collect();
            let mut flat = Vec::new();
            for &c in &codes {
                for a in [-0.9, -0.2, 0.1, 0.5, 0.95, f64::NAN] {
                    flat.extend_from_slice(&[c, a]);
                }
            }
            let m = flat.len() / 2;
            let want: Vec<u32> = (0..m)
                .map(|i| tree.leaf_index(&flat[2 * i..2 * i + 2]) as u32)
                .collect();
            let mut got = vec![u32::MAX; m];
            tree.compact().leaf_indices(&flat, 2, &mut got);
            assert_eq!(got, want, "{levels} levels");
        }
    }
}
