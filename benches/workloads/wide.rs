//! Workloads measured without goals yet (issue 19): training on a wide table (1,000
//! inputs, 20,000 rows), on many classes (26 classes, 20,000 rows), and scoring a wide
//! table in memory with the wide model. Their figures become the next goals.
//!
//! Data (seeded, generated here): the wide table is twonorm's two classes on its first
//! 20 inputs (N(+-a, 1), a = 2/sqrt(20), Breiman 1996) followed by 980 inputs of pure
//! N(0, 1) noise, so most candidate inputs of a split are noise, as in a wide register;
//! the many-class table has 26 classes, each a Gaussian cloud N(mu_c, I) in 16 inputs
//! with class centres drawn once from N(0, 1.5^2 I), so classes overlap.
use crate::config::{pool, Config, TREES};
use crate::scoring::ns_per;
use crate::table::{fmt_rate, fmt_s, Table};
use copse_forest::{
    synth, FeatureMeta, Forest, ForestSettings, Outcome, Sampling, TrainOptions, TreeRules,
};
use ndarray::Array2;
use rand::{RngExt, SeedableRng};
use rand_distr::StandardNormal;
use rand_xoshiro::Xoshiro256PlusPlus;
use std::hint::black_box;
use std::time::{Duration, Instant};

/// Inputs of the wide table.
const WIDE: usize = 1000;
/// Classes of the many-class table.
const CLASSES: usize = 26;

/// Adds the section; `threads` is "all threads".
pub fn section(cfg: &Config, table: &mut Table) {
    let threads = cfg.threads;
    table.section(&format!(
        "Wide and many-class tables: {TREES} trees, default inputs per split, min leaf 1, \
         bootstrap, {threads} threads (no goals yet)"
    ));
    if cfg.skip("wide") {
        table.note("skipped (COPSE_BENCH_SKIP)");
        return;
    }
    let n = cfg.rows(20_000);
    eprintln!("wide: training on {n} rows of {WIDE} inputs ...");
    let wide = wide_table(n, 11);
    let (w, wide_forest) = fastest_train(cfg, &wide, threads);
    table.row(
        &format!("training wall, {WIDE} inputs x {n} rows (s)"),
        fmt_s(w),
        String::new(),
        "(none yet)",
    );
    eprintln!("wide: training on {n} rows of {CLASSES} classes ...");
    let many = many_classes(n, 12);
    let (m, many_forest) = fastest_train(cfg, &many, threads);
    table.row(
        &format!("training wall, {CLASSES} classes x {n} rows (s)"),
        fmt_s(m),
        String::new(),
        "(none yet)",
    );
    let ns = cfg.rows(100_000);
    eprintln!("wide: scoring {ns} rows of {WIDE} inputs ...");
    let fresh = wide_table(ns, 13);
    let visits = crate::scoring::count_visits(&wide_forest, fresh.x.view());
    let s1 = predict_timed(&wide_forest, &fresh, 1);
    let sa = predict_timed(&wide_forest, &fresh, threads);
    table.row(
        &format!("scoring {WIDE} inputs, rows per second, {threads} threads"),
        fmt_rate(ns as f64 / sa.as_secs_f64()),
        String::new(),
        "(none yet)",
    );
    table.row(
        "scoring ns per node visit per core, 1 thread",
        format!("{:.2}", ns_per(s1, 1, visits)),
        String::new(),
        "(none yet)",
    );
    table.note(&format!(
        "wide model {} nodes ({:.0} a tree, {:.2} visits per row and tree); \
         many-class model {} nodes; inputs per split: {} (wide), {} (many classes)",
        wide_forest.n_nodes(),
        wide_forest.n_nodes() as f64 / wide_forest.trees().len() as f64,
        visits / (ns * wide_forest.trees().len()) as f64,
        many_forest.n_nodes(),
        k_of(&wide_forest, WIDE),
        k_of(&many_forest, 16),
    ));
}

/// Inputs tried per split by a forest of `p` inputs (classes).
fn k_of(forest: &Forest, p: usize) -> String {
    forest
        .settings()
        .features_per_split
        .resolve(p, true)
        .map_or_else(|e| e.to_string(), |k| k.to_string())
}

fn settings() -> ForestSettings {
    ForestSettings {
        trees: TREES,
        sampling: Sampling::Bootstrap,
        tree: TreeRules {
            min_leaf: 1.0,
            ..TreeRules::default()
        },
        seed: 1,
        ..ForestSettings::default()
    }
}

/// The fastest of `cfg.repeat` trainings (no out-of-bag importance) and its forest.
fn fastest_train(cfg: &Config, data: &synth::Synthetic, threads: usize) -> (Duration, Forest) {
    let s = settings();
    let options = TrainOptions {
        oob_importance: false,
        ..TrainOptions::default()
    };
    let mut best: Option<(Duration, Forest)> = None;
    for _ in 0..cfg.repeat {
        let start = Instant::now();
        let trained = pool(threads)
            .install(|| Forest::train(data.x.view(), &data.meta, &data.outcome, &s, &options))
            .expect("the generated table trains");
        let wall = start.elapsed();
        if best.as_ref().is_none_or(|(b, _)| wall < *b) {
            best = Some((wall, trained.forest));
        }
    }
    best.expect("at least one run")
}

fn predict_timed(forest: &Forest, data: &synth::Synthetic, threads: usize) -> Duration {
    let pool = pool(threads);
    let mut best = Duration::MAX;
    for _ in 0..2 {
        let start = Instant::now();
        let out = pool
            .install(|| forest.predict(data.x.view()))
            .expect("prediction");
        best = best.min(start.elapsed());
        black_box(out);
    }
    best
}

/// Twonorm's signal on 20 inputs, then `WIDE - 20` noise inputs.
fn wide_table(n: usize, seed: u64) -> synth::Synthetic {
    let mut rng = Xoshiro256PlusPlus::seed_from_u64(seed);
    let mut x = Array2::zeros((n, WIDE));
    let mut codes = Vec::with_capacity(n);
    for i in 0..n {
        let c = rng.random_range(0..2u32);
        let shift = if c == 0 {
            synth::NORM_A
        } else {
            -synth::NORM_A
        };
        for j in 0..WIDE {
            let z: f64 = rng.sample(StandardNormal);
            x[[i, j]] = if j < 20 { z + shift } else { z };
        }
        codes.push(c);
    }
    assemble(x, codes, 2)
}

/// `CLASSES` Gaussian clouds in 16 inputs.
fn many_classes(n: usize, seed: u64) -> synth::Synthetic {
    const D: usize = 16;
    let mut rng = Xoshiro256PlusPlus::seed_from_u64(seed);
    let centres: Vec<f64> = (0..CLASSES * D)
        .map(|_| 1.5 * rng.sample::<f64, _>(StandardNormal))
        .collect();
    let mut x = Array2::zeros((n, D));
    let mut codes = Vec::with_capacity(n);
    for i in 0..n {
        let c = rng.random_range(0..CLASSES);
        for j in 0..D {
            let z: f64 = rng.sample(StandardNormal);
            x[[i, j]] = centres[c * D + j] + z;
        }
        codes.push(c as u32);
    }
    assemble(x, codes, CLASSES)
}

fn assemble(x: Array2<f64>, codes: Vec<u32>, k: usize) -> synth::Synthetic {
    let meta = (1..=x.ncols())
        .map(|j| FeatureMeta::numeric(format!("x{j}")))
        .collect();
    synth::Synthetic {
        x,
        meta,
        outcome: Outcome::Classes {
            codes,
            labels: (1..=k).map(|c| format!("c{c}")).collect(),
        },
    }
}
