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
//! - `COPSE_BENCH_SKIP=e2e,demo,masks,t1m,scaling,importance,wide,explain,ranges,cuts,merge`
//!   skips workloads by name.
//! - `COPSE_BENCH_DEMO_ROWS=N` sets the rows D2M scores (default 400,000 x scale; the
//!   issue's figure is for 2,000,000).
//! - `COPSE_BENCH_REPEAT=3` runs each T100k training and each end-to-end scoring that
//!   many times and keeps the fastest (default 1; use it on a machine shared with other
//!   work).
//! - `COPSE_BENCH_ONLY=masks` runs the in-memory D2M comparison of node walk and leaf
//!   masks alone (`leaf_masks.rs`).
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
//! - D2M (the demo's kind of model, scored end to end) and the wide and many-class
//!   tables (see `demo_model.rs`, `wide.rs`) are measured without a limit kernel.
//!
//! T1M runs in a child process (this executable, re-run) so its peak resident memory
//! (VmHWM in /proc/self/status) is its own.
//!
//! `main` runs the workloads in this order (I100k's limit needs S1M's scoring kernel;
//! the scaling fit needs T100k and T1M); each module adds its section to the table.

mod config;
mod cuts;
mod demo_model;
mod end_to_end;
mod explain;
mod fit;
mod importance;
mod kernels;
mod leaf_masks;
mod machine;
mod merge;
mod model;
mod parquet_rows;
mod ranges;
mod scoring;
mod t1m;
mod table;
mod training;
mod wide;

use config::{cores, Config, CHILD, SCORE_SEED, TRAIN_SEED};
use copse_forest::synth;
use table::Table;

fn main() {
    let cfg = Config::from_env();
    if std::env::var_os(CHILD).is_some() {
        t1m::child(&cfg);
        return;
    }
    // `cargo bench` passes `--bench`; no other argument is used.
    let mut table = Table::new();
    if std::env::var("COPSE_BENCH_ONLY").as_deref() == Ok("masks") {
        leaf_masks::section(&cfg, &mut table);
        println!("{}", table.render(&cfg));
        return;
    }
    eprintln!(
        "copse workloads: scale {}, all threads = {}, machine cores = {}",
        cfg.scale,
        cfg.threads,
        cores()
    );

    let n100k = cfg.rows(100_000);
    let train = synth::twonorm(n100k, TRAIN_SEED);
    let ta = training::t100k(&cfg, &train, &mut table);
    model::section(&ta.forest, &mut table);
    if !cfg.skip("explain") {
        let rows = synth::twonorm(explain::T100K_ROWS, SCORE_SEED);
        explain::section(&ta.forest, rows.x.view(), &mut table);
    }
    cuts::section(&cfg, &train, &mut table);

    let n1m = cfg.rows(1_000_000);
    eprintln!("S1M: scoring {n1m} rows ...");
    let score = synth::twonorm(n1m, SCORE_SEED);
    let kernel_ns_per_visit = scoring::in_memory(&cfg, &ta.forest, &score, &mut table);
    // After S1M: the importance limit uses the scoring kernel's rate.
    importance::section(&cfg, &ta, kernel_ns_per_visit, &mut table);
    end_to_end::section(&cfg, &train, &score, &mut table);
    ranges::section(&cfg, &mut table);
    demo_model::section(&cfg, &mut table);
    leaf_masks::section(&cfg, &mut table);
    merge::section(&cfg, n1m, &mut table);

    let t1m_grow = t1m::section(&cfg, n1m, &mut table);
    training::scaling(
        &cfg,
        (n100k, ta.grow.as_secs_f64()),
        t1m_grow.map(|s| (n1m, s)),
        &mut table,
    );
    wide::section(&cfg, &mut table);

    println!("{}", table.render(&cfg));
}
