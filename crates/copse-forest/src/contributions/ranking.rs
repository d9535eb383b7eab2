//! A ranking of the inputs by their mean absolute contribution over a set of rows: how
//! far, on average, each input moves a row's prediction from the base value (Lundberg
//! et al. 2020, the global summary of local explanations). Unlike permutation
//! importance it needs no outcomes and does not break the links between inputs; it
//! describes the model, not the world.
use super::Contributions;
use crate::error::Result;
use crate::forest::Forest;
use ndarray::{ArrayView2, Axis};

/// Most rows a ranking explains by default: rows are taken evenly spaced through the
/// data when it holds more (a ranking's figures settle well before this; the cost
/// grows with the rows).
pub const RANKING_ROWS: usize = 2000;

/// The inputs ranked by mean absolute contribution.
#[derive(Debug, Clone, PartialEq)]
pub struct ContributionRanking {
    /// Rows explained (evenly spaced through the data when it had more).
    pub rows: usize,
    /// Rows the data had.
    pub rows_given: usize,
    /// Per input, in input order: the mean over rows of the absolute contribution;
    /// for classes, half the sum over classes of the absolute contributions (the
    /// share of probability the input moves between classes, since a row's
    /// contributions to the classes of one input sum to zero; with two classes,
    /// exactly the absolute contribution to either class).
    pub mean_abs: Vec<f64>,
    /// Input positions, the largest mean first (ties in input order).
    pub order: Vec<usize>,
}

impl Contributions {
    /// Per input, the mean absolute contribution over the rows, folded over the
    /// outputs as [`ContributionRanking::mean_abs`] says (`classes`: whether the
    /// outputs are class probabilities).
    pub fn mean_abs(&self, classes: bool) -> Vec<f64> {
        let (n, m, _) = self.values.dim();
        let fold = if classes { 0.5 } else { 1.0 };
        (0..m)
            .map(|j| {
                let input = self.values.index_axis(Axis(1), j);
                let total: f64 = input.iter().map(|v| v.abs()).sum();
                if n == 0 {
                    0.0
                } else {
                    fold * total / n as f64
                }
            })
            .collect()
    }
}

impl Forest {
    /// Ranks the inputs by mean absolute contribution over the rows of `x` (columns
    /// in the training order), explaining at most `most_rows` rows: every row when `x`
    /// has no more, else `most_rows` rows evenly spaced through it (row
    /// `floor(i * n / most_rows)` for `i` below `most_rows`), so the figures cover the
    /// whole file at a bounded cost.
    ///
    /// # Errors
    /// As for [`Forest::contributions`].
    pub fn contribution_ranking(
        &self,
        x: ArrayView2<'_, f64>,
        most_rows: usize,
    ) -> Result<ContributionRanking> {
        let n = x.nrows();
        let c = if n <= most_rows {
            self.contributions(x)?
        } else {
            let picked: Vec<usize> = (0..most_rows).map(|i| i * n / most_rows).collect();
            self.contributions(x.select(Axis(0), &picked).view())?
        };
        let mean_abs = c.mean_abs(!self.classes().is_empty());
        let mut order: Vec<usize> = (0..mean_abs.len()).collect();
        order.sort_by(|&a, &b| mean_abs[b].total_cmp(&mean_abs[a]).then(a.cmp(&b)));
        Ok(ContributionRanking {
            rows: c.values.dim().0,
            rows_given: n,
            mean_abs,
            order,
        })
    }
}
