//! The performance workloads (training, scoring, importance, scaling, model size and
//! memory) measured in one run and printed as one table, each figure beside a
//! reference limit measured by a minimal kernel on the same machine in the same run.
//!
//! Run (from the workspace root):
//!
//! ```text
//! cargo bench -p copse-cli --bench workloads
//! ```
//!
//! Environment:
//! - `COPSE_BENCH_SCALE=0.1` multiplies every row count (quick run; default 1).
//! - `COPSE_BENCH_THREADS=N` sets "all threads" (default: the machine's core count).
//! - `COPSE_BENCH_SKIP=e2e,t1m,scaling,importance` skips workloads by name.
//! - `COPSE_BENCH_REPEAT=3` runs each T100k training and each end-to-end scoring that
//!   many times and keeps the fastest (default 1; use it on a machine shared with other
//!   work).
//! - `COPSE_BIN=path` names the `copse` binary for the end-to-end run (default: the
//!   one Cargo builds for this benchmark).
//!
//! Data: the twonorm generator (20 numeric inputs, 2 classes), seeded. Figures:
//! - a training unit is one (distinct in-bag row x candidate input x tree level);
//!   units = sum over trees of distinct in-bag rows x K x mean leaf depth, where the
//!   mean leaf depth is weighted by the training cases in each leaf;
//!   ns per unit per core = growing wall x threads / units;
//! - a scoring node visit is one internal node passed on the way to a leaf;
//!   ns per visit per core = wall x threads / visits (visits counted exactly);
//! - the training limit kernel gathers a byte bin through a row-index buffer (the
//!   distinct in-bag rows of a bootstrap draw, ascending) and adds one to a 256-cell
//!   count histogram, for K columns per level over as many levels as the mean leaf
//!   depth; the scoring limit kernel walks complete balanced trees (implicit layout,
//!   threshold and input arrays, no child pointers, branch-free descent) with as many
//!   nodes as the model's mean tree, blocks of rows (about twice a tree's node count,
//!   as in the forest's prediction) through one tree at a time; the
//!   end-to-end limit is a CSV pass alone (read, parse every cell, write one line per
//!   row) on one thread.
//!
//! T1M runs in a child process (this executable, re-run) so its peak resident memory
//! (VmHWM in /proc/self/status) is its own.
use copse_forest::{
    synth, FeaturesPerSplit, Forest, ForestSettings, Outcome, Progress, Sampling, Stage,
    TrainOptions, TreeRules,
};
use copse_tree::{BinnedData, Tree};
use ndarray::ArrayView2;
use rand::{RngExt, SeedableRng};
use rand_xoshiro::Xoshiro256PlusPlus;
use rayon::prelude::*;
use std::fmt::Write as _;
use std::hint::black_box;
use std::io::{BufRead, BufWriter, Write};
use std::path::{Path, PathBuf};
use std::process::Command;
use std::sync::Mutex;
use std::time::{Duration, Instant};

/// Trees per forest in every workload (issue 5).
const TREES: usize = 100;
/// Inputs tried per split (issue 5).
const K: usize = 4;
/// Seed of the training data.
const TRAIN_SEED: u64 = 1;
/// Seed of the scoring data.
const SCORE_SEED: u64 = 2;
/// Environment variable that makes this executable run only T1M and report.
const CHILD: &str = "COPSE_BENCH_CHILD";

fn main() {
    let cfg = Config::from_env();
    if std::env::var_os(CHILD).is_some() {
        child_t1m(&cfg);
        return;
    }
    // `cargo bench` passes `--bench`; no other argument is used.
    let mut table = Table {
        load_start: load_average(),
        ..Table::default()
    };
    let threads = cfg.threads;
    eprintln!(
        "copse workloads: scale {}, all threads = {threads}, machine cores = {}",
        cfg.scale,
        cores()
    );

    // ---- T100k: 1 thread, then all threads with OOB importance (I100k). ----
    let n100k = cfg.rows(100_000);
    let train = synth::twonorm(n100k, TRAIN_SEED);
    eprintln!("T100k on {n100k} rows, 1 thread ...");
    let t1 = fastest(cfg.repeat, || train_timed(&train, 1, false));
    eprintln!("T100k on {n100k} rows, {threads} threads, with importance ...");
    let ta = fastest(cfg.repeat, || {
        train_timed(&train, threads, !cfg.skip("importance"))
    });
    let same = t1.forest.trees() == ta.forest.trees();
    let kt1 = kernel_train_timed(&train.x.view(), &ta, 1);
    let kta = kernel_train_timed(&train.x.view(), &ta, threads);

    table.section(&format!(
        "T100k: train {TREES} trees, K = {K}, min leaf 1, bootstrap, {n100k} rows"
    ));
    table.row(
        "growing wall, 1 thread (s)",
        fmt_s(t1.grow),
        String::new(),
        "",
    );
    table.row(
        &format!("growing wall, {threads} threads (s)"),
        fmt_s(ta.grow),
        String::new(),
        "<= 2 s on 2 threads",
    );
    table.row(
        &format!("train call wall, {threads} threads, no importance (s)"),
        fmt_s(ta.grow + ta.oob),
        String::new(),
        "",
    );
    table.ratio_row(
        "training ns per unit per core, 1 thread",
        t1.ns_per_unit(1),
        kt1,
        "<= 2",
    );
    table.ratio_row(
        &format!("training ns per unit per core, {threads} threads"),
        ta.ns_per_unit(threads),
        kta,
        "<= 2",
    );
    table.ratio_row(
        &format!("training speed-up, {threads} threads over 1"),
        t1.grow.as_secs_f64() / ta.grow.as_secs_f64(),
        threads as f64,
        ">= 1.8",
    );
    table.note(&format!(
        "units {:.3e} = distinct in-bag rows {} x K {K} x mean leaf depth {:.2}; \
         model identical for 1 and {threads} threads: {}",
        ta.units(),
        ta.distinct_in_bag,
        ta.mean_depth,
        if same { "yes" } else { "NO" }
    ));

    // ---- Model size. ----
    let forest = &ta.forest;
    let nodes = forest.n_nodes();
    table.section("Model (T100k)");
    table.row("nodes", nodes.to_string(), String::new(), "");
    // The per-tree sums of impurity decrease (8 bytes an input, for impurity
    // importance) are a summary of the tree, not part of its structure: shown apart.
    let sums: usize = forest
        .trees()
        .iter()
        .map(|t| 8 * t.impurity_decrease().len())
        .sum();
    table.row(
        "bytes per node in memory (tree structure)",
        format!("{:.2}", (forest.heap_bytes() - sums) as f64 / nodes as f64),
        String::new(),
        "<= 16",
    );
    table.note(&format!(
        "nodes with their leaves' outputs, leaf tables, category sets; with each tree's \
         impurity sums, 8 bytes an input: {:.3} bytes per node in all",
        forest.heap_bytes() as f64 / nodes as f64
    ));
    let encoded = bincode::serde::encode_to_vec(forest, bincode::config::standard())
        .map(|v| v.len())
        .unwrap_or(0);
    table.row(
        "bytes per node, forest encoded in memory (bincode)",
        format!("{:.2}", encoded as f64 / nodes as f64),
        String::new(),
        "<= 16",
    );

    // ---- S1M in memory. ----
    let n1m = cfg.rows(1_000_000);
    eprintln!("S1M: scoring {n1m} rows ...");
    let score = synth::twonorm(n1m, SCORE_SEED);
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
        "<= 3",
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

    // ---- I100k (after S1M: its limit uses the scoring kernel's rate). ----
    if let Some(imp) = ta.importance {
        table.section("I100k: out-of-bag permutation importance, 20 inputs, T100k model");
        let visits = importance_visits(&ta);
        let limit = visits * ns_per(ka, threads, kvisits) / threads as f64 / 1e9;
        table.ratio_row(
            &format!("importance wall, {threads} threads (s)"),
            imp.as_secs_f64(),
            limit,
            "<= 2x T100k growing",
        );
        table.note(&format!(
            "importance / T100k growing = {:.2}; limit = about {visits:.3e} node visits \
             (trees x inputs x out-of-bag rows x mean leaf depth, an upper estimate: only \
             rows whose path tests the input are re-scored) at the scoring kernel's rate",
            imp.as_secs_f64() / ta.grow.as_secs_f64()
        ));
    }

    // ---- S1M end to end through the copse binary. ----
    table.section(&format!(
        "S1M end to end: copse score, CSV to CSV, {n1m} rows"
    ));
    if cfg.skip("e2e") {
        table.note("skipped (COPSE_BENCH_SKIP)");
    } else {
        match end_to_end(&train, &score, threads, cfg.repeat) {
            Ok(e) => {
                table.ratio_row(
                    "rows per second, 1 thread",
                    n1m as f64 / e.score1.as_secs_f64(),
                    n1m as f64 / e.csv_floor.as_secs_f64(),
                    "",
                );
                table.ratio_row(
                    &format!("rows per second, {threads} threads"),
                    n1m as f64 / e.score_all.as_secs_f64(),
                    n1m as f64 / e.csv_floor.as_secs_f64(),
                    ">= 150000 on 2 threads",
                );
                table.ratio_row(
                    &format!("end-to-end speed-up, {threads} threads over 1"),
                    e.score1.as_secs_f64() / e.score_all.as_secs_f64(),
                    threads as f64,
                    ">= 1.8",
                );
                table.row(
                    "bytes per node on disk (model file)",
                    format!("{:.2}", e.file_bytes as f64 / e.file_nodes.max(1) as f64),
                    String::new(),
                    "<= 16",
                );
                table.note(&format!(
                    "input CSV {:.1} MB; copse train on the {n100k}-row CSV took {:.2} s \
                     ({threads} threads, with report and importance); model file {} bytes, \
                     {} nodes; rows/s limit = one-thread CSV pass alone",
                    e.csv_bytes as f64 / 1e6,
                    e.train.as_secs_f64(),
                    e.file_bytes,
                    e.file_nodes
                ));
            }
            Err(msg) => table.note(&format!("not measured: {msg}")),
        }
    }

    // ---- T1M in a child process. ----
    let mut scaling: Vec<(usize, f64)> = vec![(n100k, ta.grow.as_secs_f64())];
    table.section(&format!(
        "T1M: the same training on {n1m} rows, {threads} threads (child process)"
    ));
    if cfg.skip("t1m") {
        table.note("skipped (COPSE_BENCH_SKIP)");
    } else {
        eprintln!("T1M on {n1m} rows, {threads} threads (child process) ...");
        match run_child() {
            Ok(c) => {
                table.row(
                    "growing wall (s)",
                    format!("{:.2}", c.grow),
                    String::new(),
                    "<= 25 s",
                );
                table.row(
                    "train call wall, no importance (s)",
                    format!("{:.2}", c.total),
                    String::new(),
                    "",
                );
                table.ratio_row(
                    "training ns per unit per core",
                    c.ns_unit,
                    c.kernel_ns,
                    "<= 2",
                );
                table.ratio_row(
                    "peak resident memory (MB)",
                    c.peak_kb as f64 / 1024.0,
                    c.floor_bytes as f64 / (1 << 20) as f64,
                    "<= 2500",
                );
                table.note(&format!(
                    "units {:.3e}, mean leaf depth {:.2}, nodes {}; memory limit = inputs \
                     as f64 + outcome + binned bytes + model",
                    c.units, c.mean_depth, c.nodes
                ));
                scaling.push((n1m, c.grow));
            }
            Err(msg) => table.note(&format!("not measured: {msg}")),
        }
    }

    // ---- Scaling. ----
    table.section(&format!("Scaling: growing wall, {threads} threads"));
    if cfg.skip("scaling") {
        table.note("skipped (COPSE_BENCH_SKIP)");
    } else {
        let n10k = cfg.rows(10_000);
        let small = synth::twonorm(n10k, TRAIN_SEED);
        let t10 = train_timed(&small, threads, false);
        scaling.insert(0, (n10k, t10.grow.as_secs_f64()));
        for &(n, s) in &scaling {
            table.row(
                &format!("{n} rows (s)"),
                format!("{s:.3}"),
                String::new(),
                "",
            );
        }
        if scaling.len() >= 2 {
            table.ratio_row(
                "fitted growth exponent (time ~ rows^e)",
                growth_exponent(&scaling),
                1.0,
                "<= 1.15",
            );
        }
    }

    println!("{}", table.render(&cfg));
}

/// Run settings from the environment.
struct Config {
    scale: f64,
    threads: usize,
    skip: Vec<String>,
    repeat: usize,
}

impl Config {
    fn from_env() -> Self {
        let scale = std::env::var("COPSE_BENCH_SCALE")
            .ok()
            .and_then(|s| s.parse::<f64>().ok())
            .filter(|s| *s > 0.0)
            .unwrap_or(1.0);
        let threads = std::env::var("COPSE_BENCH_THREADS")
            .ok()
            .and_then(|s| s.parse::<usize>().ok())
            .filter(|t| *t > 0)
            .unwrap_or_else(cores);
        let skip = std::env::var("COPSE_BENCH_SKIP")
            .unwrap_or_default()
            .split(',')
            .map(|s| s.trim().to_lowercase())
            .filter(|s| !s.is_empty())
            .collect();
        let repeat = std::env::var("COPSE_BENCH_REPEAT")
            .ok()
            .and_then(|s| s.parse::<usize>().ok())
            .filter(|r| *r > 0)
            .unwrap_or(1);
        Config {
            scale,
            threads,
            skip,
            repeat,
        }
    }

    fn rows(&self, n: usize) -> usize {
        ((n as f64 * self.scale).round() as usize).max(100)
    }

    fn skip(&self, name: &str) -> bool {
        self.skip.iter().any(|s| s == name)
    }
}

fn cores() -> usize {
    std::thread::available_parallelism().map_or(1, |n| n.get())
}

fn pool(threads: usize) -> rayon::ThreadPool {
    rayon::ThreadPoolBuilder::new()
        .num_threads(threads)
        .build()
        .expect("a thread pool")
}

fn settings() -> ForestSettings {
    ForestSettings {
        trees: TREES,
        features_per_split: FeaturesPerSplit::Count(K),
        sampling: Sampling::Bootstrap,
        tree: TreeRules {
            min_leaf: 1.0,
            ..TreeRules::default()
        },
        seed: 1,
        ..ForestSettings::default()
    }
}

/// One timed training run and what the figures need from it.
struct Fit {
    forest: Forest,
    grow: Duration,
    oob: Duration,
    importance: Option<Duration>,
    distinct_in_bag: u64,
    mean_depth: f64,
    oob_rows: u64,
}

impl Fit {
    fn units(&self) -> f64 {
        self.distinct_in_bag as f64 * K as f64 * self.mean_depth
    }
    fn ns_per_unit(&self, threads: usize) -> f64 {
        self.grow.as_secs_f64() * 1e9 * threads as f64 / self.units()
    }
}

/// Trains on `threads` threads; stage times come from the progress reports (the last
/// report of a stage marks its end).
fn train_timed(data: &synth::Synthetic, threads: usize, importance: bool) -> Fit {
    let ends = Mutex::new([Duration::ZERO; 3]);
    let s = settings();
    let start = Instant::now();
    let trained = pool(threads).install(|| {
        let progress = |p: Progress| {
            let i = match p.stage {
                Stage::Growing => 0,
                Stage::OutOfBag => 1,
                Stage::Importance => 2,
            };
            let t = start.elapsed();
            if let Ok(mut e) = ends.lock() {
                e[i] = e[i].max(t);
            }
        };
        let options = TrainOptions {
            oob_importance: importance,
            progress: Some(&progress),
            ..TrainOptions::default()
        };
        Forest::train(data.x.view(), &data.meta, &data.outcome, &s, &options)
    });
    let total = start.elapsed();
    let trained = trained.expect("twonorm trains");
    let e = ends.into_inner().expect("no poisoned lock");
    let grow = e[0];
    let oob_end = e[1].max(grow);
    let labelled = match &data.outcome {
        Outcome::Classes { codes, .. } => codes.len(),
        Outcome::Values(v) => v.len(),
    } as u64;
    let oob_rows: u64 = trained.oob.trees_out.iter().map(|&t| t as u64).sum();
    let distinct_in_bag = labelled * trained.forest.trees().len() as u64 - oob_rows;
    let mean_depth = mean_leaf_depth(trained.forest.trees());
    Fit {
        forest: trained.forest,
        grow,
        oob: oob_end - grow,
        importance: importance.then(|| total - oob_end),
        distinct_in_bag,
        mean_depth,
        oob_rows,
    }
}

/// The run with the shortest growing time of `repeat` runs.
fn fastest(repeat: usize, run: impl Fn() -> Fit) -> Fit {
    let mut best = run();
    for _ in 1..repeat {
        let next = run();
        if next.grow < best.grow {
            best = next;
        }
    }
    best
}

/// Depth of every leaf of a tree, by the leaf's node index (0 for internal nodes).
fn leaf_depths(tree: &Tree) -> Vec<u32> {
    let mut depths = vec![0u32; tree.nodes().len()];
    let mut stack = vec![(0usize, 0u32)];
    while let Some((i, d)) = stack.pop() {
        let node = &tree.nodes()[i];
        if node.is_leaf() {
            depths[i] = d;
        } else {
            stack.push((node.child(), d + 1));
            stack.push((node.child() + 1, d + 1));
        }
    }
    depths
}

/// Mean depth of the leaves, weighted by the training cases in each (bootstrap counts;
/// a distinct in-bag row's expected count does not depend on where it ends up, so this
/// estimates the mean over distinct rows).
fn mean_leaf_depth(trees: &[Tree]) -> f64 {
    let (mut wd, mut w) = (0.0, 0.0);
    for t in trees {
        let depths = leaf_depths(t);
        for leaf in t.leaves() {
            wd += t.leaf_weight(leaf) * f64::from(depths[leaf]);
            w += t.leaf_weight(leaf);
        }
    }
    wd / w
}

/// Node visits of the out-of-bag importance pass, estimated: trees x inputs x
/// out-of-bag rows x the mean visit depth of the training cases.
fn importance_visits(fit: &Fit) -> f64 {
    fit.oob_rows as f64 * fit.forest.n_features() as f64 * fit.mean_depth
}

/// The training limit kernel on this data, as ns per unit per core on `threads`
/// threads (every thread runs the whole kernel on its own histogram).
fn kernel_train_timed(x: &ArrayView2<'_, f64>, fit: &Fit, threads: usize) -> f64 {
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
fn count_visits(forest: &Forest, x: ArrayView2<'_, f64>) -> f64 {
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

fn ns_per(wall: Duration, threads: usize, visits: f64) -> f64 {
    wall.as_secs_f64() * 1e9 * threads as f64 / visits
}

/// Complete balanced trees in implicit layout (children of `i` at `2i+1`, `2i+2`):
/// input index and threshold per internal node, a value per leaf.
struct ScoreKernel {
    levels: usize,
    features: Vec<Vec<u32>>,
    thresholds: Vec<Vec<f64>>,
    leaves: Vec<Vec<f64>>,
}

impl ScoreKernel {
    /// As many trees as the forest, each with about the forest's mean node count.
    fn like(forest: &Forest, x: ArrayView2<'_, f64>, seed: u64) -> Self {
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

    fn nodes(&self) -> usize {
        (1usize << (self.levels + 1)) - 1
    }

    fn visits(&self, rows: usize) -> f64 {
        (rows * self.features.len() * self.levels) as f64
    }

    /// Best of two runs; returns the wall time and a checksum.
    fn timed(&self, x: ArrayView2<'_, f64>, threads: usize) -> (Duration, f64) {
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

/// What the end-to-end run measured.
struct EndToEnd {
    train: Duration,
    score1: Duration,
    score_all: Duration,
    csv_floor: Duration,
    csv_bytes: u64,
    file_bytes: u64,
    file_nodes: u64,
}

/// Writes the training and scoring CSV files, trains with `copse train`, scores with
/// `copse score` on 1 and all threads (the fastest of `repeat` runs each, taken in
/// turn so both see the machine alike), and times the CSV pass alone.
fn end_to_end(
    train: &synth::Synthetic,
    score: &synth::Synthetic,
    threads: usize,
    repeat: usize,
) -> Result<EndToEnd, String> {
    let exe = copse_binary().ok_or(
        "no copse binary: build it with `cargo build --release -p copse-cli`, or set COPSE_BIN",
    )?;
    let dir = std::env::temp_dir().join(format!("copse-bench-{}", std::process::id()));
    std::fs::create_dir_all(&dir).map_err(|e| format!("{}: {e}", dir.display()))?;
    let result = (|| {
        let train_csv = dir.join("train.csv");
        let score_csv = dir.join("score.csv");
        let model = dir.join("model.copse");
        write_csv(&train_csv, train, true)?;
        write_csv(&score_csv, score, false)?;
        let csv_bytes = std::fs::metadata(&score_csv).map_or(0, |m| m.len());
        let t = Instant::now();
        run_copse(
            &exe,
            &[
                "--quiet",
                "--threads",
                &threads.to_string(),
                "train",
                "--data",
                path_str(&train_csv)?,
                "--target",
                "class",
                "--out",
                path_str(&model)?,
                "--trees",
                &TREES.to_string(),
                "--features-per-split",
                &K.to_string(),
                "--min-leaf",
                "1",
                "--seed",
                "1",
            ],
        )?;
        let train_wall = t.elapsed();
        let info = run_copse(&exe, &["inspect", "--model", path_str(&model)?, "--json"])?;
        let json: serde_json::Value =
            serde_json::from_str(&info).map_err(|e| format!("inspect --json: {e}"))?;
        let find = |key: &str| find_number(&json, key).unwrap_or(0);
        let score_with = |t: usize| -> Result<Duration, String> {
            let out = dir.join(format!("scored-{t}.csv"));
            let _ = std::fs::remove_file(&out);
            let start = Instant::now();
            run_copse(
                &exe,
                &[
                    "--quiet",
                    "--threads",
                    &t.to_string(),
                    "score",
                    "--model",
                    path_str(&model)?,
                    "--data",
                    path_str(&score_csv)?,
                    "--out",
                    path_str(&out)?,
                ],
            )?;
            let wall = start.elapsed();
            let lines = std::fs::File::open(&out)
                .map(|f| std::io::BufReader::new(f).lines().count())
                .map_err(|e| e.to_string())?;
            if lines != score.x.nrows() + 1 {
                return Err(format!(
                    "copse score wrote {lines} lines for {} rows",
                    score.x.nrows()
                ));
            }
            let _ = std::fs::remove_file(&out);
            Ok(wall)
        };
        let (mut score1, mut score_all) = (Duration::MAX, Duration::MAX);
        for _ in 0..repeat {
            score1 = score1.min(score_with(1)?);
            score_all = score_all.min(score_with(threads)?);
        }
        let csv_floor = csv_pass(&score_csv, &dir.join("floor.csv"), train.x.ncols())?;
        Ok(EndToEnd {
            train: train_wall,
            score1,
            score_all,
            csv_floor,
            csv_bytes,
            file_bytes: find("file_bytes"),
            file_nodes: find("nodes"),
        })
    })();
    let _ = std::fs::remove_dir_all(&dir);
    result
}

/// The `copse` binary: `COPSE_BIN` if set; else the one Cargo built beside this
/// benchmark (`cargo bench -p copse-cli` builds it); else one in the same target
/// directory (`target/release/copse`).
fn copse_binary() -> Option<PathBuf> {
    if let Some(p) = std::env::var_os("COPSE_BIN") {
        return Some(PathBuf::from(p));
    }
    if let Some(p) = option_env!("CARGO_BIN_EXE_copse") {
        return Some(PathBuf::from(p));
    }
    let exe = std::env::current_exe().ok()?;
    let dir = exe.parent()?.parent()?;
    let bin = dir.join(format!("copse{}", std::env::consts::EXE_SUFFIX));
    bin.exists().then_some(bin)
}

fn path_str(p: &Path) -> Result<&str, String> {
    p.to_str()
        .ok_or_else(|| format!("{} is not valid UTF-8", p.display()))
}

/// First number under `key` anywhere in a JSON value.
fn find_number(v: &serde_json::Value, key: &str) -> Option<u64> {
    match v {
        serde_json::Value::Object(m) => m
            .get(key)
            .and_then(serde_json::Value::as_u64)
            .or_else(|| m.values().find_map(|x| find_number(x, key))),
        serde_json::Value::Array(a) => a.iter().find_map(|x| find_number(x, key)),
        _ => None,
    }
}

fn run_copse(exe: &Path, args: &[&str]) -> Result<String, String> {
    let out = Command::new(exe)
        .args(args)
        .output()
        .map_err(|e| format!("cannot run {}: {e}", exe.display()))?;
    if !out.status.success() {
        return Err(format!(
            "copse {} failed: {}",
            args.iter()
                .find(|a| !a.starts_with('-') && a.parse::<u64>().is_err())
                .unwrap_or(&""),
            String::from_utf8_lossy(&out.stderr).trim()
        ));
    }
    Ok(String::from_utf8_lossy(&out.stdout).into_owned())
}

/// Writes the inputs (six decimals, as a measuring instrument would give them) and,
/// for training, the class.
fn write_csv(path: &Path, data: &synth::Synthetic, with_class: bool) -> Result<(), String> {
    let f = std::fs::File::create(path).map_err(|e| format!("{}: {e}", path.display()))?;
    let mut w = BufWriter::with_capacity(1 << 20, f);
    let p = data.x.ncols();
    let mut line = String::new();
    for j in 1..=p {
        let _ = write!(line, "{}x{j}", if j > 1 { "," } else { "" });
    }
    if with_class {
        line.push_str(",class");
    }
    line.push('\n');
    let codes = match &data.outcome {
        Outcome::Classes { codes, .. } => codes.as_slice(),
        Outcome::Values(_) => &[],
    };
    for (i, row) in data.x.rows().into_iter().enumerate() {
        for (j, v) in row.iter().enumerate() {
            let _ = write!(line, "{}{v:.6}", if j > 0 { "," } else { "" });
        }
        if with_class {
            let _ = write!(line, ",c{}", codes.get(i).copied().unwrap_or(0));
        }
        line.push('\n');
        if line.len() > 1 << 16 {
            w.write_all(line.as_bytes()).map_err(|e| e.to_string())?;
            line.clear();
        }
    }
    w.write_all(line.as_bytes()).map_err(|e| e.to_string())?;
    w.flush().map_err(|e| e.to_string())
}

/// The CSV floor: read every record with a reused buffer, parse every cell as a
/// number, write one short line per row; one thread.
fn csv_pass(input: &Path, output: &Path, p: usize) -> Result<Duration, String> {
    let start = Instant::now();
    let mut r = csv::Reader::from_path(input).map_err(|e| e.to_string())?;
    let f = std::fs::File::create(output).map_err(|e| e.to_string())?;
    let mut w = BufWriter::with_capacity(1 << 16, f);
    let mut rec = csv::ByteRecord::new();
    let mut row = vec![0.0f64; p];
    while r.read_byte_record(&mut rec).map_err(|e| e.to_string())? {
        for (v, cell) in row.iter_mut().zip(rec.iter()) {
            *v = std::str::from_utf8(cell)
                .ok()
                .and_then(|s| s.parse().ok())
                .unwrap_or(f64::NAN);
        }
        let s: f64 = row.iter().sum();
        writeln!(w, "{},{:.6},{:.6}", s > 0.0, s, -s).map_err(|e| e.to_string())?;
    }
    w.flush().map_err(|e| e.to_string())?;
    let wall = start.elapsed();
    let _ = std::fs::remove_file(output);
    Ok(wall)
}

/// What the T1M child reports.
struct ChildReport {
    grow: f64,
    total: f64,
    units: f64,
    mean_depth: f64,
    nodes: u64,
    ns_unit: f64,
    kernel_ns: f64,
    peak_kb: u64,
    floor_bytes: u64,
}

fn run_child() -> Result<ChildReport, String> {
    let exe = std::env::current_exe().map_err(|e| e.to_string())?;
    let out = Command::new(exe)
        .env(CHILD, "1")
        .output()
        .map_err(|e| format!("cannot start the T1M child: {e}"))?;
    if !out.status.success() {
        return Err(format!(
            "the T1M child failed: {}",
            String::from_utf8_lossy(&out.stderr).trim()
        ));
    }
    let text = String::from_utf8_lossy(&out.stdout);
    let line = text
        .lines()
        .find(|l| l.starts_with("T1M "))
        .ok_or("the T1M child printed no report")?;
    let v: Vec<f64> = line[4..]
        .split_whitespace()
        .filter_map(|s| s.parse().ok())
        .collect();
    if v.len() != 9 {
        return Err(format!("unreadable T1M report: {line}"));
    }
    Ok(ChildReport {
        grow: v[0],
        total: v[1],
        units: v[2],
        mean_depth: v[3],
        nodes: v[4] as u64,
        ns_unit: v[5],
        kernel_ns: v[6],
        peak_kb: v[7] as u64,
        floor_bytes: v[8] as u64,
    })
}

/// The child: T1M on all threads, then its peak memory, printed as one line.
fn child_t1m(cfg: &Config) {
    let n = cfg.rows(1_000_000);
    let data = synth::twonorm(n, TRAIN_SEED);
    let start = Instant::now();
    let fit = train_timed(&data, cfg.threads, false);
    let total = start.elapsed().as_secs_f64();
    let peak_kb = vm_hwm_kb();
    let kernel = kernel_train_timed(&data.x.view(), &fit, cfg.threads);
    let p = data.x.ncols();
    let floor = n * p * 8 + n * 4 + n * p + fit.forest.heap_bytes();
    println!(
        "T1M {} {} {} {} {} {} {} {} {}",
        fit.grow.as_secs_f64(),
        total,
        fit.units(),
        fit.mean_depth,
        fit.forest.n_nodes(),
        fit.ns_per_unit(cfg.threads),
        kernel,
        peak_kb,
        floor
    );
}

/// Peak resident set of this process in kB (0 where /proc is not available).
fn vm_hwm_kb() -> u64 {
    std::fs::read_to_string("/proc/self/status")
        .ok()
        .and_then(|s| {
            s.lines()
                .find(|l| l.starts_with("VmHWM:"))
                .and_then(|l| l.split_whitespace().nth(1))
                .and_then(|v| v.parse().ok())
        })
        .unwrap_or(0)
}

/// Least-squares slope of log(time) on log(rows).
fn growth_exponent(points: &[(usize, f64)]) -> f64 {
    let pts: Vec<(f64, f64)> = points
        .iter()
        .map(|&(n, t)| ((n as f64).ln(), t.ln()))
        .collect();
    let m = pts.len() as f64;
    let (mx, my) = (
        pts.iter().map(|p| p.0).sum::<f64>() / m,
        pts.iter().map(|p| p.1).sum::<f64>() / m,
    );
    let sxy: f64 = pts.iter().map(|p| (p.0 - mx) * (p.1 - my)).sum();
    let sxx: f64 = pts.iter().map(|p| (p.0 - mx) * (p.0 - mx)).sum();
    sxy / sxx
}

fn fmt_s(d: Duration) -> String {
    format!("{:.2}", d.as_secs_f64())
}

fn fmt_rate(r: f64) -> String {
    format!("{:.0}", r)
}

/// The printed table: figure, ours, limit, ours/limit, goal.
#[derive(Default)]
struct Table {
    lines: Vec<Line>,
    load_start: String,
}

enum Line {
    Section(String),
    Row {
        figure: String,
        ours: String,
        limit: String,
        ratio: String,
        goal: String,
    },
    Note(String),
}

impl Table {
    fn section(&mut self, s: &str) {
        self.lines.push(Line::Section(s.to_string()));
    }
    fn note(&mut self, s: &str) {
        self.lines.push(Line::Note(s.to_string()));
    }
    fn row(&mut self, figure: &str, ours: String, limit: String, goal: &str) {
        self.lines.push(Line::Row {
            figure: figure.to_string(),
            ours,
            limit,
            ratio: String::new(),
            goal: goal.to_string(),
        });
    }
    fn ratio_row(&mut self, figure: &str, ours: f64, limit: f64, goal: &str) {
        self.lines.push(Line::Row {
            figure: figure.to_string(),
            ours: num(ours),
            limit: num(limit),
            ratio: format!("{:.2}", ours / limit),
            goal: goal.to_string(),
        });
    }

    fn render(&self, cfg: &Config) -> String {
        let mut s = String::new();
        let _ = writeln!(
            s,
            "\ncopse workloads | machine: {} | cores: {} | all threads = {} | scale {}",
            cpu_model(),
            cores(),
            cfg.threads,
            cfg.scale
        );
        let _ = writeln!(
            s,
            "load average (1, 5, 15 min) at start: {} | at end: {} (other work on the \
             machine slows every figure, and the speed-ups most)",
            self.load_start,
            load_average()
        );
        let w = 58;
        let _ = writeln!(
            s,
            "{:<w$} {:>12} {:>12} {:>10}  goal (issue 5)",
            "figure", "ours", "limit", "ours/limit"
        );
        for l in &self.lines {
            match l {
                Line::Section(t) => {
                    let _ = writeln!(s, "\n== {t}");
                }
                Line::Note(t) => {
                    let _ = writeln!(s, "   ({t})");
                }
                Line::Row {
                    figure,
                    ours,
                    limit,
                    ratio,
                    goal,
                } => {
                    let _ = writeln!(s, "{figure:<w$} {ours:>12} {limit:>12} {ratio:>10}  {goal}");
                }
            }
        }
        s
    }
}

fn num(v: f64) -> String {
    if v.abs() >= 1000.0 {
        format!("{v:.0}")
    } else if v.abs() >= 10.0 {
        format!("{v:.1}")
    } else {
        format!("{v:.2}")
    }
}

/// The first three fields of /proc/loadavg, or "unknown".
fn load_average() -> String {
    std::fs::read_to_string("/proc/loadavg")
        .ok()
        .map(|s| s.split_whitespace().take(3).collect::<Vec<_>>().join(" "))
        .unwrap_or_else(|| "unknown".to_string())
}

fn cpu_model() -> String {
    std::fs::read_to_string("/proc/cpuinfo")
        .ok()
        .and_then(|s| {
            s.lines()
                .find(|l| l.starts_with("model name"))
                .and_then(|l| l.split(':').nth(1))
                .map(|m| m.trim().to_string())
        })
        .unwrap_or_else(|| "unknown".to_string())
}
