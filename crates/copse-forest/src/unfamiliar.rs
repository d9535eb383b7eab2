//! Rows unlike the training data: cells of numeric inputs outside the range the model
//! was trained on, and category codes it never had, counted per input and flagged per
//! row.
//!
//! Why: a tree sends every value beyond its last threshold to the same side, so a
//! forest predicts flat outside the training range (Breiman 2001, "Random forests",
//! Machine Learning 45:5-32, grows axis-aligned trees whose leaves hold training
//! rows only). A prediction for such a row rests on no training data near it, and the
//! user should know which rows those are.
//!
//! The ranges come from the model's own bins ([`Forest::bins`]): the lowest value of
//! the first bin and the highest of the last are the lowest and highest training
//! values of each numeric input. Missing cells (NaN) are never counted: the model
//! learned where to send them.
use crate::Forest;
use copse_tree::{FeatureBins, FeatureKind, FeatureMeta};
use ndarray::ArrayView2;

/// Most example values kept per input.
pub const EXAMPLES: usize = 3;

/// What is familiar for one input.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Familiar {
    /// A numeric input: the lowest and highest training values.
    Range(f64, f64),
    /// A categorical input with this many categories (codes `0..n`).
    Categories(usize),
    /// An input the training data held no value of: nothing can be judged.
    Unknown,
}

impl Familiar {
    /// True when `v` lies outside what training saw (never for a missing value).
    #[inline]
    pub fn outside(&self, v: f64) -> bool {
        if v.is_nan() {
            return false;
        }
        match *self {
            Familiar::Range(lo, hi) => v < lo || v > hi,
            // Codes are whole numbers `0..n`; anything else was never a category.
            Familiar::Categories(n) => !(v >= 0.0 && v < n as f64 && v.fract() == 0.0),
            Familiar::Unknown => false,
        }
    }
}

/// Counts, over as many blocks of rows as are checked, the cells of each input
/// outside what training saw, with a few example values, and the rows holding any.
#[derive(Debug, Clone)]
pub struct Unfamiliar {
    familiar: Vec<Familiar>,
    counts: Vec<u64>,
    examples: Vec<Vec<f64>>,
    rows: u64,
}

impl Unfamiliar {
    /// The training ranges of `forest`'s inputs, with nothing counted yet.
    pub fn of(forest: &Forest) -> Self {
        Self::from_bins(forest.meta(), forest.bins())
    }

    /// The training ranges from inputs' descriptions and their bins (one each, in
    /// the same order).
    pub fn from_bins(meta: &[FeatureMeta], bins: &[FeatureBins]) -> Self {
        let familiar: Vec<Familiar> = meta
            .iter()
            .zip(bins)
            .map(|(m, b)| match &m.kind {
                FeatureKind::Categorical { levels } => Familiar::Categories(levels.len()),
                FeatureKind::Numeric => match (b.lo.first(), b.hi.last()) {
                    (Some(&lo), Some(&hi)) if lo <= hi => Familiar::Range(lo, hi),
                    _ => Familiar::Unknown,
                },
            })
            .collect();
        let p = familiar.len();
        Unfamiliar {
            familiar,
            counts: vec![0; p],
            examples: vec![Vec::new(); p],
            rows: 0,
        }
    }

    /// What is familiar for each input.
    pub fn familiar(&self) -> &[Familiar] {
        &self.familiar
    }

    /// Checks a block of encoded rows (rows by inputs): counts the unfamiliar cells
    /// per input and sets `flags[i]` to whether row `i` holds any (`flags` has one
    /// entry per row). Returns the number of rows flagged in this block.
    ///
    /// # Panics
    /// When `x` has another number of columns than the model has inputs, or `flags`
    /// another length than `x` has rows.
    pub fn check_block(&mut self, x: ArrayView2<'_, f64>, flags: &mut [bool]) -> u64 {
        assert_eq!(x.ncols(), self.familiar.len(), "one column per input");
        assert_eq!(x.nrows(), flags.len(), "one flag per row");
        let mut flagged = 0;
        for (row, flag) in x.rows().into_iter().zip(flags.iter_mut()) {
            *flag = false;
            for (j, &v) in row.iter().enumerate() {
                if self.familiar[j].outside(v) {
                    *flag = true;
                    self.counts[j] += 1;
                    let ex = &mut self.examples[j];
                    if ex.len() < EXAMPLES && !ex.contains(&v) {
                        ex.push(v);
                    }
                }
            }
            flagged += u64::from(*flag);
        }
        self.rows += flagged;
        flagged
    }

    /// Cells outside what training saw, per input, over every block checked.
    pub fn counts(&self) -> &[u64] {
        &self.counts
    }

    /// Up to [`EXAMPLES`] distinct such values of input `j`, in the order met.
    pub fn examples(&self, j: usize) -> &[f64] {
        &self.examples[j]
    }

    /// Rows holding at least one such cell, over every block checked.
    pub fn rows(&self) -> u64 {
        self.rows
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use ndarray::array;

    /// A numeric input whose training values ran from 1.0 to 6.9 in three bins, and a
    /// categorical one with two categories.
    fn model_inputs() -> (Vec<FeatureMeta>, Vec<FeatureBins>) {
        let meta = vec![
            FeatureMeta::numeric("length"),
            FeatureMeta::categorical("colour", vec!["blue".into(), "red".into()]),
        ];
        let bins = vec![
            FeatureBins {
                n_bins: 3,
                lo: vec![1.0, 2.5, 4.0],
                hi: vec![2.0, 3.5, 6.9],
                categorical: false,
            },
            FeatureBins {
                n_bins: 2,
                lo: Vec::new(),
                hi: Vec::new(),
                categorical: true,
            },
        ];
        (meta, bins)
    }

    #[test]
    fn values_just_outside_the_training_range_are_counted_and_just_inside_are_not() {
        let (meta, bins) = model_inputs();
        let mut u = Unfamiliar::from_bins(&meta, &bins);
        assert_eq!(u.familiar()[0], Familiar::Range(1.0, 6.9));
        let below = 1.0 - f64::EPSILON;
        let above = 6.9_f64.next_up();
        let x = array![
            [1.0, 0.0],           // lowest training value: familiar
            [6.9, 1.0],           // highest: familiar
            [below, 0.0],         // just below
            [above, 1.0],         // just above
            [f64::NAN, f64::NAN], // missing: never counted
            [3.0, 2.0],           // a category code the model never had
            [99.0, 0.0],
            [99.0, 0.0],
        ];
        let mut flags = vec![true; x.nrows()];
        let flagged = u.check_block(x.view(), &mut flags);
        assert_eq!(
            flags,
            [false, false, true, true, false, true, true, true],
            "rows flagged"
        );
        assert_eq!(flagged, 5);
        assert_eq!(u.counts(), &[4, 1]);
        // Examples are distinct: 99 appears once.
        assert_eq!(u.examples(0), &[below, above, 99.0]);
        assert_eq!(u.examples(1), &[2.0]);

        // A second block adds to the counts.
        let mut flags = vec![false; 2];
        assert_eq!(
            u.check_block(array![[0.0, 0.0], [5.0, 1.0]].view(), &mut flags),
            1
        );
        assert_eq!(flags, [true, false]);
        assert_eq!(u.counts(), &[5, 1]);
        assert_eq!(u.rows(), 6);
    }

    #[test]
    fn an_input_without_training_values_flags_nothing() {
        let meta = vec![FeatureMeta::numeric("empty")];
        let bins = vec![FeatureBins {
            n_bins: 0,
            lo: Vec::new(),
            hi: Vec::new(),
            categorical: false,
        }];
        let mut u = Unfamiliar::from_bins(&meta, &bins);
        assert_eq!(u.familiar()[0], Familiar::Unknown);
        let mut flags = vec![true];
        assert_eq!(u.check_block(array![[1e300]].view(), &mut flags), 0);
        assert_eq!(flags, [false]);
        assert_eq!(u.counts(), &[0]);
    }
}
