//! Descent: the leaf a row reaches, one row at a time or by blocks of rows descending
//! side by side.
use super::{Node, Tree, CATEGORICAL, LEAF, MISSING_LEFT};

impl Tree {
    /// Whether node `n` sends a row whose input value is `v` to the left.
    // The forest engine's descent kernel; not part of the stable API.
    #[doc(hidden)]
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
    // The forest engine's descent kernel; not part of the stable API.
    #[doc(hidden)]
    #[inline]
    pub fn leaf_index_with(&self, value: impl Fn(usize) -> f64) -> usize {
        self.leaf_from(0, value)
    }

    /// Leaf (its node index) reached from node `start` by a row whose input `j` has
    /// value `value(j)`: the rest of a descent known to pass through `start`.
    ///
    /// # Panics
    /// When `start` is not a node of the tree.
    // The forest engine's descent kernel; not part of the stable API.
    #[doc(hidden)]
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
    // The forest engine's descent kernel; not part of the stable API.
    #[doc(hidden)]
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
    // The forest engine's descent kernel; not part of the stable API.
    #[doc(hidden)]
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
    // The forest engine's descent kernel; not part of the stable API.
    #[doc(hidden)]
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

    pub(super) fn check_block(&self, rows: &[f64], width: usize, m: usize) {
        assert!(
            width >= self.n_features() && rows.len() >= m * width,
            "a block needs {m} rows of at least {} values",
            self.n_features()
        );
    }

    /// Checks a block of `rows` for the rows numbered `picks`, each starting at node
    /// `starts[k]` when starts are given; returns the number of picks.
    pub(super) fn check_picks(
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
}

/// One level of descent, as the lane loop of [`descend_lanes`] needs it.
pub(super) trait Walk {
    /// The node after `i` for the row whose values start at `rows[base]`; a leaf
    /// gives itself.
    fn next(&self, i: usize, rows: &[f64], base: usize) -> usize;
    /// `i` if node `i` is a leaf.
    fn leaf(&self, i: usize) -> Option<u32>;
    /// Whether node `i` is a leaf (whose leaf id is `i` itself).
    #[inline(always)]
    fn is_leaf(&self, i: usize) -> bool {
        self.leaf(i).is_some()
    }
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
pub(super) fn numeric_left(v: f64, threshold: f64, flags: u16) -> bool {
    (v <= threshold) | (v.is_nan() & (flags & MISSING_LEFT != 0))
}

/// Leaves reached by a block of rows: `leaves[k]` gets the leaf reached from node
/// `pick(k).1` by row `pick(k).0` of `rows` (row-major, `width` values a row).
/// Several rows descend side by side, a few levels at a time with no branch on where
/// a row is; then rows at their leaves are recorded and their lanes take new rows. A
/// descent row by row stalls at the end of every row (the last comparison decides
/// whether to go on, and cannot be foreseen); here the descents overlap instead.
///
/// While rows remain for every lane, a lane's row is recorded and replaced without a
/// branch either: every lane writes the node it stands at into its row's place (a leaf
/// is known by its node index, so the last write is the leaf), and a lane at a leaf
/// takes the next row by conditional moves. Whether a lane has arrived cannot be
/// foreseen, so a branch on it would be mispredicted about as often as rows end.
#[inline]
pub(super) fn descend_lanes<W: Walk>(
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
    let mut next = LANES;
    // Branch-free refills while every lane is sure to find a row.
    while next + LANES <= m {
        for _ in 0..STEPS {
            for l in 0..LANES {
                at[l] = walk.next(at[l], rows, base[l]);
            }
        }
        for l in 0..LANES {
            leaves[slot[l]] = at[l] as u32;
            let done = walk.is_leaf(at[l]);
            let (r, start) = pick(next);
            slot[l] = if done { next } else { slot[l] };
            base[l] = if done { r * width } else { base[l] };
            at[l] = if done { start } else { at[l] };
            next += usize::from(done);
        }
    }
    // The last rows: lanes that finish go idle.
    let mut alive = LANES;
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

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn block_descent_matches_row_by_row() {
        use crate::{BinnedData, FeatureMeta, Grower, OutcomeView, TreeSettings};
        use rand::{RngExt, SeedableRng};
        // A tree with numeric and categorical splits and missing values; the block
        // descents must reach the same leaf as the row-by-row one (the definition).
        let mut rng = rand_xoshiro::Xoshiro256PlusPlus::seed_from_u64(4);
        let n = 700;
        let mut x = ndarray::Array2::<f64>::zeros((n, 4));
        let mut y = Vec::with_capacity(n);
        for i in 0..n {
            let a: f64 = rng.random_range(-2.0..2.0);
            let c = rng.random_range(0..6) as f64;
            x[[i, 0]] = if rng.random_bool(0.1) { f64::NAN } else { a };
            x[[i, 1]] = if rng.random_bool(0.1) { f64::NAN } else { c };
            x[[i, 2]] = rng.random_range(0.0..1.0);
            x[[i, 3]] = (i % 7) as f64;
            y.push(u32::from(a + c / 3.0 + rng.random_range(-1.0..1.0) > 1.0));
        }
        let levels = (0..6).map(|k| format!("k{k}")).collect();
        let meta = vec![
            FeatureMeta::numeric("a"),
            FeatureMeta::categorical("c", levels),
            FeatureMeta::numeric("u"),
            FeatureMeta::numeric("m"),
        ];
        let data = BinnedData::new(x.view(), &meta, 256).expect("valid data");
        let target = OutcomeView::classes(&y, 2).expect("valid classes");
        let tree = Grower::new(TreeSettings::default())
            .grow(&data, &target, &vec![1.0; n], 4)
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
            .grow(&plain_data, &target, &vec![1.0; n], 4)
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
}
