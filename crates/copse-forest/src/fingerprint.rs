//! A compact fingerprint of the training rows kept in the model, so that a model judged
//! on rows it was trained on can say so: evaluating on training rows gives figures far
//! better than the model will do on new rows.
//!
//! The fingerprint is a Bloom filter (Bloom 1970, "Space/time trade-offs in hash coding
//! with allowable errors", CACM 13:422-426) over each training row's input values:
//! 8 bits a row (1 byte) and 6 hash positions per row, so a row that was not in training
//! is taken for one with probability (1 - e^(-6/8))^6 ≈ 2.2%, and a training row is
//! always recognised. Positions come from two 64-bit hashes by double hashing
//! (Kirsch & Mitzenmacher 2006, "Less hashing, same performance"); the hash is
//! SplitMix64's mix over the values' bits, fixed here so a model reads the same on
//! every machine and version.
use serde::{Deserialize, Serialize};

/// Bits per training row.
const BITS_PER_ROW: usize = 8;
/// Hash positions per row (close to the optimum 8 ln 2 ≈ 5.5 for 8 bits a row).
const PROBES: u64 = 6;

/// A Bloom filter of the training rows' input values.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct RowFingerprint {
    bits: Vec<u64>,
    rows: usize,
}

/// SplitMix64's output mix (Steele, Lea & Flood 2014).
#[inline]
fn mix(mut z: u64) -> u64 {
    z = (z ^ (z >> 30)).wrapping_mul(0xbf58_476d_1ce4_e5b9);
    z = (z ^ (z >> 27)).wrapping_mul(0x94d0_49bb_1331_11eb);
    z ^ (z >> 31)
}

/// A value's bits for hashing: every NaN alike, -0 as 0.
#[inline]
fn canonical(v: f64) -> u64 {
    if v.is_nan() {
        u64::MAX
    } else if v == 0.0 {
        0
    } else {
        v.to_bits()
    }
}

/// A 64-bit digest of a whole training set in row order: every input value of every
/// row, then the outcome (class code or value). Unlike the fingerprint it changes when
/// rows are reordered, since tree samples are drawn by row index; the parts of one
/// forest ([`crate::part`]) carry it so a merge can tell they saw the same rows.
pub(crate) fn rows_digest(x: ndarray::ArrayView2<'_, f64>, outcome: &crate::Outcome) -> u64 {
    let (n, p) = x.dim();
    let mut h = mix(0x452821e638d01377 ^ n as u64) ^ mix(p as u64);
    for (i, row) in x.rows().into_iter().enumerate() {
        for &v in row {
            h = mix(h ^ canonical(v)).wrapping_add(0x9e37_79b9_7f4a_7c15);
        }
        let y = match outcome {
            crate::Outcome::Classes { codes, .. } => u64::from(codes[i]),
            crate::Outcome::Values(v) => canonical(v[i]),
        };
        h = mix(h.rotate_left(29) ^ y ^ 0xbe54_66cf_34e9_0c6c);
    }
    h
}

/// Two independent 64-bit hashes of a row's values (every NaN hashes alike, as does
/// -0 with 0, since both read the same).
fn hashes(row: impl Iterator<Item = f64>) -> (u64, u64) {
    let (mut a, mut b) = (0x243f_6a88_85a3_08d3u64, 0x1319_8a2e_0370_7344u64);
    for v in row {
        let bits = canonical(v);
        a = mix(a ^ bits).wrapping_add(0x9e37_79b9_7f4a_7c15);
        b = mix(b.rotate_left(17) ^ bits ^ 0xa076_1d64_78bd_642f);
    }
    (a, b | 1)
}

impl RowFingerprint {
    /// The fingerprint of the `n` rows `rows` (each an iterator over one row's input
    /// values).
    pub(crate) fn of_rows<R: Iterator<Item = f64>>(
        n: usize,
        rows: impl Iterator<Item = R>,
    ) -> Self {
        let m = (n * BITS_PER_ROW).div_ceil(64).max(1) * 64;
        let mut bits = vec![0u64; m / 64];
        for row in rows {
            let (a, b) = hashes(row);
            for i in 0..PROBES {
                let pos = (a.wrapping_add(i.wrapping_mul(b)) % m as u64) as usize;
                bits[pos / 64] |= 1 << (pos % 64);
            }
        }
        RowFingerprint { bits, rows: n }
    }

    /// Whether a row with these input values may have been a training row: always true
    /// for a training row; true by chance for about [`RowFingerprint::false_match_rate`]
    /// of other rows.
    pub fn contains(&self, row: impl Iterator<Item = f64>) -> bool {
        let m = (self.bits.len() * 64) as u64;
        let (a, b) = hashes(row);
        (0..PROBES).all(|i| {
            let pos = (a.wrapping_add(i.wrapping_mul(b)) % m) as usize;
            self.bits[pos / 64] >> (pos % 64) & 1 == 1
        })
    }

    /// Training rows fingerprinted.
    pub fn rows(&self) -> usize {
        self.rows
    }

    /// The chance that a row not in training matches: (1 - e^(-k n / m))^k.
    pub fn false_match_rate(&self) -> f64 {
        let (k, m) = (PROBES as f64, (self.bits.len() * 64) as f64);
        (1.0 - (-k * self.rows as f64 / m).exp()).powf(k)
    }

    /// Bytes the fingerprint takes.
    pub fn bytes(&self) -> usize {
        self.bits.len() * 8
    }

    /// Checks a fingerprint read from a file fits its row count.
    pub(crate) fn is_sound(&self) -> bool {
        let words = (self.rows * BITS_PER_ROW).div_ceil(64).max(1);
        self.bits.len() == words
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Every training row is recognised, and rows not in training match at about the
    /// stated rate: 20,000 fresh rows, expected 2.2% false matches, binomial standard
    /// error sqrt(0.022 x 0.978 / 20000) = 0.001, so the band 0.015..0.03 is over 6
    /// standard errors wide on each side.
    #[test]
    fn training_rows_always_match_and_others_rarely() {
        let rows: Vec<[f64; 3]> = (0..10_000)
            .map(|i| [i as f64, (i % 7) as f64, f64::NAN])
            .collect();
        let f = RowFingerprint::of_rows(rows.len(), rows.iter().map(|r| r.iter().copied()));
        assert!(rows.iter().all(|r| f.contains(r.iter().copied())));
        let fresh = (0..20_000)
            .filter(|&i| f.contains([i as f64 + 0.5, 1.0, 2.0].into_iter()))
            .count() as f64
            / 20_000.0;
        let rate = f.false_match_rate();
        assert!((rate - 0.0216).abs() < 0.001, "{rate}");
        assert!((0.015..0.03).contains(&fresh), "{fresh}");
        assert_eq!(f.bytes(), 10_000);
    }
}
