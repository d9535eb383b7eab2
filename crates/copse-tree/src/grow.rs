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
//! - Determinism: the only randomness is the supplied generator, so the same data,
//!   settings and generator state give the same tree bit for bit.
use crate::data::{BinCode, BinCodes, BinnedData, FeatureBins, MISSING_BIN};
use crate::error::{Error, ErrorKind, Result};
use crate::impurity::{variance_score, Impurity};
use crate::settings::TreeSettings;
use crate::target::Target;
use crate::tree::{Node, Tree, CATEGORICAL, LEAF, MISSING_LEFT};
use rand::Rng;

/// Grows trees; holds scratch buffers so a thread can grow many trees without
/// allocating per node.
#[derive(Debug, Clone)]
pub struct Grower {
    settings: TreeSettings,
    rows: Vec<u32>,
    hist: Vec<f64>,
    totals: Vec<f64>,
    acc: Vec<f64>,
    lbuf: Vec<f64>,
    rbuf: Vec<f64>,
    order: Vec<(f64, u32)>,
    pool: Vec<u16>,
    best_side: Vec<u8>,
    stack: Vec<Frame>,
}

#[derive(Debug, Clone, Copy)]
struct Frame {
    start: usize,
    end: usize,
    depth: usize,
    node: usize,
}

/// Side of a category in the best split found so far.
const ABSENT: u8 = 0;
const LEFT: u8 = 1;
const RIGHT: u8 = 2;

#[derive(Debug, Clone, Copy)]
enum Cut {
    /// Value bins `<= a` go left; `b` is the next bin present in the node.
    Threshold { a: usize, b: usize },
    /// Sides recorded in `best_side`.
    Subset,
}

#[derive(Debug, Clone, Copy)]
struct Best {
    gain: f64,
    feature: usize,
    cut: Cut,
    missing_left: bool,
    has_missing: bool,
    w_left: f64,
    w_right: f64,
}

/// What the split search needs to know about the outcome.
#[derive(Clone, Copy)]
enum Task<'a> {
    Classes(&'a [u32], usize, Impurity),
    /// Outcome values and the offset subtracted from them in the current node (the
    /// node's weighted mean). The sum of squared deviations does not depend on the
    /// offset, but the score `s^2 / w` does lose precision when the values sit far from
    /// zero relative to their spread (at an offset of 1e9 and a spread of 1, the terms
    /// are about 1e18 per case and their difference is rounding noise). Centring each
    /// node on its own mean keeps `s` near zero and the score difference exact enough.
    Values(&'a [f64], f64),
}

impl Task<'_> {
    fn stride(&self) -> usize {
        match self {
            Task::Classes(_, c, _) => *c,
            Task::Values(..) => 2,
        }
    }

    /// Adds row `r` with weight `w` to the stats slot `slot` (of length `stride`).
    #[inline(always)]
    fn add(&self, slot: &mut [f64], r: usize, w: f64) {
        match self {
            Task::Classes(y, _, _) => slot[y[r] as usize] += w,
            Task::Values(y, c) => {
                slot[0] += w;
                slot[1] += w * (y[r] - c);
            }
        }
    }

    #[inline(always)]
    fn weight(&self, s: &[f64]) -> f64 {
        match self {
            Task::Classes(..) => s.iter().sum(),
            Task::Values(..) => s[0],
        }
    }

    /// `-w * impurity` up to terms that cancel in a decrease.
    #[inline(always)]
    fn score(&self, s: &[f64]) -> f64 {
        match self {
            Task::Classes(_, _, imp) => imp.score(s, s.iter().sum()),
            Task::Values(..) => variance_score(s[0], s[1]),
        }
    }
}

impl Grower {
    /// A grower with the given settings.
    pub fn new(settings: TreeSettings) -> Self {
        Grower {
            settings,
            rows: Vec::new(),
            hist: Vec::new(),
            totals: Vec::new(),
            acc: Vec::new(),
            lbuf: Vec::new(),
            rbuf: Vec::new(),
            order: Vec::new(),
            pool: Vec::new(),
            best_side: Vec::new(),
            stack: Vec::new(),
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
    /// # Errors
    /// `LengthMismatch` when lengths differ; `NoTargets` when every outcome is missing;
    /// `SingleRow` when fewer than two rows have an outcome; `EmptyData` when no row
    /// has positive weight; `InvalidSetting` for bad settings or a negative, infinite
    /// or NaN weight.
    pub fn grow<R: Rng + ?Sized>(
        &mut self,
        data: &BinnedData,
        target: &Target<'_>,
        weights: &[f64],
        rng: &mut R,
    ) -> Result<Tree> {
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
        let task = match *target {
            Target::Classes { codes, n_classes } => {
                Task::Classes(codes, n_classes, self.settings.impurity)
            }
            Target::Values(v) => Task::Values(v, 0.0),
        };
        match data.codes() {
            BinCodes::Narrow(c) => {
                Ok(self.grow_with(c, data, task, target.n_outputs(), weights, rng))
            }
            BinCodes::Wide(c) => {
                Ok(self.grow_with(c, data, task, target.n_outputs(), weights, rng))
            }
        }
    }

    fn grow_with<B: BinCode, R: Rng + ?Sized>(
        &mut self,
        codes: &[B],
        data: &BinnedData,
        task: Task<'_>,
        n_outputs: usize,
        weights: &[f64],
        rng: &mut R,
    ) -> Tree {
        let stride = task.stride();
        let max_bins = data.max_bins();
        self.hist.resize(max_bins * stride, 0.0);
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
        let mut tree = Tree {
            nodes: vec![leaf_placeholder()],
            n_outputs,
            leaf_values: Vec::new(),
            leaf_weights: Vec::new(),
            cat_sets: Vec::new(),
            decrease: vec![0.0; data.n_features()],
        };
        self.stack.clear();
        self.stack.push(Frame {
            start: 0,
            end: self.rows.len(),
            depth: 0,
            node: 0,
        });
        let n = data.n_rows();
        while let Some(frame) = self.stack.pop() {
            // Regression: the node's weighted mean and sum of squared deviations, by
            // running updates (D. H. D. West (1979), "Updating mean and variance
            // estimates: an improved method", CACM 22(9):532-535), which neither
            // overflow nor cancel the way raw sums of large values do; and its range.
            let (mut lo, mut hi, mut sse) = (f64::INFINITY, f64::NEG_INFINITY, 0.0);
            let task = match task {
                Task::Values(y, _) => {
                    let (mut w, mut mean) = (0.0, 0.0);
                    for &r in &self.rows[frame.start..frame.end] {
                        let (v, wr) = (y[r as usize], weights[r as usize]);
                        w += wr;
                        let d = v - mean;
                        mean += wr / w * d;
                        sse += wr * d * (v - mean);
                        lo = lo.min(v);
                        hi = hi.max(v);
                    }
                    Task::Values(y, mean)
                }
                t => t,
            };
            // Node totals, and whether the node is pure.
            self.totals.iter_mut().for_each(|t| *t = 0.0);
            for &r in &self.rows[frame.start..frame.end] {
                let r = r as usize;
                task.add(&mut self.totals, r, weights[r]);
            }
            let w_t = task.weight(&self.totals);
            let pure = match task {
                Task::Classes(..) => self.totals.iter().filter(|&&c| c > 0.0).count() <= 1,
                Task::Values(..) => lo == hi,
            };
            let s = &self.settings;
            let may_split = !pure
                && w_t >= s.min_split
                && w_t >= 2.0 * s.min_leaf
                && s.max_depth.is_none_or(|d| frame.depth < d);
            let best = if may_split {
                self.find_split(codes, n, data.bins(), task, weights, frame, rng)
            } else {
                None
            };
            // A decrease below rounding noise is no decrease. The scores being
            // differenced are of the order of the node weight (classification) or of
            // the node's sum of squares (regression, with values centred on the node
            // mean), so the noise is relative to that, whatever the outcome's units.
            let tol = match task {
                Task::Classes(..) => 1e-12 * (task.score(&self.totals).abs() + w_t),
                Task::Values(..) => 1e-12 * sse,
            };
            match best {
                Some(b) if b.gain > tol && b.gain / w_t >= self.settings.min_decrease => {
                    self.split_node(&mut tree, codes, n, data.bins(), frame, b);
                }
                _ => {
                    let leaf = tree.leaf_weights.len();
                    tree.leaf_weights.push(w_t);
                    match task {
                        Task::Classes(..) => {
                            tree.leaf_values.extend(self.totals.iter().map(|c| c / w_t))
                        }
                        Task::Values(_, c) => tree.leaf_values.push(c + self.totals[1] / w_t),
                    }
                    tree.nodes[frame.node] = Node {
                        split: 0,
                        child: leaf as u32,
                        feature: LEAF,
                        flags: 0,
                    };
                }
            }
        }
        tree
    }

    #[allow(clippy::too_many_arguments)]
    fn find_split<B: BinCode, R: Rng + ?Sized>(
        &mut self,
        codes: &[B],
        n: usize,
        bins: &[FeatureBins],
        task: Task<'_>,
        weights: &[f64],
        frame: Frame,
        rng: &mut R,
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
                self.eval_feature(codes, n, &bins[f], f, task, weights, frame, &mut best);
            }
        } else {
            let (mut i, mut tried) = (0, 0);
            while i < self.pool.len() && tried < k {
                let j = rng.gen_range(i..self.pool.len());
                self.pool.swap(i, j);
                let f = self.pool[i] as usize;
                i += 1;
                if self.eval_feature(codes, n, &bins[f], f, task, weights, frame, &mut best) {
                    tried += 1;
                }
            }
        }
        best
    }

    /// Evaluates every split of input `f` in the node; returns false when the input is
    /// constant there (fewer than two distinct non-missing values).
    #[allow(clippy::too_many_arguments)]
    fn eval_feature<B: BinCode>(
        &mut self,
        codes: &[B],
        n: usize,
        fb: &FeatureBins,
        f: usize,
        task: Task<'_>,
        weights: &[f64],
        frame: Frame,
        best: &mut Option<Best>,
    ) -> bool {
        let stride = task.stride();
        let nb = fb.n_bins;
        let hist = &mut self.hist[..(nb + 1) * stride];
        hist.iter_mut().for_each(|h| *h = 0.0);
        let col = &codes[f * n..(f + 1) * n];
        for &r in &self.rows[frame.start..frame.end] {
            let r = r as usize;
            let b = col[r].idx();
            task.add(&mut hist[b * stride..(b + 1) * stride], r, weights[r]);
        }
        self.order.clear();
        for b in 1..=nb {
            let w = task.weight(&hist[b * stride..(b + 1) * stride]);
            if w > 0.0 {
                self.order.push((0.0, b as u32));
            }
        }
        if self.order.len() < 2 {
            return false;
        }
        if !fb.categorical {
            self.scan(fb, f, task, best, false);
            return true;
        }
        // Category orderings: by mean outcome, or one per class by that class's share.
        let keys: usize = match task {
            Task::Classes(_, 2, _) => 1,
            Task::Classes(_, c, _) => c,
            Task::Values(..) => 1,
        };
        for key in 0..keys {
            for o in self.order.iter_mut() {
                let b = o.1 as usize;
                let s = &self.hist[b * stride..(b + 1) * stride];
                o.0 = match task {
                    Task::Classes(_, 2, _) => s[1] / (s[0] + s[1]),
                    Task::Classes(..) => s[key] / s.iter().sum::<f64>(),
                    Task::Values(..) => s[1] / s[0],
                };
            }
            self.order
                .sort_by(|a, b| a.0.total_cmp(&b.0).then(a.1.cmp(&b.1)));
            self.scan(fb, f, task, best, true);
        }
        true
    }

    /// Scans the bins in `self.order`, trying a cut after each position.
    fn scan(
        &mut self,
        fb: &FeatureBins,
        f: usize,
        task: Task<'_>,
        best: &mut Option<Best>,
        subset: bool,
    ) {
        let stride = task.stride();
        let miss = &self.hist[MISSING_BIN * stride..(MISSING_BIN + 1) * stride];
        let w_miss = task.weight(miss);
        let score_t = task.score(&self.totals);
        let min_leaf = self.settings.min_leaf;
        self.acc.iter_mut().for_each(|a| *a = 0.0);
        let m = self.order.len();
        for pos in 0..m - 1 {
            let b = self.order[pos].1 as usize;
            for (a, h) in self
                .acc
                .iter_mut()
                .zip(&self.hist[b * stride..(b + 1) * stride])
            {
                *a += h;
            }
            let sides: &[bool] = if w_miss > 0.0 {
                &[false, true]
            } else {
                &[false]
            };
            for &missing_left in sides {
                for (s, m) in miss.iter().enumerate() {
                    let l = self.acc[s] + if missing_left { *m } else { 0.0 };
                    self.lbuf[s] = l;
                    self.rbuf[s] = self.totals[s] - l;
                }
                let (wl, wr) = (task.weight(&self.lbuf), task.weight(&self.rbuf));
                if wl < min_leaf || wr < min_leaf {
                    continue;
                }
                let gain = task.score(&self.lbuf) + task.score(&self.rbuf) - score_t;
                let better = match best {
                    None => true,
                    Some(cur) => gain > cur.gain || (gain == cur.gain && f < cur.feature),
                };
                if !better {
                    continue;
                }
                let cut = if subset {
                    self.best_side[..=fb.n_bins]
                        .iter_mut()
                        .for_each(|s| *s = ABSENT);
                    for (i, o) in self.order.iter().enumerate() {
                        self.best_side[o.1 as usize] = if i <= pos { LEFT } else { RIGHT };
                    }
                    Cut::Subset
                } else {
                    Cut::Threshold {
                        a: b,
                        b: self.order[pos + 1].1 as usize,
                    }
                };
                *best = Some(Best {
                    gain,
                    feature: f,
                    cut,
                    missing_left,
                    has_missing: w_miss > 0.0,
                    w_left: wl,
                    w_right: wr,
                });
            }
        }
    }

    /// Turns `frame.node` into an internal node for `b`, partitions its rows and
    /// pushes the two children.
    fn split_node<B: BinCode>(
        &mut self,
        tree: &mut Tree,
        codes: &[B],
        n: usize,
        bins: &[FeatureBins],
        frame: Frame,
        b: Best,
    ) {
        let fb = &bins[b.feature];
        let missing_left = if b.has_missing {
            b.missing_left
        } else {
            b.w_left >= b.w_right
        };
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
        let col = &codes[b.feature * n..(b.feature + 1) * n];
        let goes_left = |r: u32| -> bool {
            let bin = col[r as usize].idx();
            if bin == MISSING_BIN {
                return missing_left;
            }
            match b.cut {
                Cut::Threshold { a, .. } => bin <= a,
                Cut::Subset => self.best_side[bin] == LEFT,
            }
        };
        let (mut i, mut j) = (frame.start, frame.end);
        while i < j {
            if goes_left(self.rows[i]) {
                i += 1;
            } else {
                j -= 1;
                self.rows.swap(i, j);
            }
        }
        let child = tree.nodes.len();
        tree.nodes.push(leaf_placeholder());
        tree.nodes.push(leaf_placeholder());
        tree.nodes[frame.node] = Node {
            split,
            child: child as u32,
            feature: b.feature as u16,
            flags,
        };
        tree.decrease[b.feature] += b.gain;
        let depth = frame.depth + 1;
        self.stack.push(Frame {
            start: i,
            end: frame.end,
            depth,
            node: child + 1,
        });
        self.stack.push(Frame {
            start: frame.start,
            end: i,
            depth,
            node: child,
        });
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
