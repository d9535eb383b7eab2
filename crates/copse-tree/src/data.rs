//! Input descriptions and the binned, column-major training matrix.
//!
//! Every input is turned into small integer bins once per data set, so that split
//! search is a histogram pass. Bin 0 ([`MISSING_BIN`]) is reserved for missing values
//! in every input. Numeric bins: when an input has no more distinct values than the
//! bin limit allows, every distinct value has its own bin and every midpoint between
//! successive distinct values is a candidate threshold (exact search); otherwise bins
//! are cut at quantiles of the data, and thresholds are still midpoints between the
//! data values on each side of a cut. Categorical bins: category code `c` is bin `c+1`.
use crate::error::{Error, ErrorKind, Result};
use ndarray::ArrayView2;
use serde::{Deserialize, Serialize};

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

/// The training matrix, binned once and stored column-major.
#[derive(Debug, Clone)]
pub struct BinnedData {
    n_rows: usize,
    meta: Vec<FeatureMeta>,
    bins: Vec<FeatureBins>,
    /// Number of value bins holding at least one row, per input.
    occupied: Vec<usize>,
    codes: BinCodes,
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
    /// Bins a rows-by-inputs matrix. Numeric inputs: NaN is missing, infinities are an
    /// error. Categorical inputs: whole-number codes `0..levels`, NaN is missing.
    /// `bin_limit` is the number of bins a numeric input may use, counting the missing
    /// bin: the default 256 gives 255 value bins and one byte per cell.
    ///
    /// # Errors
    /// `EmptyData` with no rows or inputs, `LengthMismatch` when `meta` does not match
    /// the columns, `NonFinite` for an infinite number, `BadCategory` for a code that
    /// is not a listed category, `TooLarge` beyond 65534 inputs or 65535 bins,
    /// `InvalidSetting` for a bin limit below 3.
    pub fn new(x: ArrayView2<'_, f64>, meta: &[FeatureMeta], bin_limit: usize) -> Result<Self> {
        let (n_rows, p) = x.dim();
        if n_rows == 0 || p == 0 {
            return Err(Error::new(
                ErrorKind::EmptyData,
                "the data has no rows or no inputs; supply at least two rows and one input",
            ));
        }
        if meta.len() != p {
            return Err(Error::new(
                ErrorKind::LengthMismatch,
                format!("{} input descriptions for {p} columns", meta.len()),
            ));
        }
        if p > INPUT_LIMIT {
            return Err(Error::new(
                ErrorKind::TooLarge,
                format!("{p} inputs; at most {INPUT_LIMIT} are supported"),
            ));
        }
        if !(3..=65536).contains(&bin_limit) {
            return Err(Error::new(
                ErrorKind::InvalidSetting,
                format!("bin limit {bin_limit} is out of range; use 3 to 65536"),
            ));
        }
        let mut bins = Vec::with_capacity(p);
        for (j, m) in meta.iter().enumerate() {
            let col = x.column(j);
            let b = match &m.kind {
                FeatureKind::Numeric => numeric_bins(col.iter().copied(), &m.name, bin_limit - 1)?,
                FeatureKind::Categorical { levels } => {
                    if levels.len() > 65535 {
                        return Err(Error::new(
                            ErrorKind::TooLarge,
                            format!(
                                "input '{}' has {} categories; at most 65535 are supported",
                                m.name,
                                levels.len()
                            ),
                        ));
                    }
                    FeatureBins {
                        n_bins: levels.len(),
                        lo: Vec::new(),
                        hi: Vec::new(),
                        categorical: true,
                    }
                }
            };
            bins.push(b);
        }
        let wide = bins.iter().any(|b| b.n_bins > 255);
        let mut codes = if wide {
            BinCodes::Wide(Vec::with_capacity(n_rows * p))
        } else {
            BinCodes::Narrow(Vec::with_capacity(n_rows * p))
        };
        let mut occupied = Vec::with_capacity(p);
        let mut seen: Vec<bool> = Vec::new();
        for (j, (m, b)) in meta.iter().zip(&bins).enumerate() {
            seen.clear();
            seen.resize(b.n_bins + 1, false);
            for (i, &v) in x.column(j).iter().enumerate() {
                let code = bin_of(v, b).ok_or_else(|| {
                    Error::new(
                        ErrorKind::BadCategory,
                        format!(
                            "row {i}, input '{}': {v} is not one of the {} category codes",
                            m.name, b.n_bins
                        ),
                    )
                })?;
                seen[code] = true;
                match &mut codes {
                    BinCodes::Narrow(c) => c.push(code as u8),
                    BinCodes::Wide(c) => c.push(code as u16),
                }
            }
            occupied.push(seen[1..].iter().filter(|&&s| s).count());
        }
        Ok(BinnedData {
            n_rows,
            meta: meta.to_vec(),
            bins,
            occupied,
            codes,
        })
    }

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
        match &self.codes {
            BinCodes::Narrow(c) => c[j * self.n_rows + i] as usize,
            BinCodes::Wide(c) => c[j * self.n_rows + i] as usize,
        }
    }

    pub(crate) fn codes(&self) -> &BinCodes {
        &self.codes
    }
}

/// Bin of one value under a layout; `None` for a categorical code that is not listed.
fn bin_of(v: f64, b: &FeatureBins) -> Option<usize> {
    if v.is_nan() {
        return Some(MISSING_BIN);
    }
    if b.categorical {
        let ok = v >= 0.0 && v.fract() == 0.0 && (v as usize) < b.n_bins;
        return ok.then(|| v as usize + 1);
    }
    // First bin whose highest value is >= v; values are always among the data.
    Some(
        b.hi.partition_point(|&h| h < v)
            .min(b.n_bins.saturating_sub(1))
            + 1,
    )
}

/// Numeric bin layout with at most `max_value_bins` value bins.
fn numeric_bins(
    values: impl Iterator<Item = f64>,
    name: &str,
    max_value_bins: usize,
) -> Result<FeatureBins> {
    let mut v: Vec<f64> = Vec::new();
    for (i, x) in values.enumerate() {
        if x.is_infinite() {
            return Err(Error::new(
                ErrorKind::NonFinite,
                format!("row {i}, input '{name}': {x} is not a finite number; fix the value or mark it missing"),
            ));
        }
        if !x.is_nan() {
            v.push(x);
        }
    }
    v.sort_by(f64::total_cmp);
    // Distinct values with their counts; -0.0 and 0.0 are one value.
    let mut distinct: Vec<(f64, usize)> = Vec::new();
    for x in v.iter().copied() {
        match distinct.last_mut() {
            Some((d, c)) if *d == x => *c += 1,
            _ => distinct.push((x, 1)),
        }
    }
    let mut lo = Vec::new();
    let mut hi = Vec::new();
    if distinct.len() <= max_value_bins {
        for &(d, _) in &distinct {
            lo.push(d);
            hi.push(d);
        }
    } else {
        // Quantile cuts: close a bin once it holds its share of the cases, so each
        // bin has about n / max_value_bins cases; a value is never split across bins.
        let n = v.len() as f64;
        let mut cum = 0usize;
        let mut start = 0usize;
        for (k, &(_, c)) in distinct.iter().enumerate() {
            cum += c;
            let closed = lo.len() + 1;
            let remaining_values = distinct.len() - k - 1;
            let remaining_bins = max_value_bins - closed;
            let due = cum as f64 >= n * closed as f64 / max_value_bins as f64;
            if (due && remaining_bins > 0)
                || remaining_values == remaining_bins
                || remaining_values == 0
            {
                lo.push(distinct[start].0);
                hi.push(distinct[k].0);
                start = k + 1;
                if remaining_bins == 0 {
                    break;
                }
            }
        }
        if start < distinct.len() {
            // Fold whatever is left into the last bin.
            if let Some(h) = hi.last_mut() {
                *h = distinct[distinct.len() - 1].0;
            }
        }
    }
    Ok(FeatureBins {
        n_bins: lo.len(),
        lo,
        hi,
        categorical: false,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use ndarray::Array2;

    #[test]
    fn exact_bins_hold_one_distinct_value_each() {
        let x = Array2::from_shape_vec((6, 1), vec![3.0, 1.0, f64::NAN, 3.0, 2.0, 1.0])
            .expect("test input is valid");
        let d = BinnedData::new(x.view(), &[FeatureMeta::numeric("a")], 256)
            .expect("test input is valid");
        assert_eq!(d.bins()[0].n_bins, 3);
        let got: Vec<usize> = (0..6).map(|i| d.bin(i, 0)).collect();
        assert_eq!(got, vec![3, 1, MISSING_BIN, 3, 2, 1]);
        assert_eq!(d.bins()[0].threshold_between(1, 2), 1.5);
    }

    #[test]
    fn quantile_bins_respect_the_limit_and_order() {
        let vals: Vec<f64> = (0..1000).map(|i| ((i * 7919) % 1000) as f64).collect();
        let x = Array2::from_shape_vec((1000, 1), vals.clone()).expect("test input is valid");
        let d = BinnedData::new(x.view(), &[FeatureMeta::numeric("a")], 11)
            .expect("test input is valid");
        let b = &d.bins()[0];
        assert_eq!(b.n_bins, 10);
        for k in 1..b.n_bins {
            assert!(b.hi[k - 1] < b.lo[k]);
        }
        for (i, &v) in vals.iter().enumerate() {
            let bin = d.bin(i, 0);
            assert!(b.lo[bin - 1] <= v && v <= b.hi[bin - 1]);
        }
    }

    #[test]
    fn infinity_is_refused_with_row_and_name() {
        let x =
            Array2::from_shape_vec((2, 1), vec![1.0, f64::INFINITY]).expect("test input is valid");
        let e = BinnedData::new(x.view(), &[FeatureMeta::numeric("depth")], 256)
            .expect_err("must be refused");
        assert_eq!(e.kind(), ErrorKind::NonFinite);
        assert!(e.message().contains("row 1") && e.message().contains("depth"));
    }

    #[test]
    fn unknown_category_code_is_refused() {
        let x = Array2::from_shape_vec((2, 1), vec![0.0, 2.0]).expect("test input is valid");
        let m = FeatureMeta::categorical("c", vec!["a".into(), "b".into()]);
        let e = BinnedData::new(x.view(), &[m], 256).expect_err("must be refused");
        assert_eq!(e.kind(), ErrorKind::BadCategory);
    }
}
