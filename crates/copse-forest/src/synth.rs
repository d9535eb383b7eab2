//! Seeded generators of the published synthetic benchmark problems, for checks and
//! benchmarks. Every generator takes the number of cases and a seed and returns the
//! same data for the same pair on any machine.
//!
//! Classification problems: twonorm, threenorm, ringnorm (Breiman 1996, "Bias,
//! variance and arcing classifiers", Technical Report 460, UC Berkeley) and waveform
//! (Breiman, Friedman, Olshen & Stone 1984, CART, pp. 49-55). Classes have equal prior
//! probability: each case's class is drawn uniformly. Regression: Friedman #1
//! (Friedman 1991, "Multivariate adaptive regression splines", Ann. Statist. 19:1-67).
use crate::outcome::Outcome;
use copse_tree::FeatureMeta;
use ndarray::Array2;
use rand::{RngExt, SeedableRng};
use rand_distr::StandardNormal;
use rand_xoshiro::Xoshiro256PlusPlus;

/// A generated data set.
#[derive(Debug, Clone)]
pub struct Synthetic {
    /// Rows by inputs.
    pub x: Array2<f64>,
    /// Numeric inputs named `x1`, `x2`, ...
    pub meta: Vec<FeatureMeta>,
    /// Class labels `1`, `2`, ... or values.
    pub outcome: Outcome,
}

/// The `a` of twonorm and threenorm, and the larger `a` of ringnorm: 2 / sqrt(20).
pub const NORM_A: f64 = 0.447_213_595_499_958;

fn assemble(x: Array2<f64>, outcome: Outcome) -> Synthetic {
    let meta = (1..=x.ncols())
        .map(|j| FeatureMeta::numeric(format!("x{j}")))
        .collect();
    Synthetic { x, meta, outcome }
}

fn classes(codes: Vec<u32>, k: usize) -> Outcome {
    Outcome::Classes {
        codes,
        labels: (1..=k).map(|c| c.to_string()).collect(),
    }
}

/// Draws `n` cases of `d` inputs: `case(class, rng, row)` fills one row.
fn generate(
    n: usize,
    d: usize,
    k: usize,
    seed: u64,
    mut case: impl FnMut(usize, &mut Xoshiro256PlusPlus, &mut [f64]),
) -> Synthetic {
    let mut rng = Xoshiro256PlusPlus::seed_from_u64(seed);
    let mut x = Array2::zeros((n, d));
    let mut codes = Vec::with_capacity(n);
    let mut row = vec![0.0; d];
    for i in 0..n {
        let c = rng.random_range(0..k);
        case(c, &mut rng, &mut row);
        x.row_mut(i).iter_mut().zip(&row).for_each(|(o, v)| *o = *v);
        codes.push(c as u32);
    }
    assemble(x, classes(codes, k))
}

fn normal(rng: &mut Xoshiro256PlusPlus) -> f64 {
    rng.sample(StandardNormal)
}

/// Twonorm: 20 inputs; class 1 ~ N(a·1, I), class 2 ~ N(-a·1, I), a = 2/sqrt(20).
/// Bayes error Phi(-2) = 0.0228.
pub fn twonorm(n: usize, seed: u64) -> Synthetic {
    generate(n, 20, 2, seed, |c, rng, row| {
        let m = if c == 0 { NORM_A } else { -NORM_A };
        row.iter_mut().for_each(|v| *v = m + normal(rng));
    })
}

/// Threenorm: 20 inputs; class 1 is an equal mixture of N(a·1, I) and N(-a·1, I),
/// class 2 ~ N((a, -a, a, -a, ...), I), a = 2/sqrt(20). Bayes error about 0.105.
pub fn threenorm(n: usize, seed: u64) -> Synthetic {
    generate(n, 20, 2, seed, |c, rng, row| {
        if c == 0 {
            let m = if rng.random_bool(0.5) {
                NORM_A
            } else {
                -NORM_A
            };
            row.iter_mut().for_each(|v| *v = m + normal(rng));
        } else {
            for (j, v) in row.iter_mut().enumerate() {
                let m = if j % 2 == 0 { NORM_A } else { -NORM_A };
                *v = m + normal(rng);
            }
        }
    })
}

/// Ringnorm: 20 inputs; class 1 ~ N(0, 4I), class 2 ~ N(a·1, I). Published accounts
/// give `a` = 2/sqrt(20) ([`NORM_A`]) or 1/sqrt(20); Bayes error 0.0124 and 0.0150.
pub fn ringnorm(n: usize, a: f64, seed: u64) -> Synthetic {
    generate(n, 20, 2, seed, |c, rng, row| {
        for v in row.iter_mut() {
            *v = if c == 0 {
                2.0 * normal(rng)
            } else {
                a + normal(rng)
            };
        }
    })
}

/// The three base waves of waveform at positions j = 1..21:
/// h1(j) = max(6 - |j - 11|, 0), h2(j) = h1(j - 4), h3(j) = h1(j + 4).
fn base_wave(h: usize, j: usize) -> f64 {
    let centre = match h {
        0 => 11.0,
        1 => 15.0,
        _ => 7.0,
    };
    (6.0 - (j as f64 - centre).abs()).max(0.0)
}

fn waveform(n: usize, noise_inputs: usize, seed: u64) -> Synthetic {
    // Class 1 mixes h1 and h2, class 2 h1 and h3, class 3 h2 and h3.
    const PAIRS: [(usize, usize); 3] = [(0, 1), (0, 2), (1, 2)];
    generate(n, 21 + noise_inputs, 3, seed, |c, rng, row| {
        let u: f64 = rng.random();
        let (a, b) = PAIRS[c];
        for (j, v) in row.iter_mut().enumerate().take(21) {
            let pos = j + 1;
            *v = u * base_wave(a, pos) + (1.0 - u) * base_wave(b, pos) + normal(rng);
        }
        for v in row.iter_mut().skip(21) {
            *v = normal(rng);
        }
    })
}

/// Waveform with 21 inputs, 3 classes; Bayes error about 0.14.
pub fn waveform21(n: usize, seed: u64) -> Synthetic {
    waveform(n, 0, seed)
}

/// Waveform-21 followed by 19 inputs of pure N(0, 1) noise (40 inputs).
pub fn waveform40(n: usize, seed: u64) -> Synthetic {
    waveform(n, 19, seed)
}

/// Friedman #1: x uniform on the unit cube in 10 dimensions,
/// y = 10 sin(pi x1 x2) + 20 (x3 - 0.5)^2 + 10 x4 + 5 x5 + e, e ~ N(0, 1).
/// Only x1..x5 matter.
pub fn friedman1(n: usize, seed: u64) -> Synthetic {
    let mut rng = Xoshiro256PlusPlus::seed_from_u64(seed);
    let mut x = Array2::zeros((n, 10));
    let mut y = Vec::with_capacity(n);
    for i in 0..n {
        let mut r = x.row_mut(i);
        r.iter_mut().for_each(|v| *v = rng.random::<f64>());
        let f = 10.0 * (std::f64::consts::PI * r[0] * r[1]).sin()
            + 20.0 * (r[2] - 0.5).powi(2)
            + 10.0 * r[3]
            + 5.0 * r[4];
        y.push(f + normal(&mut rng));
    }
    assemble(x, Outcome::Values(y))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn same_seed_same_data() {
        assert_eq!(twonorm(50, 3).x, twonorm(50, 3).x);
        assert_ne!(twonorm(50, 3).x, twonorm(50, 4).x);
    }

    #[test]
    fn waveform_base_waves_peak_where_defined() {
        // h1 peaks at 11, h2 at 15, h3 at 7, each with height 6 (CART, p. 49).
        assert_eq!(base_wave(0, 11), 6.0);
        assert_eq!(base_wave(1, 15), 6.0);
        assert_eq!(base_wave(2, 7), 6.0);
        assert_eq!(base_wave(0, 5), 0.0);
        assert_eq!(base_wave(0, 21), 0.0);
    }

    #[test]
    fn friedman_mean_matches_its_computed_value() {
        // E[f] = 10 E[sin(pi x1 x2)] + 20/12 + 5 + 2.5 = 14.413, computed from the
        // generating formula (Friedman 1991, Annals of Statistics 19:1-67); y adds N(0,1) noise, and
        // Var[y] = 23.83 + 1, so the sd of a mean of 20000 is sqrt(24.83/20000) = 0.035:
        // 4 sd = 0.14.
        let s = friedman1(20000, 11);
        let Outcome::Values(y) = &s.outcome else {
            panic!("values")
        };
        let mean = y.iter().sum::<f64>() / y.len() as f64;
        assert!((mean - 14.413).abs() < 0.14, "{mean}");
    }

    #[test]
    fn twonorm_means_sit_at_plus_and_minus_a() {
        let s = twonorm(4000, 5);
        let Outcome::Classes { codes, .. } = &s.outcome else {
            panic!("classes")
        };
        let (mut m, mut c) = (0.0, 0usize);
        for (i, &k) in codes.iter().enumerate() {
            if k == 0 {
                m += s.x.row(i).sum();
                c += 20;
            }
        }
        // Mean of about 40000 N(a, 1) draws: sd 0.005, so 0.03 is 6 sd.
        assert!((m / c as f64 - NORM_A).abs() < 0.03);
    }
}
