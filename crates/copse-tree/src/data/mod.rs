//! Input descriptions and the binned, column-major training matrix.
//!
//! Every input is turned into small integer bins once per data set, so that split
//! search is a histogram pass. Bin 0 ([`MISSING_BIN`]) is reserved for missing values
//! in every input. Numeric bins: when an input has no more distinct values than the
//! bin limit allows, every distinct value has its own bin and every midpoint between
//! successive distinct values is a candidate threshold (exact search); otherwise bins
//! are cut at quantiles of the data, and thresholds are still midpoints between the
//! data values on each side of a cut. Categorical bins: category code `c` is bin `c+1`.
//!
//! This file holds the descriptions and the binned matrix; the binning itself
//! ([`BinnedData::new`]) is in `binning.rs`.
mod binning;

use serde::{Deserialize, Serialize};
use std::sync::OnceLock;

/// The reserved bin of missing values, in every input.
pub const MISSING_BIN: usize = 0;

/// Inputs are addressed by `u16` in nodes, and `u16::MAX` marks a leaf.
pub(crate) const INPUT_LIMIT: usize = u16::MAX as usize - 1;

/// Kind of one input.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub enum FeatureKind {
    /// Real numbers; NaN is missing.
    Numeric,
    /// Categories given as codes `0..levels.len()` (stored as f64); NaN is missing.
    Categorical {
        /// Category labels, in code order.
        levels: Vec<String>,
    },
}

/// Name and kind of one input.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct FeatureMeta {
    /// Column name.
    pub name: String,
    /// Numeric or categorical.
    pub kind: FeatureKind,
}

impl FeatureMeta {
    /// A numeric input.
    pub fn numeric(name: impl Into<String>) -> Self {
        FeatureMeta {
            name: name.into(),
            kind: FeatureKind::Numeric,
        }
    }

    /// A categorical input with the given labels.
    pub fn categorical(name: impl Into<String>, levels: Vec<String>) -> Self {
        FeatureMeta {
            name: name.into(),
            kind: FeatureKind::Categorical { levels },
        }
    }

    /// True for a categorical input.
    pub fn is_categorical(&self) -> bool {
        matches!(self.kind, FeatureKind::Categorical { .. })
    }
}

/// Bin layout of one input.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct FeatureBins {
    /// Number of value bins (bins `1..=n_bins`; bin 0 holds missing values).
    pub n_bins: usize,
    /// For numeric inputs, lowest data value in each value bin (index `b - 1`).
    pub lo: Vec<f64>,
    /// For numeric inputs, highest data value in each value bin (index `b - 1`).
    pub hi: Vec<f64>,
    /// True for a categorical input.
    pub categorical: bool,
}

impl FeatureBins {
    /// Threshold between value bins `a < b` (no data value lies between them): the
    /// midpoint of the highest value of `a` and the lowest of `b`. When the two values
    /// are adjacent floating-point numbers the midpoint rounds onto one of them; the
    /// threshold then falls back to the lower value so `x <= t` still sends `a` left
    /// and `b` right.
    ///
    /// When `y - x` overflows (values of opposite sign near the largest finite number),
    /// the midpoint is taken as `x / 2 + y / 2`, which cannot overflow.
    pub fn threshold_between(&self, a: usize, b: usize) -> f64 {
        let (x, y) = (self.hi[a - 1], self.lo[b - 1]);
        let gap = y - x;
        let t = if gap.is_finite() {
            x + gap / 2.0
        } else {
            x / 2.0 + y / 2.0
        };
        if t >= y {
            x
        } else {
            t
        }
    }
}

/// Bin codes of the whole matrix, one byte each when every input fits in 256 bins.
#[derive(Debug, Clone)]
pub(crate) enum BinCodes {
    Narrow(Vec<u8>),
    Wide(Vec<u16>),
}

/// The bin codes again, row by row, packed into 64-bit words: 8 one-byte codes (or 4
/// two-byte codes) per word, `per_row` words per row. The two-class grower copies a
/// tree's rows out of this into node-ordered blocks, so its histogram passes read
/// memory in order instead of gathering one code per row.
#[derive(Debug, Clone)]
pub(crate) struct RowWords {
    /// Words per row.
    pub(crate) per_row: usize,
    /// Bits per code: 8 or 16.
    pub(crate) bits: usize,
    /// `n_rows * per_row` words.
    pub(crate) words: Vec<u64>,
}

impl RowWords {
    /// Code of row `i` in input `j`.
    fn code(&self, i: usize, j: usize) -> usize {
        let per_word = 64 / self.bits;
        let word = self.words[i * self.per_row + j / per_word];
        ((word >> ((j % per_word) * self.bits)) & ((1 << self.bits) - 1)) as usize
    }
}

/// The training matrix, binned once and stored column-major (or row by row only,
/// after [`BinnedData::into_row_major`]).
#[derive(Debug, Clone)]
pub struct BinnedData {
    n_rows: usize,
    meta: Vec<FeatureMeta>,
    bins: Vec<FeatureBins>,
    /// Number of value bins holding at least one row, per input.
    occupied: Vec<usize>,
    /// Column-major codes: made by binning, or again from the rows when asked for
    /// after [`BinnedData::into_row_major`] dropped them. At least one of `codes` and
    /// `row_words` is always set.
    codes: OnceLock<BinCodes>,
    /// Row-major copy, built on first use by a grower that wants it.
    row_words: OnceLock<RowWords>,
}

/// Marker trait for the two bin code widths, so split search is written once.
pub(crate) trait BinCode: Copy + Send + Sync {
    fn idx(self) -> usize;
}
impl BinCode for u8 {
    #[inline(always)]
    fn idx(self) -> usize {
        self as usize
    }
}
impl BinCode for u16 {
    #[inline(always)]
    fn idx(self) -> usize {
        self as usize
    }
}

impl BinnedData {
    /// Number of rows.
    pub fn n_rows(&self) -> usize {
        self.n_rows
    }

    /// Number of inputs.
    pub fn n_features(&self) -> usize {
        self.meta.len()
    }

    /// Input descriptions.
    pub fn meta(&self) -> &[FeatureMeta] {
        &self.meta
    }

    /// Bin layout of each input.
    pub fn bins(&self) -> &[FeatureBins] {
        &self.bins
    }

    /// Number of value bins of input `j` that hold at least one row (missing values
    /// not counted). For a numeric input binned exactly this is its number of distinct
    /// values; for a categorical input, the number of categories that occur.
    pub fn occupied_bins(&self, j: usize) -> usize {
        self.occupied[j]
    }

    /// Number of candidate thresholds of numeric input `j` over the whole data: one
    /// between each pair of successive occupied bins, so `k - 1` for an input with `k`
    /// distinct values when binning is exact. `None` for a categorical input, whose
    /// splits are category subsets rather than thresholds.
    pub fn candidate_thresholds(&self, j: usize) -> Option<usize> {
        (!self.bins[j].categorical).then(|| self.occupied[j].saturating_sub(1))
    }

    /// Largest number of bins of any input, counting the missing bin.
    pub fn max_bins(&self) -> usize {
        self.bins.iter().map(|b| b.n_bins + 1).max().unwrap_or(1)
    }

    /// Bin of row `i` in input `j`.
    pub fn bin(&self, i: usize, j: usize) -> usize {
        match self.codes.get() {
            Some(BinCodes::Narrow(c)) => c[j * self.n_rows + i] as usize,
            Some(BinCodes::Wide(c)) => c[j * self.n_rows + i] as usize,
            None => self.row_words().code(i, j),
        }
    }

    /// The same data keeping its codes row by row only, the layout the two-class
    /// grower reads: the column-major copy is dropped, which saves one byte (two with
    /// more than 255 bins) per row and input while trees grow. The columns are made
    /// again from the rows if a grower asks for them (regression, several classes,
    /// fractional case weights).
    // For the forest engine, which knows which grower its outcome takes; not part of
    // the stable API.
    #[doc(hidden)]
    pub fn into_row_major(mut self) -> Self {
        self.row_words();
        self.codes = OnceLock::new();
        self
    }

    /// The column-major codes, made again from the rows (once) when they were dropped.
    pub(crate) fn codes(&self) -> &BinCodes {
        self.codes.get_or_init(|| {
            let words = self.row_words();
            let (n, p) = (self.n_rows, self.meta.len());
            if words.bits == 8 {
                let mut c = Vec::with_capacity(n * p);
                for j in 0..p {
                    c.extend((0..n).map(|i| words.code(i, j) as u8));
                }
                BinCodes::Narrow(c)
            } else {
                let mut c = Vec::with_capacity(n * p);
                for j in 0..p {
                    c.extend((0..n).map(|i| words.code(i, j) as u16));
                }
                BinCodes::Wide(c)
            }
        })
    }

    /// The row-major packed codes, built once (by whichever thread asks first).
    pub(crate) fn row_words(&self) -> &RowWords {
        self.row_words.get_or_init(|| {
            let (n, p) = (self.n_rows, self.meta.len());
            let codes = self.codes();
            let bits = match codes {
                BinCodes::Narrow(_) => 8,
                BinCodes::Wide(_) => 16,
            };
            let per_word = 64 / bits;
            let per_row = p.div_ceil(per_word);
            let mut words = vec![0u64; n * per_row];
            for j in 0..p {
                let (w, shift) = (j / per_word, (j % per_word) * bits);
                let dst = words.iter_mut().skip(w).step_by(per_row);
                match codes {
                    BinCodes::Narrow(c) => {
                        for (d, &v) in dst.zip(&c[j * n..(j + 1) * n]) {
                            *d |= u64::from(v) << shift;
                        }
                    }
                    BinCodes::Wide(c) => {
                        for (d, &v) in dst.zip(&c[j * n..(j + 1) * n]) {
                            *d |= u64::from(v) << shift;
                        }
                    }
                }
            }
            RowWords {
                per_row,
                bits,
                words,
            }
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use ndarray::Array2;

    #[test]
    fn row_words_hold_every_code() {
        // The row-major copy must hold the same code as the columns, one and two bytes
        // per code, with inputs spilling over several words.
        let (n, p) = (300, 11);
        let x = Array2::from_shape_fn((n, p), |(i, j)| {
            if (i + j) % 13 == 0 {
                f64::NAN
            } else {
                ((i * (j + 3) * 7919) % 1009) as f64
            }
        });
        let meta: Vec<FeatureMeta> = (0..p)
            .map(|j| FeatureMeta::numeric(format!("x{j}")))
            .collect();
        for limit in [256, 2000] {
            let d = BinnedData::new(x.view(), &meta, limit).expect("test input is valid");
            let w = d.row_words();
            let per_word = 64 / w.bits;
            assert_eq!(w.bits, if limit == 256 { 8 } else { 16 });
            for i in 0..n {
                for j in 0..p {
                    let word = w.words[i * w.per_row + j / per_word];
                    let code = (word >> ((j % per_word) * w.bits)) & ((1 << w.bits) - 1);
                    assert_eq!(code as usize, d.bin(i, j), "row {i}, input {j}");
                }
            }
            // Rows only: every code read back from the rows, and the columns made
            // again from them equal to the ones binning made.
            let rows_only = d.clone().into_row_major();
            assert!(rows_only.codes.get().is_none());
            for i in 0..n {
                for j in 0..p {
                    assert_eq!(rows_only.bin(i, j), d.bin(i, j), "row {i}, input {j}");
                }
            }
            match (rows_only.codes(), d.codes()) {
                (BinCodes::Narrow(a), BinCodes::Narrow(b)) => assert_eq!(a, b),
                (BinCodes::Wide(a), BinCodes::Wide(b)) => assert_eq!(a, b),
                _ => panic!("the code width changed"),
            }
        }
    }
}
