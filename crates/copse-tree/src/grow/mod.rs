//! The grower: depth-first recursive partitioning with an explicit stack, one row-index
//! buffer partitioned in place, and scratch buffers reused across nodes and trees.
//!
//! Rules a caller can rely on:
//! - Best split = largest weighted impurity decrease. Exact ties go to the lowest input
//!   index, then the lowest threshold (or earliest position in the category ordering),
//!   then missing values sent right before left.
//! - Numeric split: `x <= t` left, `t` the midpoint between the highest value left and
//!   the lowest value right among the node's cases.
//! - Categorical split, two classes or regression: categories present in the node are
//!   ordered by the proportion of the second class (or the mean outcome) and the ordered
//!   list is scanned; this finds the best subset (Breiman et al. 1984, CART, section
//!   9.4; Fisher 1958). More than two classes: the same scan is run once per class,
//!   ordering by that class's proportion (one-against-rest orderings), and the best of
//!   all of them is kept; this is a heuristic, not an exhaustive subset search.
//!   Categories absent from the node, and categories unseen in training, follow the
//!   missing-value direction.
//! - Missing values: when the node has some, each candidate is tried with them sent left
//!   and right, and the better is kept. When it has none, they are sent to the heavier
//!   child (ties left).
//! - Inputs with fewer than two distinct values (numeric) or categories present
//!   (categorical) in the whole data are never drawn. With K inputs per split, inputs
//!   are drawn one at a time without replacement; a drawn input that is constant in the
//!   node does not count towards K, and drawing goes on until K non-constant inputs
//!   have been tried or none remain.
//! - Stopping: a node becomes a leaf when it is pure, lies at the depth limit, holds
//!   fewer cases than the split minimum (or than two leaves' minimum), or when its best
//!   split does not decrease impurity by more than rounding noise, or by less than the
//!   minimum decrease setting. The last rule means a node whose every split leaves the
//!   class shares unchanged (for example four cases at the corners of a square labelled
//!   by XOR) stays an impure leaf even though its cases differ.
//! - Randomized cut points ([`crate::CutChoice::Random`]): on each input tried, one
//!   cut is drawn (a value uniform between the centres of the node's lowest and
//!   highest occupied bins, or a random non-trivial subset of the categories present)
//!   and scored alone, missing values tried on both sides as above; the best drawn cut
//!   over the inputs tried is kept, and it is kept even when it decreases impurity by
//!   nothing (only the minimum decrease setting can refuse it), so trees grow until
//!   their leaves are pure or too small, as in Geurts, Ernst & Wehenkel (2006).
//! - Determinism: the only randomness is a generator seeded from the caller's seed, so
//!   the same data, settings and seed give the same tree bit for bit.
//!
//! How the work is organised (the results do not depend on it):
//! - Two classes with whole-number case weights (bootstrap counts, the common case) use
//!   exact integer counts: one 64-bit cell per bin holds the case weight in its high
//!   half and the second class's weight in its low half, so each row is one add, and
//!   the scores equal those of the general path bit for bit. Each of the tree's rows
//!   is one record (its cell, then its bin codes packed into words); a node's records
//!   are contiguous, and a split copies them into the other of two buffers, left side
//!   first, so every histogram pass reads memory in order.
//! - Everything else (regression, several classes, fractional weights) keeps row
//!   indices, partitioned in place, with each row's outcome and weight in arrays
//!   permuted alongside, and `f64` slots; only the bin is gathered.
//! - Histograms are kept zero between uses and only the bins a node touched are
//!   cleared; nodes with fewer rows than bins list the bins they touch instead of
//!   scanning them all.
mod candidate;
mod general;
mod partition;
mod random_cut;
mod scan;
mod two_class;

use crate::data::{BinCodes, BinnedData, FeatureBins};
use crate::error::{Error, ErrorKind, Result};
use crate::outcome::OutcomeView;
use crate::settings::{CutChoice, TreeSettings};
use crate::tree::{weight_bits, Node, Tree, CATEGORICAL, LEAF, MISSING_LEFT};
use candidate::{Best, Cut, Task, ABSENT, LEFT};
use rand::{RngExt, SeedableRng};
use rand_xoshiro::Xoshiro256PlusPlus;
use scan::ScanScratch;

/// Low half of a two-class cell: the case weight of the second class.
const LOW: u64 = 0xffff_ffff;

/// Whole-number counts below this have their `c log2 c` looked up (entropy).
const XLOGX_LIMIT: usize = 1 << 16;

/// A node lists the bins it touches (instead of scanning every bin of the input) when
/// its rows number fewer than the input's bins divided by this.
const SPARSE_RATIO: usize = 2;

/// Grows trees; holds scratch buffers so a thread can grow many trees without
/// allocating per node.
#[derive(Debug, Clone)]
pub struct Grower {
    settings: TreeSettings,
    /// Row indices of the tree's cases (ascending at the start). The general engine
    /// partitions them in place; every node owns one contiguous range.
    rows: Vec<u32>,
    /// Two-class engine: each row's cell, `w << 32 | w * class`, aligned with `rows`
    /// while the records are built.
    packed: Vec<u64>,
    /// Two-class engine: the two record buffers (cell word, then code words).
    blocks: [Vec<u64>; 2],
    /// General engine, aligned with `rows`: case weight.
    wgt: Vec<f64>,
    /// General engine with classes, aligned with `rows`: class code.
    lab: Vec<u32>,
    /// General engine with values, aligned with `rows`: outcome value.
    val: Vec<f64>,
    /// General engine with values: `w * (y - node mean)` of the current node's rows.
    wy: Vec<f64>,
    /// Two-class histogram, one cell per bin; all zero between uses.
    hist2: Vec<u64>,
    /// General histogram, `stride` slots per bin; all zero between uses.
    hist: Vec<f64>,
    /// General engine: bins touched by the current pass (sparse mode); zero between uses.
    mark: Vec<u8>,
    /// Occupied value bins of the current input: ascending, then in scan order.
    seq: Vec<u32>,
    /// One bit per bin, for listing a sparse node's bins in order; zero between uses.
    bitmap: Vec<u64>,
    totals: Vec<f64>,
    acc: Vec<f64>,
    lbuf: Vec<f64>,
    rbuf: Vec<f64>,
    order: Vec<(f64, u32)>,
    pool: Vec<u16>,
    best_side: Vec<u8>,
    stack: Vec<Frame>,
    /// The node array of the tree being grown, kept between trees: a tree takes an
    /// exact-size copy when it is done, so a forest holds no spare capacity and no
    /// trail of outgrown arrays.
    nodes: Vec<Node>,
    /// `c log2 c` of whole numbers `c` (0 for 0), for entropy with counts.
    xlogx: Vec<f64>,
    scan: ScanScratch,
}

#[derive(Debug, Clone, Copy)]
struct Frame {
    start: usize,
    end: usize,
    depth: usize,
    node: usize,
    /// Two-class engine: the record buffer holding the node, and its total cell.
    buf: usize,
    tot: u64,
}

impl Grower {
    /// A grower with the given settings. Reuse it for many trees: its buffers are
    /// kept between calls to [`Grower::grow`].
    ///
    /// # Example
    /// ```
    /// use copse_tree::{Grower, Impurity, TreeSettings};
    ///
    /// let grower = Grower::new(TreeSettings {
    ///     impurity: Impurity::Entropy,
    ///     max_depth: Some(3),
    ///     ..TreeSettings::default()
    /// });
    /// assert_eq!(grower.settings().max_depth, Some(3));
    /// ```
    pub fn new(settings: TreeSettings) -> Self {
        Grower {
            settings,
            rows: Vec::new(),
            packed: Vec::new(),
            blocks: [Vec::new(), Vec::new()],
            wgt: Vec::new(),
            lab: Vec::new(),
            val: Vec::new(),
            wy: Vec::new(),
            hist2: Vec::new(),
            hist: Vec::new(),
            mark: Vec::new(),
            seq: Vec::new(),
            bitmap: Vec::new(),
            totals: Vec::new(),
            acc: Vec::new(),
            lbuf: Vec::new(),
            rbuf: Vec::new(),
            order: Vec::new(),
            pool: Vec::new(),
            best_side: Vec::new(),
            stack: Vec::new(),
            nodes: Vec::new(),
            xlogx: Vec::new(),
            scan: ScanScratch::default(),
        }
    }

    /// The settings in use.
    pub fn settings(&self) -> &TreeSettings {
        &self.settings
    }

    /// Grows one tree on `data` with outcome `target` and per-row case weights
    /// (bootstrap counts, real weights, or 0 to leave a row out). Rows with a missing
    /// outcome are left out whatever their weight.
    ///
    /// `seed` drives the only random choices, the inputs drawn at each node when
    /// [`TreeSettings::features_per_split`] is set and the cut drawn on each with
    /// randomized cut points ([`TreeSettings::cuts`]): it seeds a Xoshiro256++ generator
    /// (expanded by SplitMix64), so the same data, settings and seed give the same
    /// tree bit for bit. With every input tried at every node and the best cut kept,
    /// the seed changes nothing.
    ///
    /// # Errors
    /// `LengthMismatch` when lengths differ; `NoTargets` when every outcome is missing;
    /// `SingleRow` when fewer than two rows have an outcome; `EmptyData` when no row
    /// has positive weight; `InvalidSetting` for bad settings or a negative, infinite
    /// or NaN weight.
    ///
    /// # Example
    /// ```
    /// use copse_tree::{BinnedData, FeatureMeta, Grower, OutcomeView, TreeSettings};
    /// use ndarray::array;
    ///
    /// // Two inputs; the class follows the second one.
    /// let x = array![[5.0, 0.1], [3.0, 0.2], [4.0, 0.9], [1.0, 0.8], [2.0, 0.7]];
    /// let meta = vec![FeatureMeta::numeric("a"), FeatureMeta::numeric("b")];
    /// let data = BinnedData::new(x.view(), &meta, 256)?;
    /// let classes = [0u32, 0, 1, 1, 1];
    /// let target = OutcomeView::classes(&classes, 2)?;
    /// let settings = TreeSettings { features_per_split: Some(1), ..TreeSettings::default() };
    /// let mut grower = Grower::new(settings);
    /// let tree = grower.grow(&data, &target, &[1.0; 5], 42)?;
    /// // The same seed grows the same tree.
    /// assert_eq!(tree, grower.grow(&data, &target, &[1.0; 5], 42)?);
    /// # Ok::<(), copse_tree::Error>(())
    /// ```
    pub fn grow(
        &mut self,
        data: &BinnedData,
        target: &OutcomeView<'_>,
        weights: &[f64],
        seed: u64,
    ) -> Result<Tree> {
        let rng = &mut Xoshiro256PlusPlus::seed_from_u64(seed);
        self.settings.validate()?;
        let n = data.n_rows();
        if target.len() != n || weights.len() != n {
            return Err(Error::new(
                ErrorKind::LengthMismatch,
                format!(
                    "{n} data rows but {} outcomes and {} weights; all three must match",
                    target.len(),
                    weights.len()
                ),
            ));
        }
        if let Some(i) = weights.iter().position(|w| !(w.is_finite() && *w >= 0.0)) {
            return Err(Error::new(
                ErrorKind::InvalidSetting,
                format!(
                    "row {i}: case weight {} is not a finite number >= 0",
                    weights[i]
                ),
            ));
        }
        let labelled = (0..n).filter(|&i| !target.is_missing(i)).count();
        if labelled == 0 {
            return Err(Error::new(
                ErrorKind::NoTargets,
                "every outcome value is missing; check the target column",
            ));
        }
        if labelled == 1 {
            return Err(Error::new(
                ErrorKind::SingleRow,
                "only one row has an outcome; a tree needs at least two",
            ));
        }
        self.rows.clear();
        self.rows.extend(
            (0..n)
                .filter(|&i| weights[i] > 0.0 && !target.is_missing(i))
                .map(|i| i as u32),
        );
        if self.rows.is_empty() {
            return Err(Error::new(
                ErrorKind::EmptyData,
                "no row with an outcome has a positive case weight",
            ));
        }
        let two = self.load_outcome(target, weights);
        let mut tree = if two {
            self.grow_two(data, rng)
        } else {
            let task = match *target {
                OutcomeView::Classes { n_classes, .. } => {
                    Task::Classes(n_classes, self.settings.impurity)
                }
                OutcomeView::Values(_) => Task::Values(0.0),
            };
            match data.codes() {
                BinCodes::Narrow(c) => self.grow_general(c, data, task, target.n_outputs(), rng),
                BinCodes::Wide(c) => self.grow_general(c, data, task, target.n_outputs(), rng),
            }
        };
        // The tree keeps an exact-size copy of its nodes; the grown array is kept for
        // the next tree.
        self.nodes = std::mem::take(&mut tree.nodes);
        tree.nodes = self.nodes.to_vec();
        tree.shrink_to_fit();
        Ok(tree)
    }

    /// Fills the per-row outcome arrays; returns true when the two-class integer
    /// engine applies (two classes, whole-number weights whose total fits in 32 bits,
    /// so every count is exact).
    fn load_outcome(&mut self, target: &OutcomeView<'_>, weights: &[f64]) -> bool {
        self.packed.clear();
        self.wgt.clear();
        self.lab.clear();
        self.val.clear();
        match *target {
            OutcomeView::Classes { codes, n_classes } => {
                let whole = n_classes == 2 && {
                    let mut total = 0.0;
                    self.rows.iter().all(|&r| {
                        let w = weights[r as usize];
                        total += w;
                        w.fract() == 0.0
                    }) && total <= LOW as f64
                };
                if whole {
                    self.packed.extend(self.rows.iter().map(|&r| {
                        let w = weights[r as usize] as u64;
                        (w << 32) | (w * u64::from(codes[r as usize]))
                    }));
                } else {
                    self.wgt
                        .extend(self.rows.iter().map(|&r| weights[r as usize]));
                    self.lab
                        .extend(self.rows.iter().map(|&r| codes[r as usize]));
                }
                whole
            }
            OutcomeView::Values(y) => {
                self.wgt
                    .extend(self.rows.iter().map(|&r| weights[r as usize]));
                self.val.extend(self.rows.iter().map(|&r| y[r as usize]));
                false
            }
        }
    }

    /// Buffers both engines use, sized for `data` and `stride` slots per bin; and a
    /// tree with one root leaf to be filled in.
    fn start_tree(&mut self, data: &BinnedData, stride: usize, n_outputs: usize) -> Tree {
        let max_bins = data.max_bins();
        self.seq.resize(max_bins + 1, 0);
        for v in [
            &mut self.totals,
            &mut self.acc,
            &mut self.lbuf,
            &mut self.rbuf,
        ] {
            v.resize(stride, 0.0);
        }
        self.best_side.resize(max_bins, ABSENT);
        self.pool.clear();
        self.pool.extend(
            (0..data.n_features())
                .filter(|&j| data.occupied_bins(j) >= 2)
                .map(|j| j as u16),
        );
        self.stack.clear();
        let mut nodes = std::mem::take(&mut self.nodes);
        nodes.clear();
        nodes.push(leaf_placeholder());
        Tree {
            nodes,
            n_outputs,
            leaf_values: Vec::new(),
            cat_sets: Vec::new(),
            decrease: vec![0.0; data.n_features()],
        }
    }

    /// Makes `frame.node` a leaf holding `self.totals` (weight `w_t`). One output (the
    /// mean, or the one class's share) or two (class 1's share; class 0's is `1 - p`
    /// when read) go into the node itself; three or more classes into the tree's
    /// table, at the offset the node keeps.
    fn make_leaf(&self, tree: &mut Tree, frame: Frame, task: Task, w_t: f64) {
        let split = match (task, tree.n_outputs) {
            (Task::Values(c), _) => (c + self.totals[1] / w_t).to_bits(),
            (Task::Classes(..), 1) => (self.totals[0] / w_t).to_bits(),
            (Task::Classes(..), 2) => (self.totals[1] / w_t).to_bits(),
            (Task::Classes(..), _) => {
                let at = tree.leaf_values.len();
                tree.leaf_values.extend(self.totals.iter().map(|c| c / w_t));
                at as u64
            }
        };
        tree.nodes[frame.node] = Node {
            split,
            child: weight_bits(w_t),
            feature: LEAF,
            flags: 0,
        };
    }

    /// Makes `frame.node` an internal node for `b` with children at the end of the
    /// node array, and pushes the children (left on top) with the given ranges.
    fn make_split(
        &mut self,
        tree: &mut Tree,
        fb: &FeatureBins,
        frame: Frame,
        b: &Best,
        (mid, buf, tot_left): (usize, usize, u64),
    ) {
        let missing_left = b.missing_left();
        let mut flags = if missing_left { MISSING_LEFT } else { 0 };
        let split = match b.cut {
            Cut::Threshold { a, b } => fb.threshold_between(a, b).to_bits(),
            Cut::Subset => {
                flags |= CATEGORICAL;
                let offset = tree.cat_sets.len();
                tree.cat_sets.resize(offset + fb.n_bins.div_ceil(64), 0);
                for c in 0..fb.n_bins {
                    let side = self.best_side[c + 1];
                    if side == LEFT || (side == ABSENT && missing_left) {
                        tree.cat_sets[offset + c / 64] |= 1 << (c % 64);
                    }
                }
                ((offset as u64) << 32) | fb.n_bins as u64
            }
        };
        let child = tree.nodes.len();
        tree.nodes.push(leaf_placeholder());
        tree.nodes.push(leaf_placeholder());
        tree.nodes[frame.node] = Node {
            split,
            child: child as u32,
            feature: b.feature as u16,
            flags,
        };
        // Randomized cuts may keep a split whose decrease is zero up to rounding; it
        // adds nothing (the best-cut search only keeps positive decreases).
        tree.decrease[b.feature] += b.gain.max(0.0);
        let depth = frame.depth + 1;
        self.stack.push(Frame {
            start: mid,
            end: frame.end,
            depth,
            node: child + 1,
            buf,
            tot: frame.tot - tot_left,
        });
        self.stack.push(Frame {
            start: frame.start,
            end: mid,
            depth,
            node: child,
            buf,
            tot: tot_left,
        });
    }

    /// The smallest decrease a kept split must exceed, given the rounding noise `tol`
    /// of the node's scores. The best-cut search keeps only real decreases; with
    /// randomized cuts a node is split whenever a drawn cut exists, even one that
    /// leaves the class shares unchanged (the paper stops only at too few cases, a
    /// constant outcome or inputs constant in the node).
    fn gain_floor(&self, tol: f64) -> f64 {
        match self.settings.cuts {
            CutChoice::Best => tol,
            CutChoice::Random => -tol,
        }
    }

    /// Whether a node of weight `w_t` at `depth` may be split at all.
    fn may_split(&self, pure: bool, w_t: f64, depth: usize) -> bool {
        let st = &self.settings;
        !pure
            && w_t >= st.min_split
            && w_t >= 2.0 * st.min_leaf
            && st.max_depth.is_none_or(|d| depth < d)
    }

    /// Draws the inputs to try at a node and evaluates them with `eval`, which
    /// returns false for an input constant in the node. With K inputs per split,
    /// inputs are drawn one at a time without replacement until K non-constant ones
    /// have been tried or none remain.
    fn search<R: RngExt + ?Sized>(
        &mut self,
        rng: &mut R,
        mut eval: impl FnMut(&mut Self, &mut R, usize, &mut Option<Best>) -> bool,
    ) -> Option<Best> {
        let mut best: Option<Best> = None;
        let k = self
            .settings
            .features_per_split
            .unwrap_or(usize::MAX)
            .min(self.pool.len());
        if k >= self.pool.len() {
            for i in 0..self.pool.len() {
                let f = self.pool[i] as usize;
                eval(self, rng, f, &mut best);
            }
        } else {
            let (mut i, mut tried) = (0, 0);
            while i < self.pool.len() && tried < k {
                let j = rng.random_range(i..self.pool.len());
                self.pool.swap(i, j);
                let f = self.pool[i] as usize;
                i += 1;
                if eval(self, rng, f, &mut best) {
                    tried += 1;
                }
            }
        }
        best
    }
}

/// Sorts a list of distinct bins below `nb + 1` ascending: through a bit set when
/// the input has few bins, by comparison otherwise.
fn ascending(list: &mut [u32], nb: usize, bitmap: &mut Vec<u64>) {
    if nb > 1024 {
        list.sort_unstable();
        return;
    }
    let words = nb / 64 + 1;
    if bitmap.len() < words {
        bitmap.resize(words, 0);
    }
    for &b in list.iter() {
        bitmap[b as usize / 64] |= 1 << (b % 64);
    }
    let mut k = 0;
    for (w, word) in bitmap[..words].iter_mut().enumerate() {
        let mut bits = *word;
        while bits != 0 {
            list[k] = (w * 64) as u32 + bits.trailing_zeros();
            k += 1;
            bits &= bits - 1;
        }
        *word = 0;
    }
}

fn leaf_placeholder() -> Node {
    Node {
        split: 0,
        child: 0,
        feature: LEAF,
        flags: 0,
    }
}
