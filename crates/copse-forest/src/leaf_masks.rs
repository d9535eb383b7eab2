//! Scoring by leaf masks: every test of every tree is evaluated input by input, and a
//! test a row fails clears, in its tree's bit vector of leaves, the leaves of the
//! subtree the row does not enter; each tree's exit leaf is then the first leaf left.
//!
//! The method is the one of Lucchese, Nardini, Orlando, Perego, Tonellotto and
//! Venturini (2015), "QuickScorer: a fast algorithm to rank documents with additive
//! ensembles of regression trees", SIGIR, sections 3-4: a false test (one whose row goes
//! right) rules out the leaves of its left subtree; the leaves left after AND-ing every
//! false test's mask into the tree's bit vector are the leaves whose path has no false
//! test on its way left, and the leftmost of them is the leaf the descent reaches
//! (their Theorem 3.1). With the tests of one input sorted by threshold, the false tests
//! of a value are a prefix of the list (`threshold < value`), so a row reads one run of
//! masks per input. Trees of more than 64 leaves take several 64-bit words (the paper's
//! multi-word variant); a mask is stored as (word, bits) pairs for the words its left
//! subtree touches only.
//!
//! Beyond the paper (which has numeric inputs only): a category split and a missing
//! value have no order to scan, so each input also keeps one list of false tests per
//! category code, one for any other value (an unseen or malformed code) and one for a
//! missing value, built by asking the tree's own test (`Tree::goes_left`) about each.
//! The leaves found are the walk's own leaves, and their outputs are summed in tree
//! order by the same code as the walk's, so the predictions are the same to the bit.
use crate::forest::Forest;
use copse_tree::Tree;
use ndarray::ArrayView2;

/// Most (word, bits) entries a layout may hold (each 12 bytes): a model whose category
/// splits have very many categories would need a list per code.
const MAX_ENTRIES: usize = 1 << 26;

/// Most (inputs tested x 64-bit words of bit vector) a tree may average for
/// [`LeafMasks::for_scoring`] to choose the layout.
pub const CHOSEN_WORDS_PER_TREE: usize = 32;
/// Most bytes of masks for [`LeafMasks::for_scoring`] to choose the layout.
pub const CHOSEN_MAX_BYTES: usize = 8 << 20;
/// Masks between snapshots in the chosen layout (the benchmark's fastest spacing).
const CHOSEN_SPACING: usize = 500;
/// Most bytes of snapshots in the chosen layout (the spacing widens to stay within).
const CHOSEN_SNAPSHOT_BYTES: usize = 4 << 20;

/// A forest laid out for scoring by leaf masks (see the file's notes).
#[derive(Debug, Clone)]
pub struct LeafMasks {
    /// Per tree, its first word in a row's bit vector; one more at the end.
    tree_word: Vec<u32>,
    /// Per tree, where its leaves start in `leaf_nodes`.
    leaf_start: Vec<u32>,
    /// Leaves' node indices, tree by tree, in left-to-right order.
    leaf_nodes: Vec<u32>,
    /// What each input's value must look up.
    inputs: Vec<InputTests>,
    /// The masks: word `words[e]` of the row's bit vector is AND-ed with `bits[e]`.
    words: Vec<u32>,
    bits: Vec<u64>,
    /// Bit vectors of all trees ([`LeafMasks::n_words`] words each) after the masks of
    /// an input's numeric tests up to one of its marks.
    snapshots: Vec<u64>,
}

/// The tests of all trees on one input.
#[derive(Debug, Clone, Default)]
struct InputTests {
    /// Thresholds of the numeric tests, ascending.
    thresholds: Vec<f64>,
    /// `ends[0]` starts the masks of the numeric tests; `ends[k + 1]` ends those of
    /// the tests of `thresholds[..=k]`.
    ends: Vec<u32>,
    /// Masks of the category tests and missing values: `lists[c]..lists[c + 1]` for
    /// code `c` below `codes`, then a list for any other value that is not missing,
    /// then one for a missing value (numeric tests too).
    lists: Vec<u32>,
    /// Category codes with a list of their own.
    codes: usize,
    /// Whether any tree tests this input by categories.
    categorical: bool,
    /// Counts of thresholds (ascending) after which the bit vectors are kept whole,
    /// in `snapshots` from number `first_snapshot` on: a value above many thresholds
    /// AND-s one snapshot and reads the masks after it only.
    marks: Vec<u32>,
    first_snapshot: usize,
    /// Per list of `lists`, the snapshot that stands for it whole, or [`NO_SNAPSHOT`].
    list_snapshots: Vec<u32>,
}

/// No snapshot for a list.
const NO_SNAPSHOT: u32 = u32::MAX;

impl InputTests {
    /// Calls `clear` for list `slot` of `lists`: its snapshot if it has one, else
    /// its masks.
    #[inline(always)]
    fn list(&self, slot: usize, clear: &mut impl FnMut(Option<usize>, u32, u32)) {
        match self.list_snapshots.get(slot) {
            Some(&s) if s != NO_SNAPSHOT => clear(Some(s as usize), 0, 0),
            _ => clear(None, self.lists[slot], self.lists[slot + 1]),
        }
    }
}

/// One false test, before the layout is assembled: its input, the list it belongs to
/// (a threshold or a code slot), its tree and the leaves it rules out.
#[derive(Debug, Clone, Copy)]
struct Clear {
    input: usize,
    threshold: f64,
    slot: usize,
    tree: usize,
    leaves: (usize, usize),
}

impl LeafMasks {
    /// The layout of `forest`'s trees, or `None` when it cannot hold them (a threshold
    /// that is not a number, which a checked model never has, or more than 2^26
    /// masks).
    pub fn new(forest: &Forest) -> Option<LeafMasks> {
        let p = forest.n_features();
        let trees = forest.trees();
        let mut tree_word = Vec::with_capacity(trees.len() + 1);
        let mut leaf_start = Vec::with_capacity(trees.len() + 1);
        let mut leaf_nodes = Vec::new();
        let mut numeric = Vec::new();
        let mut listed = Vec::new();
        let mut codes = vec![0usize; p];
        let mut categorical = vec![false; p];
        for tree in trees {
            for n in tree.nodes() {
                if let (Some(j), true) = (n.feature(), n.is_categorical()) {
                    categorical[j] = true;
                    codes[j] = codes[j].max(n.category_count().unwrap_or(0));
                }
            }
        }
        let mut word = 0usize;
        for (t, tree) in trees.iter().enumerate() {
            tree_word.push(u32::try_from(word).ok()?);
            leaf_start.push(u32::try_from(leaf_nodes.len()).ok()?);
            let ranges = leaf_ranges(tree, &mut leaf_nodes);
            let n_leaves = leaf_nodes.len() - *leaf_start.last()? as usize;
            word += n_leaves.div_ceil(64);
            for n in tree.nodes() {
                let Some(j) = n.feature() else { continue };
                let left = ranges[n.child()];
                let clear = |slot| Clear {
                    input: j,
                    threshold: 0.0,
                    slot,
                    tree: t,
                    leaves: left,
                };
                let nan_slot = codes[j] + 1;
                if !n.missing_goes_left() {
                    listed.push(clear(nan_slot));
                }
                if n.is_categorical() {
                    for c in 0..codes[j] {
                        if !tree.goes_left(n, c as f64) {
                            listed.push(clear(c));
                        }
                    }
                    // -1 is never a code: it takes the way of every unseen one.
                    if !tree.goes_left(n, -1.0) {
                        listed.push(clear(codes[j]));
                    }
                } else {
                    let threshold = n.threshold()?;
                    if threshold.is_nan() {
                        return None;
                    }
                    numeric.push(Clear {
                        threshold,
                        ..clear(0)
                    });
                }
            }
        }
        tree_word.push(u32::try_from(word).ok()?);
        leaf_start.push(u32::try_from(leaf_nodes.len()).ok()?);
        numeric.sort_by(|a, b| {
            (a.input, a.threshold, a.tree)
                .partial_cmp(&(b.input, b.threshold, b.tree))
                .expect("no threshold is NaN")
        });
        listed.sort_by_key(|c| (c.input, c.slot, c.tree));
        let mut layout = LeafMasks {
            tree_word,
            leaf_start,
            leaf_nodes,
            inputs: Vec::with_capacity(p),
            words: Vec::new(),
            bits: Vec::new(),
            snapshots: Vec::new(),
        };
        let (mut a, mut b) = (0, 0);
        for j in 0..p {
            let mut input = InputTests {
                codes: codes[j],
                categorical: categorical[j],
                ..InputTests::default()
            };
            input.ends.push(layout.len()?);
            while a < numeric.len() && numeric[a].input == j {
                layout.push(&numeric[a]);
                input.thresholds.push(numeric[a].threshold);
                input.ends.push(layout.len()?);
                a += 1;
            }
            for slot in 0..codes[j] + 2 {
                input.lists.push(layout.len()?);
                while b < listed.len() && listed[b].input == j && listed[b].slot == slot {
                    layout.push(&listed[b]);
                    b += 1;
                }
            }
            input.lists.push(layout.len()?);
            if layout.words.len() > MAX_ENTRIES {
                return None;
            }
            layout.inputs.push(input);
        }
        Some(layout)
    }

    /// The layout for scoring `forest` when it is expected to beat the node walk, with
    /// its snapshots kept; `None` when the walk is the better choice or the layout
    /// cannot hold the trees.
    ///
    /// A row ANDs, for each input the trees test, a snapshot of every tree's bit
    /// vector, so its cost grows with (inputs tested x words of a tree's bit vector)
    /// per tree, where the walk's grows with the depth. Measured (one thread, CPU time,
    /// 200,000 rows through `copse score`, the same output bytes): 500 trees of 199
    /// leaves on 8 inputs (the demo's model, 26 words a tree) scored in 3.45 s against
    /// the walk's 4.50 s; 500 trees of 205 leaves on 20 numeric inputs (twonorm, 80
    /// words a tree) in 9.31 s against 5.09 s. The layout is chosen below
    /// [`CHOSEN_WORDS_PER_TREE`] (break-even, interpolated, near 45) and within
    /// [`CHOSEN_MAX_BYTES`] of masks.
    pub fn for_scoring(forest: &Forest) -> Option<LeafMasks> {
        let trees = forest.trees();
        let mut tested = vec![false; forest.n_features()];
        let mut words = 0usize;
        for tree in trees {
            let mut leaves = 0usize;
            for n in tree.nodes() {
                match n.feature() {
                    Some(j) => tested[j] = true,
                    None => leaves += 1,
                }
            }
            words += leaves.div_ceil(64);
        }
        let inputs = tested.iter().filter(|t| **t).count();
        if inputs * words > CHOSEN_WORDS_PER_TREE * trees.len() {
            return None;
        }
        let mut layout = LeafMasks::new(forest)?;
        if layout.n_masks() * 12 > CHOSEN_MAX_BYTES {
            return None;
        }
        layout.keep_snapshots(CHOSEN_SPACING, CHOSEN_SNAPSHOT_BYTES);
        Some(layout)
    }

    /// Keeps snapshots of the bit vectors after every `spacing` or so masks of each
    /// input's numeric tests, and of each list of a category code or of missing values
    /// that holds at least `spacing` masks, as far as `max_bytes` allow:
    /// a row then reads, per input, at most two snapshots and fewer than `spacing`
    /// masks of its numeric tests, where the bare method reads every mask of the tests it fails. Not in the
    /// published method; the snapshots are the AND of masks the bare method would
    /// apply, so the leaves found are the same.
    pub fn keep_snapshots(&mut self, spacing: usize, max_bytes: usize) {
        let w = self.n_words();
        let fit = (self.n_masks() * w * 8).div_ceil(max_bytes.max(1));
        let spacing = spacing.max(fit).max(1);
        self.snapshots.clear();
        let mut state = vec![0u64; w];
        for j in 0..self.inputs.len() {
            state.fill(u64::MAX);
            let mut input = std::mem::take(&mut self.inputs[j]);
            input.marks.clear();
            input.first_snapshot = self.snapshots.len() / w.max(1);
            let mut applied = input.ends[0];
            for k in 1..input.ends.len() {
                if (input.ends[k] - applied) as usize >= spacing {
                    self.clear(&mut state, applied, input.ends[k]);
                    applied = input.ends[k];
                    self.snapshots.extend_from_slice(&state);
                    input.marks.push(k as u32);
                }
            }
            // A long list of a category code or of missing values: the whole list.
            input.list_snapshots.clear();
            for slot in 0..input.lists.len() - 1 {
                let (from, to) = (input.lists[slot], input.lists[slot + 1]);
                if (to - from) as usize >= spacing {
                    state.fill(u64::MAX);
                    self.clear(&mut state, from, to);
                    input
                        .list_snapshots
                        .push((self.snapshots.len() / w.max(1)) as u32);
                    self.snapshots.extend_from_slice(&state);
                } else {
                    input.list_snapshots.push(NO_SNAPSHOT);
                }
            }
            self.inputs[j] = input;
        }
    }

    /// Bytes of the snapshots kept.
    pub fn snapshot_bytes(&self) -> usize {
        self.snapshots.len() * 8
    }

    /// Masks stored so far, as a list end.
    fn len(&self) -> Option<u32> {
        u32::try_from(self.words.len()).ok()
    }

    /// Appends the masks of false test `c`: for each word its left subtree's leaves
    /// touch, the word with those leaves' bits cleared.
    fn push(&mut self, c: &Clear) {
        let base = self.tree_word[c.tree] as usize;
        let (lo, hi) = c.leaves;
        for w in lo / 64..hi.div_ceil(64) {
            let from = lo.max(w * 64) - w * 64;
            let to = hi.min(w * 64 + 64) - w * 64;
            let ones = if to - from == 64 {
                u64::MAX
            } else {
                ((1u64 << (to - from)) - 1) << from
            };
            self.words.push((base + w) as u32);
            self.bits.push(!ones);
        }
    }

    /// Words of a row's bit vector (all trees).
    pub fn n_words(&self) -> usize {
        *self.tree_word.last().unwrap_or(&0) as usize
    }

    /// Masks stored (each a word index and 64 bits).
    pub fn n_masks(&self) -> usize {
        self.words.len()
    }

    /// Leaves reached by `rows` rows of `rows_data` (row-major, `width` values a row)
    /// in every tree: `leaves[t * rows + r]` is tree `t`'s leaf (its node index) for row
    /// `r`. `state` is scratch of [`LeafMasks::n_words`] words.
    pub fn leaf_indices(
        &self,
        rows_data: &[f64],
        width: usize,
        rows: usize,
        state: &mut [u64],
        leaves: &mut [u32],
    ) {
        let n_trees = self.tree_word.len() - 1;
        for r in 0..rows {
            let row = &rows_data[r * width..(r + 1) * width];
            // The first snapshot is copied rather than AND-ed into a vector of ones.
            let w = state.len();
            let mut filled = false;
            self.runs(row, |snapshot, from, to| {
                if let Some(s) = snapshot {
                    let snap = &self.snapshots[s * w..(s + 1) * w];
                    if filled {
                        state.iter_mut().zip(snap).for_each(|(a, b)| *a &= b);
                    } else {
                        state.copy_from_slice(snap);
                        filled = true;
                    }
                }
                if from < to {
                    if !filled {
                        state.fill(u64::MAX);
                        filled = true;
                    }
                    self.clear(state, from, to);
                }
            });
            if !filled {
                state.fill(u64::MAX);
            }
            for t in 0..n_trees {
                let (w0, w1) = (self.tree_word[t] as usize, self.tree_word[t + 1] as usize);
                let mut leaf = 0;
                for (w, &bits) in state[w0..w1].iter().enumerate() {
                    if bits != 0 {
                        leaf = w * 64 + bits.trailing_zeros() as usize;
                        break;
                    }
                }
                leaves[t * rows + r] = self.leaf_nodes[self.leaf_start[t] as usize + leaf];
            }
        }
    }

    /// Masks and snapshots a row of values reads (the work it costs, beside the node
    /// visits of the walk).
    pub fn masks_read(&self, row: &[f64]) -> (usize, usize) {
        let (mut read, mut snaps) = (0, 0);
        self.runs(row, |snapshot, from, to| {
            snaps += usize::from(snapshot.is_some());
            read += (to - from) as usize;
        });
        (read, snaps)
    }

    /// Calls `clear(snapshot, from, to)` for each run of masks `from..to` of the tests
    /// `row` fails, with the snapshot that stands for the run's earlier masks if one
    /// does: per input, the numeric tests whose threshold is below the value, and the
    /// list of the value's category or of a missing value.
    #[inline(always)]
    fn runs(&self, row: &[f64], mut clear: impl FnMut(Option<usize>, u32, u32)) {
        for (input, &v) in self.inputs.iter().zip(row) {
            if v.is_nan() {
                input.list(input.codes + 1, &mut clear);
                continue;
            }
            let k = input.thresholds.partition_point(|&t| t < v);
            let s = input.marks.partition_point(|&m| m as usize <= k);
            if s > 0 {
                let from = input.ends[input.marks[s - 1] as usize];
                clear(Some(input.first_snapshot + s - 1), from, input.ends[k]);
            } else {
                clear(None, input.ends[0], input.ends[k]);
            }
            if input.categorical {
                let c = if v >= 0.0 && v < input.codes as f64 && v.fract() == 0.0 {
                    v as usize
                } else {
                    input.codes
                };
                input.list(c, &mut clear);
            }
        }
    }

    /// AND-s masks `from..to` into `state`.
    #[inline(always)]
    fn clear(&self, state: &mut [u64], from: u32, to: u32) {
        let (from, to) = (from as usize, to as usize);
        for (&w, &b) in self.words[from..to].iter().zip(&self.bits[from..to]) {
            state[w as usize] &= b;
        }
    }
}

/// Numbers the leaves of `tree` left to right, appending their node indices to
/// `leaf_nodes`, and gives for every node the range of leaf numbers under it.
fn leaf_ranges(tree: &Tree, leaf_nodes: &mut Vec<u32>) -> Vec<(usize, usize)> {
    let nodes = tree.nodes();
    let first = leaf_nodes.len();
    let mut ranges = vec![(0, 0); nodes.len()];
    // (node, whether its subtree is done): a node is entered, then its left subtree and
    // its right are numbered, then it is closed.
    let mut stack = vec![(0usize, false)];
    while let Some((i, done)) = stack.pop() {
        let n = &nodes[i];
        let next = leaf_nodes.len() - first;
        if n.is_leaf() {
            leaf_nodes.push(i as u32);
            ranges[i] = (next, next + 1);
        } else if done {
            ranges[i].1 = next;
        } else {
            ranges[i].0 = next;
            stack.push((i, true));
            stack.push((n.child() + 1, false));
            stack.push((n.child(), false));
        }
    }
    ranges
}

impl Forest {
    /// Predictions as [`Forest::predict`] gives them, computed by `masks` (the layout
    /// of this forest) for a rows-by-inputs batch.
    ///
    /// # Errors
    /// `LengthMismatch` when the number of columns is not the model's.
    // The engine's scoring layout; not part of the stable API.
    #[doc(hidden)]
    pub fn predict_by_masks(
        &self,
        masks: &LeafMasks,
        x: ArrayView2<'_, f64>,
    ) -> crate::Result<ndarray::Array2<f64>> {
        use rayon::prelude::*;
        self.check_columns(x)?;
        let (n, k, p) = (x.nrows(), self.n_outputs(), self.n_features());
        let mut out = vec![0.0; n * k];
        let block = MASK_BLOCK;
        out.par_chunks_mut(block * k.max(1))
            .enumerate()
            .for_each_init(
                || (vec![0u64; masks.n_words()], Vec::new(), Vec::new()),
                |(state, rows, leaves), (b, chunk)| {
                    let m = chunk.len() / k.max(1);
                    rows.clear();
                    for r in b * block..b * block + m {
                        rows.extend(x.row(r).iter());
                    }
                    leaves.resize(self.trees.len() * m, 0);
                    masks.leaf_indices(rows, p, m, state, leaves);
                    self.sum_leaves(leaves, m, chunk);
                },
            );
        Ok(ndarray::Array2::from_shape_vec((n, k), out).expect("n rows of k outputs"))
    }
}

/// Rows per block of scoring by leaf masks: the leaves found (a word per tree and row)
/// stay in cache until they are summed.
const MASK_BLOCK: usize = 64;
