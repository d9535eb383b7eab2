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
use crate::data::{BinCode, BinCodes, BinnedData, FeatureBins, MISSING_BIN};
use crate::error::{Error, ErrorKind, Result};
use crate::impurity::{variance_score, Impurity};
use crate::settings::TreeSettings;
use crate::target::Target;
use crate::tree::{weight_bits, Node, Tree, CATEGORICAL, LEAF, MISSING_LEFT};
use rand::Rng;

/// Low half of a two-class cell: the case weight of the second class.
const LOW: u64 = 0xffff_ffff;

/// Whole-number counts below this have their `c log2 c` looked up (entropy).
const XLOGX_LIMIT: usize = 1 << 16;

/// A node lists the bins it touches (instead of scanning every bin of the input) when
/// its rows number fewer than the input's bins divided by this.
const SPARSE_RATIO: usize = 2;

/// Calls `$f::<R>(args)` with the record size `$rec` as a constant for the common
/// sizes (so the compiler can unroll record access), and `$f::<0>` (size read from
/// the data) otherwise.
macro_rules! with_record_size {
    ($rec:expr, $f:ident, $records:expr, $($arg:expr),*) => {
        match $rec {
            2 => $f::<2>($records, 2, $($arg),*),
            3 => $f::<3>($records, 3, $($arg),*),
            4 => $f::<4>($records, 4, $($arg),*),
            5 => $f::<5>($records, 5, $($arg),*),
            r => $f::<0>($records, r, $($arg),*),
        }
    };
}

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

impl Best {
    /// Whether a candidate of input `f` with `gain` replaces the best so far: a larger
    /// decrease, or an equal one on a lower input.
    #[inline(always)]
    fn beaten_by(best: &Option<Best>, gain: f64, f: usize) -> bool {
        match best {
            None => true,
            Some(cur) => gain > cur.gain || (gain == cur.gain && f < cur.feature),
        }
    }

    /// Where missing values go: as chosen when the node had some, else to the heavier
    /// side (ties left).
    fn missing_left(&self) -> bool {
        if self.has_missing {
            self.missing_left
        } else {
            self.w_left >= self.w_right
        }
    }
}

/// What the split search needs to know about the outcome.
#[derive(Debug, Clone, Copy)]
enum Task {
    /// Number of classes and the impurity measure.
    Classes(usize, Impurity),
    /// The offset subtracted from the outcome values in the current node (the node's
    /// weighted mean). The sum of squared deviations does not depend on the offset,
    /// but the score `s^2 / w` does lose precision when the values sit far from zero
    /// relative to their spread (at an offset of 1e9 and a spread of 1, the terms are
    /// about 1e18 per case and their difference is rounding noise). Centring each node
    /// on its own mean keeps `s` near zero and the score difference exact enough.
    Values(f64),
}

impl Task {
    fn stride(&self) -> usize {
        match self {
            Task::Classes(c, _) => *c,
            Task::Values(_) => 2,
        }
    }

    #[inline(always)]
    fn weight(&self, s: &[f64]) -> f64 {
        match self {
            Task::Classes(..) => s.iter().sum(),
            Task::Values(_) => s[0],
        }
    }

    /// `-w * impurity` up to terms that cancel in a decrease.
    #[inline(always)]
    fn score(&self, s: &[f64]) -> f64 {
        match self {
            Task::Classes(_, imp) => imp.score(s, s.iter().sum()),
            Task::Values(_) => variance_score(s[0], s[1]),
        }
    }
}

/// Where the two-class engine finds an input's code in a record.
#[derive(Debug, Clone, Copy)]
struct Layout {
    /// Words per record: the cell, then the code words.
    rec: usize,
    /// Codes per word and bits per code.
    per_word: usize,
    bits: usize,
}

impl Layout {
    /// Word index within a record, shift and mask of input `f`'s code.
    #[inline]
    fn field(&self, f: usize) -> (usize, u32, u64) {
        (
            1 + f / self.per_word,
            ((f % self.per_word) * self.bits) as u32,
            (1u64 << self.bits) - 1,
        )
    }
}

impl Grower {
    /// A grower with the given settings.
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
        let two = self.load_outcome(target, weights);
        if two {
            return Ok(self.grow_two(data, rng));
        }
        let task = match *target {
            Target::Classes { n_classes, .. } => Task::Classes(n_classes, self.settings.impurity),
            Target::Values(_) => Task::Values(0.0),
        };
        match data.codes() {
            BinCodes::Narrow(c) => Ok(self.grow_general(c, data, task, target.n_outputs(), rng)),
            BinCodes::Wide(c) => Ok(self.grow_general(c, data, task, target.n_outputs(), rng)),
        }
    }

    /// Fills the per-row outcome arrays; returns true when the two-class integer
    /// engine applies (two classes, whole-number weights whose total fits in 32 bits,
    /// so every count is exact).
    fn load_outcome(&mut self, target: &Target<'_>, weights: &[f64]) -> bool {
        self.packed.clear();
        self.wgt.clear();
        self.lab.clear();
        self.val.clear();
        match *target {
            Target::Classes { codes, n_classes } => {
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
            Target::Values(y) => {
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
        Tree {
            nodes: vec![leaf_placeholder()],
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
        tree.decrease[b.feature] += b.gain;
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
    fn search<R: Rng + ?Sized>(
        &mut self,
        rng: &mut R,
        mut eval: impl FnMut(&mut Self, usize, &mut Option<Best>) -> bool,
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
                eval(self, f, &mut best);
            }
        } else {
            let (mut i, mut tried) = (0, 0);
            while i < self.pool.len() && tried < k {
                let j = rng.gen_range(i..self.pool.len());
                self.pool.swap(i, j);
                let f = self.pool[i] as usize;
                i += 1;
                if eval(self, f, &mut best) {
                    tried += 1;
                }
            }
        }
        best
    }

    // ---------------------------------------------------------------------------
    // Two-class engine: integer cells, node-ordered records.

    fn grow_two<R: Rng + ?Sized>(&mut self, data: &BinnedData, rng: &mut R) -> Tree {
        let task = Task::Classes(2, self.settings.impurity);
        if self.settings.impurity == Impurity::Entropy {
            let total: u64 = self.packed.iter().map(|p| p >> 32).sum();
            let want = (total as usize + 1).min(XLOGX_LIMIT);
            for c in self.xlogx.len()..want {
                let x = c as f64;
                self.xlogx.push(if c == 0 { 0.0 } else { x * x.log2() });
            }
        }
        let words = data.row_words();
        let layout = Layout {
            rec: words.per_row + 1,
            per_word: 64 / words.bits,
            bits: words.bits,
        };
        let m = self.rows.len();
        let [first, second] = &mut self.blocks;
        first.clear();
        first.reserve(m * layout.rec);
        for (&r, &p) in self.rows.iter().zip(&self.packed) {
            let r = r as usize;
            first.push(p);
            first.extend_from_slice(&words.words[r * words.per_row..(r + 1) * words.per_row]);
        }
        second.clear();
        second.resize(m * layout.rec, 0);
        // Cleared in full once per tree, so a tree never depends on the last one.
        self.hist2.clear();
        self.hist2.resize(data.max_bins(), 0);
        let mut tree = self.start_tree(data, 2, 2);
        let tot: u64 = self.packed.iter().sum();
        self.stack.push(Frame {
            start: 0,
            end: m,
            depth: 0,
            node: 0,
            buf: 0,
            tot,
        });
        let bins = data.bins();
        while let Some(frame) = self.stack.pop() {
            let (w, p) = (frame.tot >> 32, frame.tot & LOW);
            self.totals[0] = (w - p) as f64;
            self.totals[1] = p as f64;
            let w_t = task.weight(&self.totals);
            let best = if self.may_split(p == 0 || p == w, w_t, frame.depth) {
                self.search(rng, |g, f, best| {
                    g.eval_two(&bins[f], f, layout, frame, best)
                })
            } else {
                None
            };
            // A decrease below rounding noise is no decrease: the scores being
            // differenced are of the order of the node weight.
            let tol = 1e-12 * (task.score(&self.totals).abs() + w_t);
            match best {
                Some(b) if b.gain > tol && b.gain / w_t >= self.settings.min_decrease => {
                    let moved = self.split_two(&bins[b.feature], layout, frame, &b);
                    self.make_split(&mut tree, &bins[b.feature], frame, &b, moved);
                }
                _ => self.make_leaf(&mut tree, frame, task, w_t),
            }
        }
        tree
    }

    /// Evaluates every split of input `f` in the node (two-class engine); returns
    /// false when the input is constant there (fewer than two distinct non-missing
    /// values).
    fn eval_two(
        &mut self,
        fb: &FeatureBins,
        f: usize,
        layout: Layout,
        frame: Frame,
        best: &mut Option<Best>,
    ) -> bool {
        let nb = fb.n_bins;
        let (s, e) = (frame.start, frame.end);
        let rec = layout.rec;
        let records = &self.blocks[frame.buf][s * rec..e * rec];
        let (word, shift, mask) = layout.field(f);
        let hist = &mut self.hist2[..=nb];
        let seq = &mut self.seq[..=nb + 1];
        let field = (word, shift, mask);
        let len = if (e - s) * SPARSE_RATIO < nb {
            // Few rows: list each value bin the first time a row lands in it.
            let len = with_record_size!(rec, fill_sparse, records, field, hist, seq);
            ascending(&mut seq[..len], nb, &mut self.bitmap);
            len
        } else {
            with_record_size!(rec, fill_dense, records, field, hist, seq);
            let mut len = 0;
            for (b, &h) in hist.iter().enumerate().skip(1) {
                seq[len] = b as u32;
                len += usize::from(h != 0);
            }
            len
        };
        let varies = len >= 2;
        if varies {
            let imp = self.settings.impurity;
            let min_leaf = self.settings.min_leaf;
            let sides = if fb.categorical {
                // Categories ordered by the second class's share (CART section 9.4).
                self.order.clear();
                for &b in &seq[..len] {
                    let c = hist[b as usize];
                    let (w, p) = (c >> 32, c & LOW);
                    let share = p as f64 / ((w - p) as f64 + p as f64);
                    self.order.push((share, b));
                }
                self.order
                    .sort_by(|a, b| a.0.total_cmp(&b.0).then(a.1.cmp(&b.1)));
                for (slot, o) in seq.iter_mut().zip(&self.order) {
                    *slot = o.1;
                }
                Some((&mut self.best_side[..=nb], nb))
            } else {
                None
            };
            scan_two(
                hist,
                &seq[..len],
                frame.tot,
                imp,
                &self.xlogx,
                min_leaf,
                f,
                sides,
                best,
                &mut self.scan,
            );
        }
        for &b in &seq[..len] {
            hist[b as usize] = 0;
        }
        hist[MISSING_BIN] = 0;
        varies
    }

    /// Copies the node's records into the other buffer, left side first; returns the
    /// start of the right side, the buffer, and the left side's total cell.
    fn split_two(
        &mut self,
        fb: &FeatureBins,
        layout: Layout,
        frame: Frame,
        b: &Best,
    ) -> (usize, usize, u64) {
        let missing_left = b.missing_left();
        let (s, e) = (frame.start, frame.end);
        let rec = layout.rec;
        let (word, shift, mask) = layout.field(b.feature);
        let [first, second] = &mut self.blocks;
        let (src, dst) = if frame.buf == 0 {
            (&*first, second)
        } else {
            (&*second, first)
        };
        let (src, dst) = (&src[s * rec..e * rec], &mut dst[s * rec..e * rec]);
        let nb = fb.n_bins;
        let (left, tot_left) = match b.cut {
            Cut::Threshold { a, .. } => move_records(src, dst, rec, word, |w| {
                let bin = ((w >> shift) & mask) as usize;
                if bin == MISSING_BIN {
                    missing_left
                } else {
                    bin <= a
                }
            }),
            Cut::Subset => {
                let side = &self.best_side[..=nb];
                move_records(src, dst, rec, word, |w| {
                    let bin = ((w >> shift) & mask) as usize;
                    if bin == MISSING_BIN {
                        missing_left
                    } else {
                        side.get(bin) == Some(&LEFT)
                    }
                })
            }
        };
        (s + left, 1 - frame.buf, tot_left)
    }

    // ---------------------------------------------------------------------------
    // General engine: `f64` slots, row indices partitioned in place.

    fn grow_general<B: BinCode, R: Rng + ?Sized>(
        &mut self,
        codes: &[B],
        data: &BinnedData,
        task: Task,
        n_outputs: usize,
        rng: &mut R,
    ) -> Tree {
        let stride = task.stride();
        let max_bins = data.max_bins();
        // Cleared in full once per tree, so a tree never depends on the last one.
        self.hist.clear();
        self.hist.resize(max_bins * stride, 0.0);
        self.mark.clear();
        self.mark.resize(max_bins, 0);
        self.wy.resize(self.rows.len(), 0.0);
        let mut tree = self.start_tree(data, stride, n_outputs);
        self.stack.push(Frame {
            start: 0,
            end: self.rows.len(),
            depth: 0,
            node: 0,
            buf: 0,
            tot: 0,
        });
        let n = data.n_rows();
        let bins = data.bins();
        while let Some(frame) = self.stack.pop() {
            let (s, e) = (frame.start, frame.end);
            // Regression: the node's weighted mean and sum of squared deviations, by
            // running updates (D. H. D. West (1979), "Updating mean and variance
            // estimates: an improved method", CACM 22(9):532-535), which neither
            // overflow nor cancel the way raw sums of large values do; and its range.
            let (mut lo, mut hi, mut sse) = (f64::INFINITY, f64::NEG_INFINITY, 0.0);
            let task = match task {
                Task::Values(_) => {
                    let (mut w, mut mean) = (0.0, 0.0);
                    for (&v, &wr) in self.val[s..e].iter().zip(&self.wgt[s..e]) {
                        w += wr;
                        let d = v - mean;
                        mean += wr / w * d;
                        sse += wr * d * (v - mean);
                        lo = lo.min(v);
                        hi = hi.max(v);
                    }
                    Task::Values(mean)
                }
                t => t,
            };
            // Node totals, and whether the node is pure.
            self.totals.iter_mut().for_each(|t| *t = 0.0);
            match task {
                Task::Classes(..) => {
                    for (&c, &w) in self.lab[s..e].iter().zip(&self.wgt[s..e]) {
                        self.totals[c as usize] += w;
                    }
                }
                Task::Values(c) => {
                    for i in s..e {
                        let (w, d) = (self.wgt[i], self.wgt[i] * (self.val[i] - c));
                        self.totals[0] += w;
                        self.totals[1] += d;
                        self.wy[i] = d;
                    }
                }
            }
            let w_t = task.weight(&self.totals);
            let pure = match task {
                Task::Classes(..) => self.totals.iter().filter(|&&c| c > 0.0).count() <= 1,
                Task::Values(_) => lo == hi,
            };
            let best = if self.may_split(pure, w_t, frame.depth) {
                self.search(rng, |g, f, best| {
                    let col = &codes[f * n..(f + 1) * n];
                    g.eval_general(col, &bins[f], f, task, frame, best)
                })
            } else {
                None
            };
            // A decrease below rounding noise is no decrease. The scores being
            // differenced are of the order of the node weight (classification) or of
            // the node's sum of squares (regression, with values centred on the node
            // mean), so the noise is relative to that, whatever the outcome's units.
            let tol = match task {
                Task::Classes(..) => 1e-12 * (task.score(&self.totals).abs() + w_t),
                Task::Values(_) => 1e-12 * sse,
            };
            match best {
                Some(b) if b.gain > tol && b.gain / w_t >= self.settings.min_decrease => {
                    let col = &codes[b.feature * n..(b.feature + 1) * n];
                    let mid = self.split_general(col, task, frame, &b);
                    self.make_split(&mut tree, &bins[b.feature], frame, &b, (mid, 0, 0));
                }
                _ => self.make_leaf(&mut tree, frame, task, w_t),
            }
        }
        tree
    }

    /// Evaluates every split of input `f` (bin codes `col`) in the node (general
    /// engine); returns false when the input is constant there.
    fn eval_general<B: BinCode>(
        &mut self,
        col: &[B],
        fb: &FeatureBins,
        f: usize,
        task: Task,
        frame: Frame,
        best: &mut Option<Best>,
    ) -> bool {
        let stride = task.stride();
        let nb = fb.n_bins;
        let (s, e) = (frame.start, frame.end);
        let hist = &mut self.hist[..(nb + 1) * stride];
        let rows = &self.rows[s..e];
        let wgt = &self.wgt[s..e];
        let seq = &mut self.seq[..=nb + 1];
        let sparse = (e - s) * SPARSE_RATIO < nb;
        let mut len = 0usize;
        match task {
            Task::Classes(..) => {
                for ((&r, &w), &c) in rows.iter().zip(wgt).zip(&self.lab[s..e]) {
                    let b = col[r as usize].idx();
                    hist[b * stride + c as usize] += w;
                    if sparse {
                        seq[len] = b as u32;
                        len += usize::from(self.mark[b] == 0 && b != MISSING_BIN);
                        self.mark[b] = 1;
                    }
                }
            }
            Task::Values(_) => {
                for ((&r, &w), &d) in rows.iter().zip(wgt).zip(&self.wy[s..e]) {
                    let b = col[r as usize].idx();
                    hist[2 * b] += w;
                    hist[2 * b + 1] += d;
                    if sparse {
                        seq[len] = b as u32;
                        len += usize::from(self.mark[b] == 0 && b != MISSING_BIN);
                        self.mark[b] = 1;
                    }
                }
            }
        }
        if sparse {
            for &b in &seq[..len] {
                self.mark[b as usize] = 0;
            }
            self.mark[MISSING_BIN] = 0;
            ascending(&mut seq[..len], nb, &mut self.bitmap);
        } else {
            for b in 1..=nb {
                seq[len] = b as u32;
                len += usize::from(task.weight(&hist[b * stride..(b + 1) * stride]) > 0.0);
            }
        }
        let varies = len >= 2;
        if varies {
            let scratch = [&mut self.acc, &mut self.lbuf, &mut self.rbuf];
            if fb.categorical {
                // Category orderings: by mean outcome, or one per class by that
                // class's share.
                let keys: usize = match task {
                    Task::Classes(2, _) => 1,
                    Task::Classes(c, _) => c,
                    Task::Values(_) => 1,
                };
                self.order.clear();
                self.order.extend(seq[..len].iter().map(|&b| (0.0, b)));
                let [acc, lbuf, rbuf] = scratch;
                for key in 0..keys {
                    for o in self.order.iter_mut() {
                        let b = o.1 as usize;
                        let s = &hist[b * stride..(b + 1) * stride];
                        o.0 = match task {
                            Task::Classes(2, _) => s[1] / (s[0] + s[1]),
                            Task::Classes(..) => s[key] / s.iter().sum::<f64>(),
                            Task::Values(_) => s[1] / s[0],
                        };
                    }
                    self.order
                        .sort_by(|a, b| a.0.total_cmp(&b.0).then(a.1.cmp(&b.1)));
                    for (slot, o) in seq.iter_mut().zip(&self.order) {
                        *slot = o.1;
                    }
                    scan_general(
                        hist,
                        &seq[..len],
                        task,
                        &self.totals,
                        [&mut *acc, &mut *lbuf, &mut *rbuf],
                        self.settings.min_leaf,
                        f,
                        Some((&mut self.best_side[..=nb], nb)),
                        best,
                    );
                }
            } else {
                scan_general(
                    hist,
                    &seq[..len],
                    task,
                    &self.totals,
                    scratch,
                    self.settings.min_leaf,
                    f,
                    None,
                    best,
                );
            }
        }
        for &b in &seq[..len] {
            let b = b as usize;
            hist[b * stride..(b + 1) * stride]
                .iter_mut()
                .for_each(|h| *h = 0.0);
        }
        hist[..stride].iter_mut().for_each(|h| *h = 0.0);
        varies
    }

    /// Partitions the node's rows (and the arrays aligned with them) in place, left
    /// side first; returns the start of the right side.
    fn split_general<B: BinCode>(
        &mut self,
        col: &[B],
        task: Task,
        frame: Frame,
        b: &Best,
    ) -> usize {
        let missing_left = b.missing_left();
        let (s, e) = (frame.start, frame.end);
        let rows = &mut self.rows[s..e];
        let (wgt, lab, val) = (&mut self.wgt[s..e], &mut self.lab[..], &mut self.val[..]);
        let side = &self.best_side;
        let goes_left = |r: u32| -> bool {
            let bin = col[r as usize].idx();
            if bin == MISSING_BIN {
                return missing_left;
            }
            match b.cut {
                Cut::Threshold { a, .. } => bin <= a,
                Cut::Subset => side[bin] == LEFT,
            }
        };
        let left = match task {
            Task::Classes(..) => partition(rows, &mut (wgt, &mut lab[s..e]), goes_left),
            Task::Values(_) => partition(rows, &mut (wgt, &mut val[s..e]), goes_left),
        };
        s + left
    }
}

/// Exchanges positions `i` and `j` of the arrays that travel with the row indices.
trait Aligned {
    fn swap(&mut self, i: usize, j: usize);
}

impl<T> Aligned for (&mut [f64], &mut [T]) {
    #[inline(always)]
    fn swap(&mut self, i: usize, j: usize) {
        self.0.swap(i, j);
        self.1.swap(i, j);
    }
}

/// Moves the rows that go left to the front (and their aligned values with them) by
/// exchanges from both ends; returns how many go left. The order within each side
/// follows from this exchange scheme, and the general engine's sums (hence its
/// results to the last bit) depend on it.
#[inline]
fn partition<A: Aligned>(
    rows: &mut [u32],
    aligned: &mut A,
    goes_left: impl Fn(u32) -> bool,
) -> usize {
    let (mut i, mut j) = (0, rows.len());
    while i < j {
        if goes_left(rows[i]) {
            i += 1;
        } else {
            j -= 1;
            rows.swap(i, j);
            aligned.swap(i, j);
        }
    }
    i
}

/// Adds every record's cell into the histogram cell of its code (dense nodes).
/// `R` is the record size when known at compile time, else 0 and `rec` holds it.
#[inline]
fn fill_dense<const R: usize>(
    records: &[u64],
    rec: usize,
    (word, shift, mask): (usize, u32, u64),
    hist: &mut [u64],
    _: &mut [u32],
) {
    let rec = if R > 0 { R } else { rec };
    for r in records.chunks_exact(rec) {
        hist[((r[word] >> shift) & mask) as usize] += r[0];
    }
}

/// Like [`fill_dense`], and lists in `seq` each value bin the first time a record
/// lands in it; returns the number listed.
#[inline]
fn fill_sparse<const R: usize>(
    records: &[u64],
    rec: usize,
    (word, shift, mask): (usize, u32, u64),
    hist: &mut [u64],
    seq: &mut [u32],
) -> usize {
    let rec = if R > 0 { R } else { rec };
    let mut len = 0;
    for r in records.chunks_exact(rec) {
        let b = ((r[word] >> shift) & mask) as usize;
        let h = hist[b];
        seq[len] = b as u32;
        len += usize::from(h == 0 && b != MISSING_BIN);
        hist[b] = h + r[0];
    }
    len
}

/// Copies records of `rec` words from `src` to `dst`: those whose word `word` goes
/// left to the front in order, the others to the back in reverse order. Returns the
/// number that went left and the sum of their cells (word 0).
fn move_records(
    src: &[u64],
    dst: &mut [u64],
    rec: usize,
    word: usize,
    goes_left: impl Fn(u64) -> bool,
) -> (usize, u64) {
    // Fixed record sizes let the compiler copy a record as a few moves.
    match rec {
        2 => move_fixed::<2>(src, dst, word, goes_left),
        3 => move_fixed::<3>(src, dst, word, goes_left),
        4 => move_fixed::<4>(src, dst, word, goes_left),
        5 => move_fixed::<5>(src, dst, word, goes_left),
        6 => move_fixed::<6>(src, dst, word, goes_left),
        _ => {
            let m = src.len() / rec;
            let (mut k, mut j, mut tot) = (0, m, 0u64);
            for r in src.chunks_exact(rec) {
                let left = goes_left(r[word]);
                let d = if left { k } else { j - 1 };
                dst[d * rec..(d + 1) * rec].copy_from_slice(r);
                k += usize::from(left);
                j -= usize::from(!left);
                tot += r[0] & 0u64.wrapping_sub(u64::from(left));
            }
            (k, tot)
        }
    }
}

#[inline]
fn move_fixed<const R: usize>(
    src: &[u64],
    dst: &mut [u64],
    word: usize,
    goes_left: impl Fn(u64) -> bool,
) -> (usize, u64) {
    let m = src.len() / R;
    let (mut k, mut j, mut tot) = (0, m, 0u64);
    for r in src.chunks_exact(R) {
        let Ok(r) = <&[u64; R]>::try_from(r) else {
            continue;
        };
        let left = goes_left(r[word % R]);
        // Written to its place without a branch on the side, which is unpredictable.
        let d = if left { k } else { j - 1 };
        if let Some(slot) = dst.get_mut(d * R..d * R + R) {
            slot.copy_from_slice(r);
        }
        k += usize::from(left);
        j -= usize::from(!left);
        tot += r[0] & 0u64.wrapping_sub(u64::from(left));
    }
    (k, tot)
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

/// `-w * impurity` of a two-class cell, equal bit for bit to [`Impurity::score`] on
/// the same counts as `f64`. One type per measure, so that each scan loop holds only
/// its own formula (the compiler would otherwise evaluate both and pick one).
trait TwoClassScore {
    fn score(cell: u64, xlogx: &[f64]) -> f64;
}

struct GiniScore;
struct EntropyScore;

impl TwoClassScore for GiniScore {
    #[inline(always)]
    fn score(cell: u64, _: &[f64]) -> f64 {
        let (w, p) = (cell >> 32, cell & LOW);
        if w == 0 {
            return 0.0;
        }
        // Counts stay below 2^32, so the signed conversion (one instruction) is exact.
        let (c0, c1) = ((w - p) as i64 as f64, p as i64 as f64);
        (c0 * c0 + c1 * c1) / (c0 + c1)
    }
}

impl TwoClassScore for EntropyScore {
    #[inline(always)]
    fn score(cell: u64, xlogx: &[f64]) -> f64 {
        let (w, p) = (cell >> 32, cell & LOW);
        if w == 0 {
            return 0.0;
        }
        let t = |c: u64| -> f64 {
            match xlogx.get(c as usize) {
                Some(&v) => v,
                None => {
                    let x = c as i64 as f64;
                    x * x.log2()
                }
            }
        };
        // Terms are never negative, so a zero count adds exactly nothing, as when it
        // is skipped.
        (t(w - p) + t(p)) - t(w)
    }
}

/// Scans the bins in `order` (two-class cells), trying a cut after each position,
/// with missing values sent right and, when the node has some, left.
#[allow(clippy::too_many_arguments)]
fn scan_two(
    hist: &[u64],
    order: &[u32],
    tot: u64,
    imp: Impurity,
    xlogx: &[f64],
    min_leaf: f64,
    f: usize,
    subset: Option<(&mut [u8], usize)>,
    best: &mut Option<Best>,
    scratch: &mut ScanScratch,
) {
    match imp {
        Impurity::Gini => scan_two_gini(hist, order, tot, min_leaf, f, subset, best, scratch),
        Impurity::Entropy => {
            scan_two_with::<EntropyScore>(hist, order, tot, xlogx, min_leaf, f, subset, best)
        }
    }
}

/// Buffers of the two-class Gini scan.
#[derive(Debug, Clone, Default)]
struct ScanScratch {
    /// Left-side cell of each candidate, in the order candidates are tried.
    cand: Vec<u64>,
    /// Each candidate's approximate `score(l) + score(r)`, or minus infinity when a
    /// side is below the minimum leaf size.
    approx: Vec<f64>,
}

/// A whole number below 2^52 as `f64`, by placing it in the mantissa of 2^52 and
/// subtracting 2^52: exact, and vectorisable where integer conversion is not.
#[inline(always)]
fn exact_f64(x: u64) -> f64 {
    f64::from_bits(x | 0x4330_0000_0000_0000) - 4_503_599_627_370_496.0
}

/// [`scan_two_with`] for Gini, in two passes with the same result. The first pass
/// computes every candidate's `ql / wl + qr / wr` as `(ql wr + qr wl) / (wl wr)`: one
/// division instead of two, no branches, so the compiler can vectorise it. Both forms
/// are within a few rounding errors (relative 1e-15) of the exact value, so every
/// candidate whose exact score could be the best of this input, or beat the best
/// found so far, lies within a relative 1e-9 of the approximate maximum (and of the
/// bar set by the best so far); the second pass tries only those, in order, with the
/// exact scores and the same rules as the one-pass scan. The candidates it skips
/// cannot change the outcome of that scan: each would either lose to the best so far
/// or be replaced by the exact maximum, which is always tried.
#[allow(clippy::too_many_arguments)]
fn scan_two_gini(
    hist: &[u64],
    order: &[u32],
    tot: u64,
    min_leaf: f64,
    f: usize,
    mut subset: Option<(&mut [u8], usize)>,
    best: &mut Option<Best>,
    scratch: &mut ScanScratch,
) {
    let miss = hist[MISSING_BIN];
    let has_missing = miss >> 32 > 0;
    let per = 1 + usize::from(has_missing);
    let m = order.len() - 1;
    let ScanScratch { cand, approx } = scratch;
    cand.clear();
    cand.resize(m * per, 0);
    let mut acc = 0u64;
    if has_missing {
        for (&b, c) in order[..m].iter().zip(cand.chunks_exact_mut(2)) {
            acc += hist[b as usize];
            c[0] = acc;
            c[1] = acc + miss;
        }
    } else {
        for (&b, c) in order[..m].iter().zip(cand.iter_mut()) {
            acc += hist[b as usize];
            *c = acc;
        }
    }
    approx.clear();
    approx.resize(cand.len(), 0.0);
    for (a, &l) in approx.iter_mut().zip(cand.iter()) {
        let r = tot - l;
        let (wl, l1) = (exact_f64(l >> 32), exact_f64(l & LOW));
        let (wr, r1) = (exact_f64(r >> 32), exact_f64(r & LOW));
        let (l0, r0) = (wl - l1, wr - r1);
        let (ql, qr) = (l0 * l0 + l1 * l1, r0 * r0 + r1 * r1);
        let v = (ql * wr + qr * wl) / (wl * wr);
        *a = if wl >= min_leaf && wr >= min_leaf {
            v
        } else {
            f64::NEG_INFINITY
        };
    }
    let top = approx
        .iter()
        .fold(f64::NEG_INFINITY, |m, &v| if v > m { v } else { m });
    if top == f64::NEG_INFINITY {
        return;
    }
    let score_t = GiniScore::score(tot, &[]);
    let bar = best.map_or(top, |b| top.max(b.gain + score_t));
    let floor = bar - 1e-9 * bar.abs();
    for (i, (&l, &v)) in cand.iter().zip(approx.iter()).enumerate() {
        if v < floor {
            continue;
        }
        let r = tot - l;
        let (wl, wr) = ((l >> 32) as i64 as f64, (r >> 32) as i64 as f64);
        let gain = GiniScore::score(l, &[]) + GiniScore::score(r, &[]) - score_t;
        if !Best::beaten_by(best, gain, f) {
            continue;
        }
        let pos = i / per;
        let cut = cut_after(&mut subset, order, pos);
        *best = Some(Best {
            gain,
            feature: f,
            cut,
            missing_left: i % per == 1,
            has_missing,
            w_left: wl,
            w_right: wr,
        });
    }
}

#[allow(clippy::too_many_arguments)]
fn scan_two_with<S: TwoClassScore>(
    hist: &[u64],
    order: &[u32],
    tot: u64,
    xlogx: &[f64],
    min_leaf: f64,
    f: usize,
    mut subset: Option<(&mut [u8], usize)>,
    best: &mut Option<Best>,
) {
    let miss = hist[MISSING_BIN];
    let has_missing = miss >> 32 > 0;
    let score_t = S::score(tot, xlogx);
    // One candidate, `l` going left: its decrease and side weights when it beats `best`.
    #[inline(always)]
    #[allow(clippy::too_many_arguments)]
    fn try_cut<S: TwoClassScore>(
        l: u64,
        tot: u64,
        score_t: f64,
        min_leaf: f64,
        f: usize,
        xlogx: &[f64],
        best: &Option<Best>,
    ) -> Option<(f64, f64, f64)> {
        let r = tot - l;
        let (wl, wr) = ((l >> 32) as i64 as f64, (r >> 32) as i64 as f64);
        if wl < min_leaf || wr < min_leaf {
            return None;
        }
        let gain = S::score(l, xlogx) + S::score(r, xlogx) - score_t;
        Best::beaten_by(best, gain, f).then_some((gain, wl, wr))
    }
    let mut record =
        |pos: usize, missing_left: bool, found: (f64, f64, f64), best: &mut Option<Best>| {
            let cut = cut_after(&mut subset, order, pos);
            *best = Some(Best {
                gain: found.0,
                feature: f,
                cut,
                missing_left,
                has_missing,
                w_left: found.1,
                w_right: found.2,
            });
        };
    let mut acc = 0u64;
    if has_missing {
        for pos in 0..order.len() - 1 {
            acc += hist[order[pos] as usize];
            if let Some(found) = try_cut::<S>(acc, tot, score_t, min_leaf, f, xlogx, best) {
                record(pos, false, found, best);
            }
            let l = acc + miss;
            if let Some(found) = try_cut::<S>(l, tot, score_t, min_leaf, f, xlogx, best) {
                record(pos, true, found, best);
            }
        }
    } else {
        for pos in 0..order.len() - 1 {
            acc += hist[order[pos] as usize];
            if let Some(found) = try_cut::<S>(acc, tot, score_t, min_leaf, f, xlogx, best) {
                record(pos, false, found, best);
            }
        }
    }
}

/// The cut between positions `pos` and `pos + 1` of `order`: a category split, its
/// sides recorded in `subset`, or else the threshold between those two bins.
fn cut_after(subset: &mut Option<(&mut [u8], usize)>, order: &[u32], pos: usize) -> Cut {
    match subset.as_mut() {
        Some((side, nb)) => {
            record_sides(side, *nb, order, pos);
            Cut::Subset
        }
        None => Cut::Threshold {
            a: order[pos] as usize,
            b: order[pos + 1] as usize,
        },
    }
}

/// Records a category split: bins up to `pos` in `order` go left, the rest right,
/// categories absent from the node are marked absent.
fn record_sides(side: &mut [u8], nb: usize, order: &[u32], pos: usize) {
    side[..=nb].iter_mut().for_each(|s| *s = ABSENT);
    for (i, &b) in order.iter().enumerate() {
        side[b as usize] = if i <= pos { LEFT } else { RIGHT };
    }
}

/// Scans the bins in `order` (`f64` slots of `task.stride()`), trying a cut after
/// each position, with missing values sent right and, when the node has some, left.
#[allow(clippy::too_many_arguments)]
fn scan_general(
    hist: &[f64],
    order: &[u32],
    task: Task,
    totals: &[f64],
    [acc, lbuf, rbuf]: [&mut Vec<f64>; 3],
    min_leaf: f64,
    f: usize,
    mut subset: Option<(&mut [u8], usize)>,
    best: &mut Option<Best>,
) {
    let stride = task.stride();
    let miss = &hist[MISSING_BIN * stride..(MISSING_BIN + 1) * stride];
    let w_miss = task.weight(miss);
    let score_t = task.score(totals);
    acc.iter_mut().for_each(|a| *a = 0.0);
    for pos in 0..order.len() - 1 {
        let b = order[pos] as usize;
        for (a, h) in acc.iter_mut().zip(&hist[b * stride..(b + 1) * stride]) {
            *a += h;
        }
        for missing_left in [false, true] {
            if missing_left && w_miss <= 0.0 {
                break;
            }
            for (s, m) in miss.iter().enumerate() {
                let l = acc[s] + if missing_left { *m } else { 0.0 };
                lbuf[s] = l;
                rbuf[s] = totals[s] - l;
            }
            let (wl, wr) = (task.weight(lbuf), task.weight(rbuf));
            if wl < min_leaf || wr < min_leaf {
                continue;
            }
            let gain = task.score(lbuf) + task.score(rbuf) - score_t;
            if !Best::beaten_by(best, gain, f) {
                continue;
            }
            let cut = cut_after(&mut subset, order, pos);
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

fn leaf_placeholder() -> Node {
    Node {
        split: 0,
        child: 0,
        feature: LEAF,
        flags: 0,
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::data::FeatureMeta;
    use ndarray::Array2;
    use rand::SeedableRng;

    /// The two-class integer engine must give the trees the general engine gives. A
    /// third class that never occurs sends the same data through the general engine
    /// (its scores over counts with a zero class are the same numbers), so the two
    /// trees can be compared: same nodes, same thresholds, same leaf shares.
    #[test]
    fn two_class_counts_engine_matches_the_general_engine() {
        let mut rng = rand_xoshiro::Xoshiro256PlusPlus::seed_from_u64(11);
        for case in 0..12 {
            let n = 150 + 40 * case;
            let p = 1 + case % 5;
            let mut x = Array2::<f64>::zeros((n, p));
            let mut y = Vec::with_capacity(n);
            for i in 0..n {
                let mut s = 0.0;
                for j in 0..p {
                    let v: f64 = if case % 3 == 0 {
                        rng.gen_range(0..6) as f64
                    } else {
                        rng.gen_range(-1.0..1.0)
                    };
                    s += v;
                    x[[i, j]] = if rng.gen_bool(0.05 * (case % 2) as f64) {
                        f64::NAN
                    } else {
                        v
                    };
                }
                y.push(u32::from(s + rng.gen_range(-0.8..0.8) > 0.0));
            }
            let meta: Vec<FeatureMeta> = (0..p)
                .map(|j| FeatureMeta::numeric(format!("x{j}")))
                .collect();
            let data = BinnedData::new(x.view(), &meta, 4 + 40 * (case % 3)).expect("valid");
            let weights: Vec<f64> = (0..n).map(|_| rng.gen_range(0..3) as f64).collect();
            let settings = TreeSettings {
                impurity: if case % 2 == 0 {
                    Impurity::Gini
                } else {
                    Impurity::Entropy
                },
                features_per_split: (case % 4 == 1).then_some(1),
                min_leaf: [1.0, 2.0, 3.0][case % 3],
                ..TreeSettings::default()
            };
            let two = Target::classes(&y, 2).expect("valid");
            let three = Target::classes(&y, 3).expect("valid");
            let seed = 100 + case as u64;
            let a = Grower::new(settings.clone())
                .grow(
                    &data,
                    &two,
                    &weights,
                    &mut rand_xoshiro::Xoshiro256PlusPlus::seed_from_u64(seed),
                )
                .expect("grows");
            let b = Grower::new(settings)
                .grow(
                    &data,
                    &three,
                    &weights,
                    &mut rand_xoshiro::Xoshiro256PlusPlus::seed_from_u64(seed),
                )
                .expect("grows");
            // Same internal nodes and leaves in the same places; a leaf's payload is
            // laid out differently (two classes keep class 1's share in the node,
            // three an offset into the tree's table), so leaves compare by value.
            assert_eq!(a.nodes.len(), b.nodes.len(), "case {case}");
            for (na, nb) in a.nodes.iter().zip(&b.nodes) {
                assert_eq!(na.is_leaf(), nb.is_leaf(), "case {case}");
                if !na.is_leaf() {
                    assert_eq!(na, nb, "case {case}");
                }
            }
            assert_eq!(a.decrease, b.decrease, "case {case}");
            for leaf in a.leaves() {
                assert_eq!(a.leaf_weight(leaf), b.leaf_weight(leaf), "case {case}");
                let (va, vb) = (a.leaf_value(leaf), b.leaf_value(leaf));
                assert_eq!(vb[2], 0.0, "case {case}");
                assert_eq!(va[1], vb[1], "case {case}");
                // Class 0's share is 1 - p in the two-class tree and c0 / w in the
                // other: with whole-number weights they differ by at most two
                // roundings of numbers at most 1, so by at most one unit in the last
                // place of 1 (f64::EPSILON).
                assert!((va[0] - vb[0]).abs() <= f64::EPSILON, "case {case}");
            }
        }
    }
}
