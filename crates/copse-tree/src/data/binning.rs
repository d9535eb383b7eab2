//! Binning: turning a rows-by-inputs matrix into small integer bin codes, once per
//! data set. Exact bins when an input has few distinct values, quantile cuts
//! otherwise, both from one radix sort of each numeric column.
use super::{
    BinCodes, BinnedData, FeatureBins, FeatureKind, FeatureMeta, INPUT_LIMIT, MISSING_BIN,
};
use crate::error::{Error, ErrorKind, Result};
use ndarray::ArrayView2;
use std::sync::OnceLock;

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
    ///
    /// # Example
    /// ```
    /// use copse_tree::{BinnedData, FeatureMeta, MISSING_BIN};
    /// use ndarray::array;
    ///
    /// // A numeric input with a missing value, and a categorical one (codes 0 and 1).
    /// let x = array![[0.5, 1.0], [f64::NAN, 0.0], [2.0, 1.0]];
    /// let meta = vec![
    ///     FeatureMeta::numeric("length"),
    ///     FeatureMeta::categorical("colour", vec!["red".into(), "blue".into()]),
    /// ];
    /// let data = BinnedData::new(x.view(), &meta, 256)?;
    /// assert_eq!(data.bin(1, 0), MISSING_BIN);
    /// assert_eq!(data.candidate_thresholds(0), Some(1));
    /// assert_eq!(data.bin(0, 1), 2); // category code c is bin c + 1
    /// # Ok::<(), copse_tree::Error>(())
    /// ```
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
        // Codes of every cell, column-major, two bytes each until the widths are
        // known. Numeric columns are coded while they are binned (from their sorted
        // order); categorical codes are checked in a second pass, so errors keep their
        // order: unusable numbers anywhere before bad categories.
        let mut all = vec![0u16; n_rows * p];
        // Columns are read in groups of eight, one pass over the rows per group, so a
        // row-major matrix is not streamed through the cache once per column.
        const GROUP: usize = 8;
        // One pair of spare buffers serves every column's sort in turn.
        let mut sorters: Vec<Sorter> = (0..GROUP.min(p)).map(|_| Sorter::default()).collect();
        let mut spare = Spare::default();
        let mut bins = Vec::with_capacity(p);
        for j0 in (0..p).step_by(GROUP) {
            let j1 = (j0 + GROUP).min(p);
            let mut first_infinite: Vec<Option<(usize, f64)>> = vec![None; j1 - j0];
            for s in sorters.iter_mut() {
                s.keys.clear();
                s.rows.clear();
            }
            for (i, row) in x.rows().into_iter().enumerate() {
                for (jj, (s, bad)) in sorters.iter_mut().zip(&mut first_infinite).enumerate() {
                    let j = j0 + jj;
                    if j >= j1 || meta[j].is_categorical() {
                        continue;
                    }
                    let v = row[j];
                    if v.is_nan() {
                        continue;
                    }
                    if v.is_infinite() {
                        bad.get_or_insert((i, v));
                    }
                    s.keys.push(order_key(v));
                    s.rows.push(i as u32);
                }
            }
            for j in j0..j1 {
                let m = &meta[j];
                let b = match &m.kind {
                    FeatureKind::Numeric => {
                        if let Some((i, v)) = first_infinite[j - j0] {
                            return Err(Error::new(
                                ErrorKind::NonFinite,
                                format!("row {i}, input '{}': {v} is not a finite number; fix the value or mark it missing", m.name),
                            ));
                        }
                        numeric_bins(
                            &mut sorters[j - j0],
                            &mut spare,
                            bin_limit - 1,
                            &mut all[j * n_rows..(j + 1) * n_rows],
                        )
                    }
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
        }
        drop(sorters);
        drop(spare);
        let mut occupied = Vec::with_capacity(p);
        let mut seen: Vec<bool> = Vec::new();
        for (j, (m, b)) in meta.iter().zip(&bins).enumerate() {
            let dst = &mut all[j * n_rows..(j + 1) * n_rows];
            if b.categorical {
                for ((i, &v), d) in x.column(j).iter().enumerate().zip(dst.iter_mut()) {
                    let code = bin_of(v, b).ok_or_else(|| {
                        Error::new(
                            ErrorKind::BadCategory,
                            format!(
                                "row {i}, input '{}': {v} is not one of the {} category codes",
                                m.name, b.n_bins
                            ),
                        )
                    })?;
                    *d = code as u16;
                }
            }
            seen.clear();
            seen.resize(b.n_bins + 1, false);
            for &c in dst.iter() {
                seen[c as usize] = true;
            }
            occupied.push(seen[1..].iter().filter(|&&s| s).count());
        }
        let wide = bins.iter().any(|b| b.n_bins > 255);
        let codes = if wide {
            BinCodes::Wide(all)
        } else {
            BinCodes::Narrow(all.into_iter().map(|c| c as u8).collect())
        };
        Ok(BinnedData {
            n_rows,
            meta: meta.to_vec(),
            bins,
            occupied,
            codes: OnceLock::from(codes),
            row_words: OnceLock::new(),
        })
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

/// An integer whose unsigned order is the order of `f64::total_cmp` (negative numbers
/// have every bit flipped, others only the sign bit), and its inverse.
fn order_key(x: f64) -> u64 {
    let b = x.to_bits();
    if b >> 63 == 1 {
        !b
    } else {
        b | 1 << 63
    }
}

fn from_order_key(k: u64) -> f64 {
    f64::from_bits(if k >> 63 == 1 { k & !(1 << 63) } else { !k })
}

/// Numeric bin layout with at most `max_value_bins` value bins, from the column's
/// non-missing values as order keys with their rows (in `sorter`, unsorted).
///
/// Also writes the code of every row into `codes` (0 for missing): the first bin whose
/// highest value is at least the row's value.
fn numeric_bins(
    sorter: &mut Sorter,
    spare: &mut Spare,
    max_value_bins: usize,
    codes: &mut [u16],
) -> FeatureBins {
    sorter.sort(spare);
    let v: Vec<f64> = sorter.keys.iter().map(|&k| from_order_key(k)).collect();
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
    // Codes, walking the values upwards alongside the bins.
    let n_bins = lo.len();
    let mut b = 0;
    for (&x, &r) in v.iter().zip(&sorter.rows) {
        while b + 1 < n_bins && hi[b] < x {
            b += 1;
        }
        codes[r as usize] = (b + 1) as u16;
    }
    FeatureBins {
        n_bins,
        lo,
        hi,
        categorical: false,
    }
}

/// Buffers of a least-significant-digit radix sort of 64-bit keys carrying a row
/// number, reused across columns.
#[derive(Default)]
struct Sorter {
    keys: Vec<u64>,
    rows: Vec<u32>,
}

/// The second pair of buffers each distribution pass of a sort writes into; one pair
/// serves every column, since columns are sorted one at a time.
#[derive(Default)]
struct Spare {
    keys: Vec<u64>,
    rows: Vec<u32>,
}

impl Sorter {
    /// Sorts `keys` ascending, moving `rows` alongside: stable distribution passes on
    /// the four high bytes (skipping bytes all keys share), then each run of keys that
    /// agree on those bytes is put in full order. Runs are short for continuous
    /// values and hold equal keys for discrete ones, so the second step costs little.
    fn sort(&mut self, spare: &mut Spare) {
        let n = self.keys.len();
        let mut counts = vec![[0usize; 256]; 4];
        for &k in &self.keys {
            for (d, c) in counts.iter_mut().enumerate() {
                c[(k >> (32 + 8 * d)) as usize & 255] += 1;
            }
        }
        spare.keys.resize(n, 0);
        spare.rows.resize(n, 0);
        for (d, c) in counts.iter().enumerate() {
            if c.contains(&n) {
                continue;
            }
            let shift = 32 + 8 * d;
            let mut next = [0usize; 256];
            let mut at = 0;
            for (slot, &count) in next.iter_mut().zip(c.iter()) {
                *slot = at;
                at += count;
            }
            for (&k, &r) in self.keys.iter().zip(&self.rows) {
                let digit = (k >> shift) as usize & 255;
                let to = next[digit];
                spare.keys[to] = k;
                spare.rows[to] = r;
                next[digit] = to + 1;
            }
            std::mem::swap(&mut self.keys, &mut spare.keys);
            std::mem::swap(&mut self.rows, &mut spare.rows);
        }
        let mut start = 0;
        while start < n {
            let high = self.keys[start] >> 32;
            let mut end = start + 1;
            let mut mixed = false;
            while end < n && self.keys[end] >> 32 == high {
                mixed |= self.keys[end] != self.keys[start];
                end += 1;
            }
            if mixed {
                self.sort_run(start, end);
            }
            start = end;
        }
    }

    /// Full-key order within `start..end`.
    fn sort_run(&mut self, start: usize, end: usize) {
        let (keys, rows) = (&mut self.keys[start..end], &mut self.rows[start..end]);
        if keys.len() <= 32 {
            for i in 1..keys.len() {
                let (k, r) = (keys[i], rows[i]);
                let mut j = i;
                while j > 0 && keys[j - 1] > k {
                    keys[j] = keys[j - 1];
                    rows[j] = rows[j - 1];
                    j -= 1;
                }
                keys[j] = k;
                rows[j] = r;
            }
        } else {
            let mut pairs: Vec<(u64, u32)> =
                keys.iter().copied().zip(rows.iter().copied()).collect();
            pairs.sort_unstable_by_key(|p| p.0);
            for ((k, r), (pk, pr)) in keys.iter_mut().zip(rows.iter_mut()).zip(pairs) {
                *k = pk;
                *r = pr;
            }
        }
    }
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
    fn codes_are_the_first_bin_reaching_each_value() {
        // The definition of a numeric code, checked by binary search over the bins, on
        // values that stress the sort: signs, both zeros, subnormals, huge values,
        // near-ties and repeats; exact and quantile binning; one and two bytes.
        use rand::{RngExt, SeedableRng};
        let mut rng = rand_xoshiro::Xoshiro256PlusPlus::seed_from_u64(8);
        for case in 0..24 {
            let n = [3, 40, 900, 5000][case % 4];
            let vals: Vec<f64> = (0..n)
                .map(|_| match case % 6 {
                    0 => rng.random_range(-1e6..1e6),
                    1 => [0.0, -0.0, 1.0, -1.0][rng.random_range(0..4)],
                    2 => {
                        f64::from_bits(rng.random_range(0..40))
                            * if rng.random() { -1.0 } else { 1.0 }
                    }
                    3 => 1e15 + f64::from(rng.random_range(0..3000)) * 0.125,
                    4 => {
                        if rng.random_bool(0.3) {
                            f64::NAN
                        } else {
                            f64::from(rng.random_range(-50..50))
                        }
                    }
                    _ => 1.0 + f64::from(rng.random_range(0..60)) * f64::EPSILON,
                })
                .collect();
            let x = Array2::from_shape_vec((n, 1), vals.clone()).expect("test input is valid");
            for limit in [3, 17, 256, 4000] {
                let d = BinnedData::new(x.view(), &[FeatureMeta::numeric("a")], limit)
                    .expect("test input is valid");
                let b = &d.bins()[0];
                for k in 1..b.n_bins {
                    assert!(b.hi[k - 1] < b.lo[k], "case {case}: bins out of order");
                }
                for (i, &v) in vals.iter().enumerate() {
                    let want = if v.is_nan() {
                        MISSING_BIN
                    } else {
                        b.hi.partition_point(|&h| h < v).min(b.n_bins - 1) + 1
                    };
                    assert_eq!(d.bin(i, 0), want, "case {case}, limit {limit}, row {i}");
                }
            }
        }
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
