//! The limit kernels: minimal loops doing the bare work of training (gather a byte bin,
//! count it) and of scoring (walk complete balanced trees) on this machine, the
//! reference each figure is set beside.
use crate::config::{pool, K};
use crate::fit::Fit;
use copse_forest::Forest;
use copse_tree::BinnedData;
use ndarray::ArrayView2;
use rand::{RngExt, SeedableRng};
use rand_xoshiro::Xoshiro256PlusPlus;
use rayon::prelude::*;
use std::hint::black_box;
use std::time::{Duration, Instant};

/// The training limit kernel on this data, as ns per unit per core on `threads`
/// threads (every thread runs the whole kernel on its own histogram).
pub fn kernel_train_timed(x: &ArrayView2<'_, f64>, fit: &Fit, threads: usize) -> f64 {
    let codes = byte_codes(x, &fit.forest);
    let n = x.nrows();
    let rows = in_bag_rows(n, 11);
    let levels = fit.mean_depth.round().max(1.0) as usize;
    let p = x.ncols();
    let reps = (20_000_000 / (rows.len() * K * levels)).clamp(1, 50);
    let units = (rows.len() * K * levels * reps) as f64;
    let mut best = f64::INFINITY;
    for _ in 0..5 {
        let start = Instant::now();
        pool(threads).install(|| {
            (0..threads).into_par_iter().for_each(|t| {
                let mut hist = [0u32; 256];
                for rep in 0..reps {
                    for level in 0..levels {
                        for k in 0..K {
                            let j = (t + rep * 7 + level * K + k) % p;
                            let col = &codes[j * n..(j + 1) * n];
                            for &r in &rows {
                                hist[col[r as usize] as usize] += 1;
                            }
                        }
                    }
                }
                black_box(&hist);
            });
        });
        let ns = start.elapsed().as_secs_f64() * 1e9 / units;
        best = best.min(ns);
    }
    best
}

/// Column-major byte bin codes of `x`, binned as the forest bins its data.
fn byte_codes(x: &ArrayView2<'_, f64>, forest: &Forest) -> Vec<u8> {
    let data = BinnedData::new(*x, forest.meta(), forest.settings().bin_limit()).expect("bins");
    let (n, p) = x.dim();
    let mut codes = Vec::with_capacity(n * p);
    for j in 0..p {
        codes.extend((0..n).map(|i| data.bin(i, j) as u8));
    }
    codes
}

/// Distinct rows of one bootstrap draw of `n` from `n`, ascending.
fn in_bag_rows(n: usize, seed: u64) -> Vec<u32> {
    let mut rng = Xoshiro256PlusPlus::seed_from_u64(seed);
    let mut drawn = vec![false; n];
    for _ in 0..n {
        drawn[rng.random_range(0..n)] = true;
    }
    (0..n as u32).filter(|&i| drawn[i as usize]).collect()
}

/// Complete balanced trees in implicit layout (children of `i` at `2i+1`, `2i+2`):
/// input index and threshold per internal node, a value per leaf.
pub struct ScoreKernel {
    pub levels: usize,
    features: Vec<Vec<u32>>,
    thresholds: Vec<Vec<f64>>,
    leaves: Vec<Vec<f64>>,
}

impl ScoreKernel {
    /// As many trees as the forest, each with about the forest's mean node count.
    pub fn like(forest: &Forest, x: ArrayView2<'_, f64>, seed: u64) -> Self {
        let trees = forest.trees().len();
        let mean_nodes = forest.n_nodes() as f64 / trees as f64;
        // 2^(levels+1) - 1 nodes: the largest complete tree within the mean count.
        let levels = ((mean_nodes + 1.0).log2().floor() as usize)
            .saturating_sub(1)
            .max(1);
        let internal = (1usize << levels) - 1;
        let mut rng = Xoshiro256PlusPlus::seed_from_u64(seed);
        let (n, p) = x.dim();
        let mut features = Vec::with_capacity(trees);
        let mut thresholds = Vec::with_capacity(trees);
        let mut leaves = Vec::with_capacity(trees);
        for _ in 0..trees {
            let f: Vec<u32> = (0..internal)
                .map(|_| rng.random_range(0..p) as u32)
                .collect();
            let t: Vec<f64> = f
                .iter()
                .map(|&j| x[[rng.random_range(0..n), j as usize]])
                .collect();
            features.push(f);
            thresholds.push(t);
            leaves.push((0..=internal).map(|_| rng.random::<f64>()).collect());
        }
        ScoreKernel {
            levels,
            features,
            thresholds,
            leaves,
        }
    }

    pub fn nodes(&self) -> usize {
        (1usize << (self.levels + 1)) - 1
    }

    pub fn visits(&self, rows: usize) -> f64 {
        (rows * self.features.len() * self.levels) as f64
    }

    /// Best of two runs; returns the wall time and a checksum.
    pub fn timed(&self, x: ArrayView2<'_, f64>, threads: usize) -> (Duration, f64) {
        let x = x.as_standard_layout();
        let p = x.ncols();
        let flat = x.as_slice().expect("standard layout");
        let mut out = vec![0.0f64; x.nrows()];
        let pool = pool(threads);
        let mut best = Duration::MAX;
        // Rows per block: each tree is read from memory once per block, so a block holds
        // about twice a tree's nodes in rows (as the forest's prediction does).
        let block = (2 * self.nodes())
            .min(x.nrows().div_ceil(threads))
            .clamp(256, 16384);
        for _ in 0..3 {
            let start = Instant::now();
            pool.install(|| {
                out.par_chunks_mut(block).enumerate().for_each(|(b, o)| {
                    let rows = &flat[b * block * p..(b * block + o.len()) * p];
                    o.iter_mut().for_each(|v| *v = 0.0);
                    for ((f, t), l) in self.features.iter().zip(&self.thresholds).zip(&self.leaves)
                    {
                        let internal = f.len();
                        for (r, v) in o.iter_mut().enumerate() {
                            let row = &rows[r * p..(r + 1) * p];
                            let mut i = 0usize;
                            for _ in 0..self.levels {
                                let right = row[f[i] as usize] > t[i];
                                i = 2 * i + 1 + usize::from(right);
                            }
                            *v += l[i - internal];
                        }
                    }
                });
            });
            best = best.min(start.elapsed());
        }
        (best, black_box(out.iter().sum()))
    }
}
