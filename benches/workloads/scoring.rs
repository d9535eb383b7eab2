//! S1M in memory: the T100k model scores a million rows on 1 and all threads, counted
//! in node visits and set beside the scoring limit kernel.
use crate::config::{pool, Config};
use crate::fit::leaf_depths;
use crate::kernels::ScoreKernel;
use crate::table::{fmt_rate, Table};
use copse_forest::{synth, Forest};
use ndarray::ArrayView2;
use rayon::prelude::*;
use std::hint::black_box;
use std::time::{Duration, Instant};

/// Scores `score` with `forest` and adds the S1M section; returns the scoring kernel's
/// ns per node visit per core on all threads (the rate the importance limit uses).
pub fn in_memory(
    cfg: &Config,
    forest: &Forest,
    score: &synth::Synthetic,
    table: &mut Table,
) -> f64 {
    let threads = cfg.threads;
    let n1m = score.x.nrows();
    let xs = score.x.view();
    let s1 = predict_timed(forest, xs, 1);
    let sa = predict_timed(forest, xs, threads);
    let visits = count_visits(forest, xs);
    let ks = ScoreKernel::like(forest, xs, 7);
    let (k1, _) = ks.timed(xs, 1);
    let (ka, _) = ks.timed(xs, threads);
    let kvisits = ks.visits(n1m);
    table.section(&format!(
        "S1M: score {n1m} rows with the T100k model, in memory"
    ));
    table.ratio_row(
        "scoring ns per node visit per core, 1 thread",
        ns_per(s1, 1, visits),
        ns_per(k1, 1, kvisits),
        "<= 3.0 (issue 19)",
    );
    table.ratio_row(
        &format!("scoring ns per node visit per core, {threads} threads"),
        ns_per(sa, threads, visits),
        ns_per(ka, threads, kvisits),
        "<= 3",
    );
    table.ratio_row(
        &format!("scoring speed-up, {threads} threads over 1"),
        s1.as_secs_f64() / sa.as_secs_f64(),
        threads as f64,
        ">= 1.8",
    );
    table.row(
        &format!("rows per second in memory, {threads} threads"),
        fmt_rate(n1m as f64 / sa.as_secs_f64()),
        fmt_rate(n1m as f64 / ka.as_secs_f64()),
        "",
    );
    table.note(&format!(
        "visits {visits:.3e} (mean depth per row and tree {:.2}); limit trees: {} \
         nodes each, depth {}, {kvisits:.3e} visits",
        visits / (n1m * forest.trees().len()) as f64,
        ks.nodes(),
        ks.levels
    ));
    ns_per(ka, threads, kvisits)
}

fn predict_timed(forest: &Forest, x: ArrayView2<'_, f64>, threads: usize) -> Duration {
    let pool = pool(threads);
    let mut best = Duration::MAX;
    for _ in 0..2 {
        let start = Instant::now();
        let out = pool.install(|| forest.predict(x)).expect("prediction");
        best = best.min(start.elapsed());
        black_box(out);
    }
    best
}

/// Exact count of internal nodes passed, over every row and tree.
pub fn count_visits(forest: &Forest, x: ArrayView2<'_, f64>) -> f64 {
    let depths: Vec<Vec<u32>> = forest.trees().iter().map(leaf_depths).collect();
    let x = x.as_standard_layout();
    let p = x.ncols();
    let flat = x.as_slice().expect("standard layout");
    let total: u64 = flat
        .par_chunks(256 * p)
        .map(|rows| {
            let mut leaves = vec![0u32; rows.len() / p];
            forest
                .trees()
                .iter()
                .zip(&depths)
                .map(|(t, d)| {
                    t.leaf_indices(rows, p, &mut leaves);
                    leaves
                        .iter()
                        .map(|&l| u64::from(d[l as usize]))
                        .sum::<u64>()
                })
                .sum::<u64>()
        })
        .sum();
    total as f64
}

pub fn ns_per(wall: Duration, threads: usize, visits: f64) -> f64 {
    wall.as_secs_f64() * 1e9 * threads as f64 / visits
}
