//! Randomized cut points (Geurts, Ernst & Wehenkel 2006, "Extremely randomized trees",
//! Machine Learning 63:3-42): on each input tried at a node, one cut is drawn at random
//! and only that cut is scored. This file draws the cut (a position in the node's
//! ordered bins) and scores it with the same measures the full scans use.
use super::candidate::{Best, Task};
use super::scan::{cut_after, EntropyScore, GiniScore, TwoClassScore};
use crate::data::{FeatureBins, MISSING_BIN};
use crate::impurity::Impurity;
use rand::RngExt;

/// The position in `order` (the node's occupied value bins of a numeric input,
/// ascending, at least two) after which a uniformly drawn cut falls.
///
/// A value `t` is drawn uniformly between the centres of the first and last bins (a
/// bin's centre is the midpoint of its lowest and highest training value; one value
/// per bin makes this the paper's draw between the node's minimum and maximum), and
/// the bins whose centre lies below `t` go left. So the chance of cutting between two
/// neighbouring bins is the distance between their centres over the whole span. The
/// result is kept inside `0..order.len() - 1`, so both sides hold a bin even when
/// rounding puts `t` on an end.
pub(super) fn draw_position<R: RngExt + ?Sized>(
    rng: &mut R,
    fb: &FeatureBins,
    order: &[u32],
) -> usize {
    let centre = |b: u32| {
        let i = b as usize - 1;
        // Halves first, so values near the largest finite number cannot overflow.
        fb.lo[i] / 2.0 + fb.hi[i] / 2.0
    };
    let (a, z) = (centre(order[0]), centre(order[order.len() - 1]));
    let u: f64 = rng.random();
    let span = z - a;
    let t = if span.is_finite() {
        a + u * span
    } else {
        a * (1.0 - u) + z * u
    };
    let below = order.partition_point(|&b| centre(b) < t);
    below.clamp(1, order.len() - 1) - 1
}

/// Reorders `order` (the categories present in the node, at least two) so that a
/// uniformly random non-trivial subset of them comes first, and returns the position
/// of the last of that subset. Each category goes left by a fair coin; a draw that
/// puts every category on one side is drawn again (at most half of all draws, so two
/// draws are expected at worst). `scratch` holds the coins.
pub(super) fn draw_subset<R: RngExt + ?Sized>(
    rng: &mut R,
    order: &mut [u32],
    scratch: &mut Vec<(f64, u32)>,
) -> usize {
    let m = order.len();
    loop {
        scratch.clear();
        scratch.extend(
            order
                .iter()
                .map(|&b| (f64::from(u8::from(rng.random::<bool>())), b)),
        );
        let left = scratch.iter().filter(|c| c.0 == 1.0).count();
        if left > 0 && left < m {
            let (mut i, mut j) = (0, left);
            for &(coin, b) in scratch.iter() {
                if coin == 1.0 {
                    order[i] = b;
                    i += 1;
                } else {
                    order[j] = b;
                    j += 1;
                }
            }
            return left - 1;
        }
    }
}

/// Scores the one cut after position `pos` of `order` (two-class cells), with missing
/// values sent right and, when the node has some, left; replaces `best` as the full
/// scan would.
#[allow(clippy::too_many_arguments)]
pub(super) fn cut_two(
    hist: &[u64],
    order: &[u32],
    pos: usize,
    tot: u64,
    imp: Impurity,
    xlogx: &[f64],
    min_leaf: f64,
    f: usize,
    subset: Option<(&mut [u8], usize)>,
    best: &mut Option<Best>,
) {
    match imp {
        Impurity::Gini => {
            cut_two_with::<GiniScore>(hist, order, pos, tot, xlogx, min_leaf, f, subset, best)
        }
        Impurity::Entropy => {
            cut_two_with::<EntropyScore>(hist, order, pos, tot, xlogx, min_leaf, f, subset, best)
        }
    }
}

#[allow(clippy::too_many_arguments)]
fn cut_two_with<S: TwoClassScore>(
    hist: &[u64],
    order: &[u32],
    pos: usize,
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
    let acc: u64 = order[..=pos].iter().map(|&b| hist[b as usize]).sum();
    for missing_left in [false, true] {
        if missing_left && !has_missing {
            break;
        }
        let l = if missing_left { acc + miss } else { acc };
        let r = tot - l;
        let (wl, wr) = ((l >> 32) as i64 as f64, (r >> 32) as i64 as f64);
        if wl < min_leaf || wr < min_leaf {
            continue;
        }
        let gain = S::score(l, xlogx) + S::score(r, xlogx) - score_t;
        if Best::beaten_by(best, gain, f) {
            *best = Some(Best {
                gain,
                feature: f,
                cut: cut_after(&mut subset, order, pos),
                missing_left,
                has_missing,
                w_left: wl,
                w_right: wr,
            });
        }
    }
}

/// Scores the one cut after position `pos` of `order` (`f64` slots of
/// `task.stride()`), with missing values sent right and, when the node has some,
/// left; replaces `best` as the full scan would.
#[allow(clippy::too_many_arguments)]
pub(super) fn cut_general(
    hist: &[f64],
    order: &[u32],
    pos: usize,
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
    for &b in &order[..=pos] {
        let b = b as usize;
        for (a, h) in acc.iter_mut().zip(&hist[b * stride..(b + 1) * stride]) {
            *a += h;
        }
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
        if Best::beaten_by(best, gain, f) {
            *best = Some(Best {
                gain,
                feature: f,
                cut: cut_after(&mut subset, order, pos),
                missing_left,
                has_missing: w_miss > 0.0,
                w_left: wl,
                w_right: wr,
            });
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use rand::SeedableRng;
    use rand_xoshiro::Xoshiro256PlusPlus;

    fn bins(values: &[f64]) -> FeatureBins {
        FeatureBins {
            n_bins: values.len(),
            lo: values.to_vec(),
            hi: values.to_vec(),
            categorical: false,
        }
    }

    /// With one value per bin, the cut between two neighbouring values is drawn with
    /// chance equal to their distance over the range (a uniform draw over the range,
    /// as in the paper). Values 0, 1, 4, 10: chances 0.1, 0.3, 0.6. With 60,000 draws
    /// the standard error of a share near 0.3 is sqrt(0.3 * 0.7 / 60000) = 0.0019;
    /// five standard errors is 0.01.
    #[test]
    fn a_numeric_cut_falls_in_each_gap_by_its_width() {
        let fb = bins(&[0.0, 1.0, 4.0, 10.0]);
        let order = [1u32, 2, 3, 4];
        let mut rng = Xoshiro256PlusPlus::seed_from_u64(5);
        let mut seen = [0usize; 3];
        let draws = 60_000;
        for _ in 0..draws {
            seen[draw_position(&mut rng, &fb, &order)] += 1;
        }
        for (k, want) in [0.1, 0.3, 0.6].into_iter().enumerate() {
            let share = seen[k] as f64 / draws as f64;
            assert!((share - want).abs() < 0.01, "gap {k}: {share}");
        }
    }

    /// Only the bins present in the node count: a node holding bins 2 and 4 of the
    /// input always cuts between them.
    #[test]
    fn a_node_with_two_bins_has_one_cut() {
        let fb = bins(&[0.0, 1.0, 4.0, 10.0]);
        let mut rng = Xoshiro256PlusPlus::seed_from_u64(6);
        for _ in 0..100 {
            assert_eq!(draw_position(&mut rng, &fb, &[2, 4]), 0);
        }
    }

    /// Every non-trivial subset of three categories (six of them, three splits each
    /// counted from both sides) comes up, each about a sixth of the time: with 60,000
    /// draws the standard error of a share of 1/6 is 0.0015; 0.01 is over six of them.
    #[test]
    fn category_subsets_are_uniform_and_never_trivial() {
        let mut rng = Xoshiro256PlusPlus::seed_from_u64(7);
        let mut scratch = Vec::new();
        let mut seen = std::collections::BTreeMap::new();
        let draws = 60_000;
        for _ in 0..draws {
            let mut order = [1u32, 2, 3];
            let pos = draw_subset(&mut rng, &mut order, &mut scratch);
            assert!(pos < 2);
            let mut left: Vec<u32> = order[..=pos].to_vec();
            left.sort_unstable();
            let mut all = order.to_vec();
            all.sort_unstable();
            assert_eq!(all, vec![1, 2, 3]);
            *seen.entry(left).or_insert(0usize) += 1;
        }
        assert_eq!(seen.len(), 6);
        for (subset, c) in seen {
            let share = c as f64 / draws as f64;
            assert!((share - 1.0 / 6.0).abs() < 0.01, "{subset:?}: {share}");
        }
    }
}
