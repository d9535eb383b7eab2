//! The two-class engine: whole-number case weights as exact integer counts, one
//! 64-bit cell per row (case weight high, second class low), and node-ordered records
//! copied between two buffers at each split so every histogram pass reads in order.
use super::candidate::{Best, Cut, Task, LEFT};
use super::partition::move_records;
use super::random_cut::{cut_two, draw_position, draw_subset};
use super::scan::scan_two;
use super::{ascending, Frame, Grower, LOW, SPARSE_RATIO, XLOGX_LIMIT};
use crate::data::{BinnedData, FeatureBins, MISSING_BIN};
use crate::impurity::Impurity;
use crate::settings::CutChoice;
use crate::tree::Tree;
use rand::RngExt;

/// Calls `$f::<R, N>(args)` with the record size `R` as a constant for the common
/// sizes (so the compiler can unroll record access; 0 when the size is read from the
/// data) and the number `N` of inputs filled in one pass as a constant.
macro_rules! with_sizes {
    ($rec:expr, $n:expr, $f:ident, $($arg:expr),*) => {
        match ($rec, $n) {
            (2, 1) => $f::<2, 1>(2, $($arg),*),
            (2, 2) => $f::<2, 2>(2, $($arg),*),
            (2, 3) => $f::<2, 3>(2, $($arg),*),
            (2, _) => $f::<2, 4>(2, $($arg),*),
            (3, 1) => $f::<3, 1>(3, $($arg),*),
            (3, 2) => $f::<3, 2>(3, $($arg),*),
            (3, 3) => $f::<3, 3>(3, $($arg),*),
            (3, _) => $f::<3, 4>(3, $($arg),*),
            (4, 1) => $f::<4, 1>(4, $($arg),*),
            (4, 2) => $f::<4, 2>(4, $($arg),*),
            (4, 3) => $f::<4, 3>(4, $($arg),*),
            (4, _) => $f::<4, 4>(4, $($arg),*),
            (5, 1) => $f::<5, 1>(5, $($arg),*),
            (5, 2) => $f::<5, 2>(5, $($arg),*),
            (5, 3) => $f::<5, 3>(5, $($arg),*),
            (5, _) => $f::<5, 4>(5, $($arg),*),
            (r, 1) => $f::<0, 1>(r, $($arg),*),
            (r, 2) => $f::<0, 2>(r, $($arg),*),
            (r, 3) => $f::<0, 3>(r, $($arg),*),
            (r, _) => $f::<0, 4>(r, $($arg),*),
        }
    };
}

/// Most inputs whose histograms one pass over a node's records fills (each has its
/// own histogram and bin list).
pub(super) const BATCH: usize = 4;

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
    pub(super) fn grow_two<R: RngExt + ?Sized>(&mut self, data: &BinnedData, rng: &mut R) -> Tree {
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
        // One histogram and one bin list per input of a batch.
        self.hist2.resize(BATCH * data.max_bins(), 0);
        self.seq.resize(BATCH * (data.max_bins() + 1), 0);
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
                self.search_two(rng, bins, layout, frame)
            } else {
                None
            };
            // A decrease below rounding noise is no decrease: the scores being
            // differenced are of the order of the node weight.
            let tol = 1e-12 * (task.score(&self.totals).abs() + w_t);
            match best {
                Some(b)
                    if b.gain > self.gain_floor(tol)
                        && b.gain.max(0.0) / w_t >= self.settings.min_decrease =>
                {
                    let moved = self.split_two(&bins[b.feature], layout, frame, &b);
                    self.make_split(&mut tree, &bins[b.feature], frame, &b, moved);
                }
                _ => self.make_leaf(&mut tree, frame, task, w_t),
            }
        }
        tree
    }

    /// Draws the inputs to try at a node and evaluates them, as [`Grower::search`]
    /// does, but fills the histograms of up to [`BATCH`] drawn inputs in one pass over
    /// the node's records. The draws are the same as one at a time: a batch holds at
    /// most as many inputs as are still wanted, and drawing goes on only while fewer
    /// than K non-constant inputs have been tried. Randomized cuts draw from the same
    /// generator while evaluating, so they take one input per batch to keep the order
    /// of draws.
    fn search_two<R: RngExt + ?Sized>(
        &mut self,
        rng: &mut R,
        bins: &[FeatureBins],
        layout: Layout,
        frame: Frame,
    ) -> Option<Best> {
        let mut best: Option<Best> = None;
        let n = self.pool.len();
        let k = self
            .settings
            .features_per_split
            .unwrap_or(usize::MAX)
            .min(n);
        let every = k >= n;
        let cap = match self.settings.cuts {
            CutChoice::Best => BATCH,
            CutChoice::Random => 1,
        };
        let mut batch = [0usize; BATCH];
        let (mut i, mut tried) = (0, 0);
        while i < n && tried < k {
            let want = if every { n - i } else { k - tried }.min(cap).min(n - i);
            for slot in &mut batch[..want] {
                if !every {
                    let j = rng.random_range(i..n);
                    self.pool.swap(i, j);
                }
                *slot = self.pool[i] as usize;
                i += 1;
            }
            let sparse = self.fill_batch(&batch[..want], bins, layout, frame);
            for (q, &f) in batch[..want].iter().enumerate() {
                if self.eval_filled(q, sparse, &bins[f], f, frame, &mut best, rng) {
                    tried += 1;
                }
            }
        }
        best
    }

    /// Fills the histograms (and, for a node with fewer rows than bins, the lists of
    /// occupied bins) of the inputs in `batch`, one slot each, in one pass over the
    /// node's records. Returns, per slot, how many bins were listed while filling (none for
    /// a dense node, whose bins are listed from the histogram).
    fn fill_batch(
        &mut self,
        batch: &[usize],
        bins: &[FeatureBins],
        layout: Layout,
        frame: Frame,
    ) -> [Option<usize>; BATCH] {
        let (s, e) = (frame.start, frame.end);
        let rec = layout.rec;
        let records = &self.blocks[frame.buf][s * rec..e * rec];
        let (hs, ss) = (self.hist2.len() / BATCH, self.seq.len() / BATCH);
        let mut fields = [(0usize, 0u32, 0u64, 0usize, 0usize); BATCH];
        for (q, (field, &f)) in fields.iter_mut().zip(batch).enumerate() {
            let (word, shift, mask) = layout.field(f);
            *field = (word, shift, mask, q * hs, q * ss);
        }
        // Few rows: list each value bin the first time a row lands in it, rather than
        // look at every bin afterwards.
        let sparse = batch
            .iter()
            .all(|&f| (e - s) * SPARSE_RATIO < bins[f].n_bins);
        let (hist, seq) = (&mut self.hist2, &mut self.seq);
        let mut lens = [None; BATCH];
        if sparse {
            let mut got = [0usize; BATCH];
            with_sizes!(
                rec,
                batch.len(),
                fill_sparse,
                records,
                &fields,
                hist,
                seq,
                &mut got
            );
            for (l, g) in lens.iter_mut().zip(got).take(batch.len()) {
                *l = Some(g);
            }
        } else {
            with_sizes!(rec, batch.len(), fill_dense, records, &fields, hist);
        }
        lens
    }

    /// Evaluates every split of input `f` in the node (two-class engine), from the
    /// histogram in slot `q` that [`Grower::fill_batch`] filled, and clears that
    /// histogram; returns false when the input is constant there (fewer than two
    /// distinct non-missing values).
    #[allow(clippy::too_many_arguments)]
    fn eval_filled<R: RngExt + ?Sized>(
        &mut self,
        q: usize,
        listed: [Option<usize>; BATCH],
        fb: &FeatureBins,
        f: usize,
        frame: Frame,
        best: &mut Option<Best>,
        rng: &mut R,
    ) -> bool {
        let nb = fb.n_bins;
        let (hs, ss) = (self.hist2.len() / BATCH, self.seq.len() / BATCH);
        let hist = &mut self.hist2[q * hs..q * hs + nb + 1];
        let seq = &mut self.seq[q * ss..q * ss + nb + 2];
        let len = match listed[q] {
            Some(len) => {
                ascending(&mut seq[..len], nb, &mut self.bitmap);
                len
            }
            None => {
                let mut len = 0;
                for (b, &h) in hist.iter().enumerate().skip(1) {
                    seq[len] = b as u32;
                    len += usize::from(h != 0);
                }
                len
            }
        };
        let varies = len >= 2;
        if varies && self.settings.cuts == CutChoice::Random {
            let pos = if fb.categorical {
                draw_subset(rng, &mut seq[..len], &mut self.order)
            } else {
                draw_position(rng, fb, &seq[..len])
            };
            let sides = fb.categorical.then(|| (&mut self.best_side[..=nb], nb));
            cut_two(
                hist,
                &seq[..len],
                pos,
                frame.tot,
                self.settings.impurity,
                &self.xlogx,
                self.settings.min_leaf,
                f,
                sides,
                best,
            );
        } else if varies {
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
        if listed[q].is_some() {
            for &b in &seq[..len] {
                hist[b as usize] = 0;
            }
            hist[MISSING_BIN] = 0;
        } else {
            // Most bins of a dense node are occupied: clearing them all is one fill.
            hist.fill(0);
        }
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
}

/// Where a batch slot's code lies in a record (word, shift, mask), and where its
/// histogram and bin list start.
type Field = (usize, u32, u64, usize, usize);

/// Adds every record's cell into the histogram cell of its code, for each of the `N`
/// inputs of `fields` (dense nodes). `R` is the record size when known at compile
/// time, else 0 and `rec` holds it.
#[inline]
fn fill_dense<const R: usize, const N: usize>(
    rec: usize,
    records: &[u64],
    fields: &[Field; BATCH],
    hist: &mut [u64],
) {
    let rec = if R > 0 { R } else { rec };
    for r in records.chunks_exact(rec) {
        for &(word, shift, mask, at, _) in &fields[..N] {
            hist[at + ((r[word] >> shift) & mask) as usize] += r[0];
        }
    }
}

/// Like [`fill_dense`], and lists in each input's list each value bin the first time
/// a record lands in it; `got` receives the number listed per input.
#[inline]
fn fill_sparse<const R: usize, const N: usize>(
    rec: usize,
    records: &[u64],
    fields: &[Field; BATCH],
    hist: &mut [u64],
    seq: &mut [u32],
    got: &mut [usize; BATCH],
) {
    let rec = if R > 0 { R } else { rec };
    let mut len = [0usize; BATCH];
    for r in records.chunks_exact(rec) {
        for (q, &(word, shift, mask, at, list)) in fields[..N].iter().enumerate() {
            let b = ((r[word] >> shift) & mask) as usize;
            let h = hist[at + b];
            seq[list + len[q]] = b as u32;
            len[q] += usize::from(h == 0 && b != MISSING_BIN);
            hist[at + b] = h + r[0];
        }
    }
    *got = len;
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::data::FeatureMeta;
    use crate::outcome::OutcomeView;
    use crate::settings::TreeSettings;
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
                        rng.random_range(0..6) as f64
                    } else {
                        rng.random_range(-1.0..1.0)
                    };
                    s += v;
                    x[[i, j]] = if rng.random_bool(0.05 * (case % 2) as f64) {
                        f64::NAN
                    } else {
                        v
                    };
                }
                y.push(u32::from(s + rng.random_range(-0.8..0.8) > 0.0));
            }
            let meta: Vec<FeatureMeta> = (0..p)
                .map(|j| FeatureMeta::numeric(format!("x{j}")))
                .collect();
            let data = BinnedData::new(x.view(), &meta, 4 + 40 * (case % 3)).expect("valid");
            let weights: Vec<f64> = (0..n).map(|_| rng.random_range(0..3) as f64).collect();
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
            let two = OutcomeView::classes(&y, 2).expect("valid");
            let three = OutcomeView::classes(&y, 3).expect("valid");
            let seed = 100 + case as u64;
            let a = Grower::new(settings.clone())
                .grow(&data, &two, &weights, seed)
                .expect("grows");
            let b = Grower::new(settings)
                .grow(&data, &three, &weights, seed)
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
