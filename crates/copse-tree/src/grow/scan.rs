//! Threshold and category-ordering scans: given a node's histogram of one input and
//! the order of its occupied bins, try a cut after each position and keep the best.
use super::candidate::{Best, Cut, Task, ABSENT, LEFT, RIGHT};
use super::LOW;
use crate::data::MISSING_BIN;
use crate::impurity::Impurity;

/// `-w * impurity` of a two-class cell, equal bit for bit to [`Impurity::score`] on
/// the same counts as `f64`. One type per measure, so that each scan loop holds only
/// its own formula (the compiler would otherwise evaluate both and pick one).
pub(super) trait TwoClassScore {
    fn score(cell: u64, xlogx: &[f64]) -> f64;
}

pub(super) struct GiniScore;
pub(super) struct EntropyScore;

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
pub(super) fn scan_two(
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
pub(super) struct ScanScratch {
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
pub(super) fn cut_after(subset: &mut Option<(&mut [u8], usize)>, order: &[u32], pos: usize) -> Cut {
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
pub(super) fn scan_general(
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
