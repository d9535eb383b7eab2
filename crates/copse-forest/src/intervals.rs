//! Quantiles and ranges of a numeric outcome by quantile regression forests
//! (Meinshausen 2006, "Quantile regression forests", JMLR 7:983-999).
//!
//! For a new row `x`, tree `t` sends it to a leaf; every training row the tree drew
//! into that leaf gets the weight `c_ti / C_t`, its draw count over the leaf's total
//! draws, and the forest's weight of training row `i` is the mean over the `k` trees,
//! `w_i(x) = (1/k) sum_t c_ti / C_t` (the paper's equations 4 and 5, with rows
//! counted by their draws). The conditional distribution of the outcome is the
//! weighted empirical one, `F(y | x) = sum_i w_i(x) [Y_i <= y]` (equation 6), and the
//! quantile at level `a` is its smallest outcome with `F(y | x) >= a` (the paper's
//! definition, `Q_a(x) = inf { y : F(y | x) >= a }`).
//!
//! Counting drawn rows with their draws, rather than every training row that falls in
//! the leaf once (as the paper writes it), keeps each tree to the rows it was grown on:
//! the weighted mean of the distribution is then exactly the forest's prediction, and
//! a training row is absent from every tree that left it out of bag, so its out-of-bag
//! range is honest. A range at coverage `c` runs from the quantile at `(1 - c) / 2`
//! to the one at `(1 + c) / 2`. Coverage holds on average over rows like the training
//! rows, not for each row.
//!
//! Comparisons with the level allow a relative slack of 1e-12 of the total weight, so
//! rounding in sums of fractions such as 1/3 does not move a quantile to the next
//! outcome.
use crate::error::{Error, ErrorKind, Result};
use crate::forest::Forest;
pub use crate::leaf_rows::IntervalCheck;
use crate::leaf_rows::{LeafRows, TreeRows};
use crate::oob::OobMask;
use crate::task::Task;
use copse_tree::Tree;
use ndarray::{Array2, ArrayView2};
use rayon::prelude::*;

/// Rows scored together: each tree descends the block's rows in one pass, and the
/// block's leaves (`rows x trees` numbers) stay in cache while the rows gather their
/// weights.
const BLOCK_ROWS: usize = 64;

/// Relative slack of the comparison with the level (see the module documentation).
const SLACK: f64 = 1e-12;

/// Coverage of the out-of-bag ranges measured at training.
pub const OOB_CHECK_LEVEL: f64 = 0.9;

/// Quantiles of weighted values at `levels` (each in `[0, 1]`): for each level `a`,
/// the smallest value whose cumulative weight, values taken in ascending order,
/// reaches `a` times the total weight (Meinshausen 2006, `Q_a = inf { y : F(y) >= a }`).
/// Values of zero weight never count. This is the rule [`Forest::outcome_quantiles`]
/// applies to the training outcomes with the weights of a new row.
///
/// # Errors
/// `LengthMismatch` when values and weights differ in length; `BadValue` for a value
/// that is not finite, a weight that is negative or not finite, or no positive
/// weight; `InvalidSetting` for a level outside `[0, 1]`.
///
/// # Example
/// ```
/// use copse_forest::intervals::weighted_quantiles;
/// // Weights 1, 2, 1 on 10, 20, 30: half the weight is reached at 20.
/// let q = weighted_quantiles(&[30.0, 10.0, 20.0], &[1.0, 1.0, 2.0], &[0.5, 0.25, 0.9])?;
/// assert_eq!(q, vec![20.0, 10.0, 30.0]);
/// # Ok::<(), copse_forest::Error>(())
/// ```
pub fn weighted_quantiles(values: &[f64], weights: &[f64], levels: &[f64]) -> Result<Vec<f64>> {
    if values.len() != weights.len() {
        return Err(Error::new(
            ErrorKind::LengthMismatch,
            format!(
                "{} values but {} weights; they must match",
                values.len(),
                weights.len()
            ),
        ));
    }
    check_levels(levels)?;
    if values.iter().any(|v| !v.is_finite())
        || weights.iter().any(|w| !(*w >= 0.0 && w.is_finite()))
    {
        return Err(Error::new(
            ErrorKind::BadValue,
            "values must be finite and weights finite and not negative",
        ));
    }
    let mut pairs: Vec<(f64, f64)> = values
        .iter()
        .zip(weights)
        .filter(|(_, &w)| w > 0.0)
        .map(|(&v, &w)| (v, w))
        .collect();
    if pairs.is_empty() {
        return Err(Error::new(
            ErrorKind::BadValue,
            "no value has a positive weight",
        ));
    }
    pairs.sort_by(|a, b| a.0.total_cmp(&b.0));
    let total: f64 = pairs.iter().map(|p| p.1).sum();
    let mut out = vec![f64::NAN; levels.len()];
    read_quantiles(
        pairs.into_iter(),
        total,
        levels,
        &level_order(levels),
        &mut out,
    );
    Ok(out)
}

/// Walks `(value, weight)` pairs in ascending value order and writes, for each level
/// (visited in ascending order through `order`), the first value where the running
/// weight reaches the level's share of `total`.
fn read_quantiles(
    pairs: impl Iterator<Item = (f64, f64)>,
    total: f64,
    levels: &[f64],
    order: &[usize],
    out: &mut [f64],
) {
    let slack = SLACK * total;
    let (mut k, mut cum, mut last) = (0, 0.0, f64::NAN);
    for (v, w) in pairs {
        cum += w;
        last = v;
        while k < order.len() && cum >= levels[order[k]] * total - slack {
            out[order[k]] = v;
            k += 1;
        }
        if k == order.len() {
            return;
        }
    }
    // Only rounding can leave a level unreached (a level of 1): the largest value.
    for &j in &order[k..] {
        out[j] = last;
    }
}

/// The indices of `levels` in ascending order of level.
fn level_order(levels: &[f64]) -> Vec<usize> {
    let mut order: Vec<usize> = (0..levels.len()).collect();
    order.sort_by(|&a, &b| levels[a].total_cmp(&levels[b]));
    order
}

fn check_levels(levels: &[f64]) -> Result<()> {
    match levels.iter().find(|a| !(0.0..=1.0).contains(*a)) {
        Some(a) => Err(Error::new(
            ErrorKind::InvalidSetting,
            format!("a quantile level must lie between 0 and 1; {a} does not"),
        )),
        None => Ok(()),
    }
}

/// One thread's scratch for gathering a row's training-row weights: a weight per
/// training outcome rank (zero between rows) and the ranks touched.
struct Gather {
    weight: Vec<f64>,
    touched: Vec<u32>,
}

impl Gather {
    fn new(rows: usize) -> Self {
        Gather {
            weight: vec![0.0; rows],
            touched: Vec::new(),
        }
    }

    /// Adds the members of leaf `leaf` of `tree`, each weighted by its draw count over
    /// the leaf's total draws.
    #[inline]
    fn add(&mut self, tree: &TreeRows, leaf: usize) {
        let (ranks, counts) = tree.members(leaf);
        let draws: u64 = counts.iter().map(|&c| u64::from(c)).sum();
        if draws == 0 {
            return;
        }
        let per_draw = 1.0 / draws as f64;
        for (&r, &c) in ranks.iter().zip(counts) {
            let w = &mut self.weight[r as usize];
            if *w == 0.0 {
                self.touched.push(r);
            }
            *w += f64::from(c) * per_draw;
        }
    }

    /// Writes the quantiles of the gathered weights (NaN when nothing was gathered)
    /// and clears the weights for the next row.
    fn finish(&mut self, outcomes: &[f64], levels: &[f64], order: &[usize], out: &mut [f64]) {
        out.iter_mut().for_each(|o| *o = f64::NAN);
        if !self.touched.is_empty() {
            // Ranks ascend with the outcomes, so sorting the ranks sorts the values.
            self.touched.sort_unstable();
            let weight = &self.weight;
            let total: f64 = self.touched.iter().map(|&r| weight[r as usize]).sum();
            let pairs = self
                .touched
                .iter()
                .map(|&r| (outcomes[r as usize], weight[r as usize]));
            read_quantiles(pairs, total, levels, order, out);
        }
        for &r in &self.touched {
            self.weight[r as usize] = 0.0;
        }
        self.touched.clear();
    }
}

/// The levels of a range at coverage `coverage`: `[(1 - c) / 2, (1 + c) / 2]`.
fn range_levels(coverage: f64) -> Result<[f64; 2]> {
    if !(coverage > 0.0 && coverage < 1.0) {
        return Err(Error::new(
            ErrorKind::InvalidSetting,
            format!(
                "the coverage of a range must lie strictly between 0 and 1; {coverage} does not"
            ),
        ));
    }
    Ok([(1.0 - coverage) / 2.0, (1.0 + coverage) / 2.0])
}

impl Forest {
    /// The training rows of every leaf, if training kept them
    /// ([`crate::TrainOptions::keep_leaf_rows`]).
    pub fn leaf_rows(&self) -> Option<&LeafRows> {
        self.leaf_rows.as_ref()
    }

    /// The leaf rows, or why there are none to use.
    fn usable_leaf_rows(&self) -> Result<&LeafRows> {
        if self.task != Task::Regress {
            return Err(Error::new(
                ErrorKind::InvalidSetting,
                "outcome quantiles and ranges are for numeric outcomes; this model predicts classes",
            ));
        }
        self.leaf_rows.as_ref().ok_or_else(|| {
            Error::new(
                ErrorKind::InvalidSetting,
                "the model did not keep the training rows of its leaves, which outcome \
                 quantiles need; train it again with TrainOptions::keep_leaf_rows",
            )
        })
    }

    /// Quantiles of the outcome for each row of `x` at `levels` (each in `[0, 1]`),
    /// rows by levels, from the training outcomes weighted as the module
    /// documentation says. Blocks of rows run in parallel on the current rayon pool;
    /// the result is the same for any number of threads.
    ///
    /// # Errors
    /// `InvalidSetting` for a class model, a model that did not keep its leaf rows, or
    /// a level outside `[0, 1]`; `LengthMismatch` when `x` has the wrong number of
    /// columns.
    ///
    /// # Example
    /// ```
    /// use copse_forest::{synth, Forest, ForestSettings, TrainOptions};
    ///
    /// let data = synth::friedman1(300, 1);
    /// let settings = ForestSettings { trees: 50, ..Default::default() };
    /// let options = TrainOptions { keep_leaf_rows: true, oob_importance: false, ..Default::default() };
    /// let forest = Forest::train(data.x.view(), &data.meta, &data.outcome, &settings, &options)?
    ///     .forest;
    /// let fresh = synth::friedman1(5, 2);
    /// let q = forest.outcome_quantiles(fresh.x.view(), &[0.1, 0.5, 0.9])?;
    /// assert_eq!(q.dim(), (5, 3));
    /// for row in q.rows() {
    ///     assert!(row[0] <= row[1] && row[1] <= row[2]);
    /// }
    /// # Ok::<(), copse_forest::Error>(())
    /// ```
    pub fn outcome_quantiles(&self, x: ArrayView2<'_, f64>, levels: &[f64]) -> Result<Array2<f64>> {
        let leaf_rows = self.usable_leaf_rows()?;
        check_levels(levels)?;
        self.check_columns(x)?;
        let (n, q, p) = (x.nrows(), levels.len(), self.n_features());
        let mut out = vec![f64::NAN; n * q];
        if q > 0 && n > 0 {
            let order = level_order(levels);
            let scorers = self.scorers(n);
            let nt = scorers.len();
            let m = leaf_rows.rows();
            out.par_chunks_mut(BLOCK_ROWS * q)
                .enumerate()
                .for_each_init(
                    || (Gather::new(m), Vec::new(), Vec::new()),
                    |(gather, rows, leaves), (b, chunk)| {
                        let (start, len) = (b * BLOCK_ROWS, chunk.len() / q);
                        rows.clear();
                        for i in start..start + len {
                            rows.extend(x.row(i).iter().copied());
                        }
                        leaves.clear();
                        leaves.resize(nt * len, 0u32);
                        for (scorer, l) in scorers.iter().zip(leaves.chunks_exact_mut(len)) {
                            scorer.leaf_indices(rows, p, l);
                        }
                        for (r, o) in chunk.chunks_exact_mut(q).enumerate() {
                            for (t, tree) in leaf_rows.trees.iter().enumerate() {
                                gather.add(tree, leaves[t * len + r] as usize);
                            }
                            gather.finish(&leaf_rows.outcomes, levels, &order, o);
                        }
                    },
                );
        }
        Ok(Array2::from_shape_vec((n, q), out).expect("n rows of q quantiles by construction"))
    }

    /// Ranges of the outcome at coverage `coverage` (strictly between 0 and 1) for
    /// each row of `x`: two columns, the quantiles at `(1 - coverage) / 2` and
    /// `(1 + coverage) / 2` (0.9 gives the 5% and 95% quantiles). About `coverage` of
    /// new outcomes from the training rows' source should fall inside, on average over
    /// rows; the out-of-bag check ([`LeafRows::oob_check`]) measures it.
    ///
    /// # Errors
    /// As [`Forest::outcome_quantiles`], and `InvalidSetting` for a coverage outside
    /// `(0, 1)`.
    pub fn outcome_intervals(&self, x: ArrayView2<'_, f64>, coverage: f64) -> Result<Array2<f64>> {
        self.outcome_quantiles(x, &range_levels(coverage)?)
    }
}

/// The out-of-bag check of the ranges at coverage `level`: each training row with a
/// known outcome gathers weights only from the trees that left it out (none of which
/// drew it), and the check counts outcomes inside their range and their mean width.
/// `None` when no row was out of bag.
pub(crate) fn oob_check(
    trees: &[Tree],
    masks: &[OobMask],
    x: ArrayView2<'_, f64>,
    y: &[f64],
    leaf_rows: &LeafRows,
    level: f64,
) -> Option<IntervalCheck> {
    let levels = range_levels(level).ok()?;
    let order = level_order(&levels);
    let n = x.nrows();
    let m = leaf_rows.rows();
    // Per block: (rows judged, inside, sum of widths); summed in block order, so the
    // result does not depend on the number of threads.
    let blocks: Vec<(usize, usize, f64)> = (0..n.div_ceil(BLOCK_ROWS))
        .into_par_iter()
        .map_init(
            || Gather::new(m),
            |gather, b| {
                let (mut rows, mut inside, mut width) = (0, 0, 0.0);
                let mut range = [0.0; 2];
                for i in b * BLOCK_ROWS..((b + 1) * BLOCK_ROWS).min(n) {
                    if y[i].is_nan() {
                        continue;
                    }
                    let mut used = false;
                    for (t, tree) in trees.iter().enumerate() {
                        if masks[t].contains(i) {
                            let leaf = tree.leaf_index_with(|j| x[[i, j]]);
                            gather.add(&leaf_rows.trees[t], leaf);
                            used = true;
                        }
                    }
                    gather.finish(&leaf_rows.outcomes, &levels, &order, &mut range);
                    if used && !range[0].is_nan() {
                        rows += 1;
                        inside += usize::from(range[0] <= y[i] && y[i] <= range[1]);
                        width += range[1] - range[0];
                    }
                }
                (rows, inside, width)
            },
        )
        .collect();
    let (rows, inside, width) = blocks
        .iter()
        .fold((0, 0, 0.0), |a, b| (a.0 + b.0, a.1 + b.1, a.2 + b.2));
    (rows > 0).then(|| IntervalCheck {
        level,
        rows,
        inside,
        mean_width: width / rows as f64,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn weighted_quantiles_match_hand_computed_values() {
        // Values 1..5 with weights 0.1, 0.2, 0.3, 0.2, 0.2 (total 1): running weights
        // 0.1, 0.3, 0.6, 0.8, 1.0. The level-a quantile is the first value whose
        // running weight reaches a: 0.05 -> 1, 0.1 -> 1 (reached exactly), 0.3 -> 2
        // (reached exactly, through 0.1 + 0.2 in floating point), 0.31 -> 3, 0.6 -> 3,
        // 0.61 -> 4, 0.95 -> 5, 0 -> 1, 1 -> 5.
        let v = [4.0, 1.0, 5.0, 3.0, 2.0];
        let w = [0.2, 0.1, 0.2, 0.3, 0.2];
        let levels = [0.05, 0.1, 0.3, 0.31, 0.6, 0.61, 0.95, 0.0, 1.0];
        let q = weighted_quantiles(&v, &w, &levels).unwrap();
        assert_eq!(q, vec![1.0, 1.0, 2.0, 3.0, 3.0, 4.0, 5.0, 1.0, 5.0]);
        // Thirds: weights 1/3 each on -2, 0, 7; one third reached at -2, two at 0.
        let t = 1.0 / 3.0;
        let q = weighted_quantiles(&[0.0, 7.0, -2.0], &[t, t, t], &[t, 2.0 * t, 0.5]).unwrap();
        assert_eq!(q, vec![-2.0, 0.0, 0.0]);
        // Unnormalised weights give the same answer; zero weights never count.
        let q = weighted_quantiles(&[9.0, 1.0, 2.0], &[0.0, 3.0, 1.0], &[0.0, 0.75, 0.76]).unwrap();
        assert_eq!(q, vec![1.0, 1.0, 2.0]);
    }

    #[test]
    fn weighted_quantiles_refuse_bad_input() {
        assert!(weighted_quantiles(&[1.0], &[1.0, 2.0], &[0.5]).is_err());
        assert!(weighted_quantiles(&[1.0], &[-1.0], &[0.5]).is_err());
        assert!(weighted_quantiles(&[1.0], &[0.0], &[0.5]).is_err());
        assert!(weighted_quantiles(&[f64::NAN], &[1.0], &[0.5]).is_err());
        assert!(weighted_quantiles(&[1.0], &[1.0], &[1.5]).is_err());
        assert!(range_levels(1.0).is_err() && range_levels(0.0).is_err());
        assert!(range_levels(f64::NAN).is_err());
    }

    #[test]
    fn gathering_leaves_weights_each_member_by_its_draws_over_the_leaf() {
        // Two trees over outcomes [1, 2, 3, 4] (ranks 0..3). Tree A's leaf holds ranks
        // 0 (drawn twice) and 3 (once): weights 2/3 and 1/3. Tree B's leaf holds rank
        // 1 (once): weight 1. Over the two trees (total 2): rank 0 -> 2/3, rank 1 -> 1,
        // rank 3 -> 1/3; running 2/3, 5/3, 2 of 2, i.e. shares 1/3, 5/6, 1.
        let a = TreeRows {
            starts: vec![0, 0, 2],
            ranks: vec![0, 3],
            counts: vec![2, 1],
        };
        let b = TreeRows {
            starts: vec![0, 1],
            ranks: vec![1],
            counts: vec![1],
        };
        let outcomes = [1.0, 2.0, 3.0, 4.0];
        let mut g = Gather::new(4);
        let levels = [0.3, 1.0 / 3.0, 0.34, 0.8, 0.84, 1.0];
        let mut out = [0.0; 6];
        for _ in 0..2 {
            // Twice: the scratch must come back clean.
            g.add(&a, 1);
            g.add(&b, 0);
            g.finish(&outcomes, &levels, &level_order(&levels), &mut out);
            assert_eq!(out, [1.0, 1.0, 2.0, 2.0, 4.0, 4.0]);
        }
        // The same weights through the public rule.
        let q = weighted_quantiles(&outcomes, &[2.0 / 3.0, 1.0, 0.0, 1.0 / 3.0], &levels).unwrap();
        assert_eq!(q, out.to_vec());
        // Nothing gathered: NaN.
        g.finish(&outcomes, &levels, &level_order(&levels), &mut out);
        assert!(out.iter().all(|v| v.is_nan()));
    }
}
