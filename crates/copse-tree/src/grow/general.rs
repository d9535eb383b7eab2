//! The general engine (regression, three or more classes, fractional case weights):
//! `f64` histogram slots, and row indices partitioned in place with each row's outcome
//! and weight in arrays permuted alongside.
use super::candidate::{Best, Cut, Task, LEFT};
use super::partition::partition;
use super::random_cut::{cut_general, draw_position, draw_subset};
use super::scan::scan_general;
use super::{ascending, Frame, Grower, SPARSE_RATIO};
use crate::data::{BinCode, BinnedData, FeatureBins, MISSING_BIN};
use crate::settings::CutChoice;
use crate::tree::Tree;
use rand::RngExt;

impl Grower {
    pub(super) fn grow_general<B: BinCode, R: RngExt + ?Sized>(
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
                self.search(rng, |g, rng, f, best| {
                    let col = &codes[f * n..(f + 1) * n];
                    g.eval_general(col, &bins[f], f, task, frame, best, rng)
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
                Some(b)
                    if b.gain > self.gain_floor(tol)
                        && b.gain.max(0.0) / w_t >= self.settings.min_decrease =>
                {
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
    #[allow(clippy::too_many_arguments)]
    fn eval_general<B: BinCode, R: RngExt + ?Sized>(
        &mut self,
        col: &[B],
        fb: &FeatureBins,
        f: usize,
        task: Task,
        frame: Frame,
        best: &mut Option<Best>,
        rng: &mut R,
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
        if varies && self.settings.cuts == CutChoice::Random {
            let pos = if fb.categorical {
                draw_subset(rng, &mut seq[..len], &mut self.order)
            } else {
                draw_position(rng, fb, &seq[..len])
            };
            cut_general(
                hist,
                &seq[..len],
                pos,
                task,
                &self.totals,
                [&mut self.acc, &mut self.lbuf, &mut self.rbuf],
                self.settings.min_leaf,
                f,
                fb.categorical.then(|| (&mut self.best_side[..=nb], nb)),
                best,
            );
        } else if varies {
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
