//! R20k: outcome ranges (quantile regression forests). A regression forest of the
//! usual size on 20,000 rows of Friedman #1 keeps its leaf rows; the section gives the
//! bytes they take per training row and tree, and the rows per second that
//! `Forest::outcome_intervals` scores on all threads, beside plain prediction of the
//! same rows (which the ranges must do and more: gather and sort each row's training
//! outcomes).
use crate::config::{pool, settings, Config};
use crate::table::Table;
use copse_forest::{synth, Forest, TrainOptions};
use std::hint::black_box;
use std::time::Instant;

/// Adds the "R20k" section (skipped with `COPSE_BENCH_SKIP=ranges`).
pub fn section(cfg: &Config, table: &mut Table) {
    let n = cfg.rows(20_000);
    table.section(&format!(
        "R{}k: outcome ranges, Friedman #1, {n} training rows, 90% ranges",
        n / 1000
    ));
    if cfg.skip("ranges") {
        table.note("skipped (COPSE_BENCH_SKIP)");
        return;
    }
    eprintln!("R20k: training with leaf rows kept and scoring ranges ...");
    let train = synth::friedman1(n, 3);
    let score = synth::friedman1(n, 4);
    let options = TrainOptions {
        keep_leaf_rows: true,
        oob_importance: false,
        ..TrainOptions::default()
    };
    let threads = cfg.threads;
    let forest = pool(threads).install(|| {
        Forest::train(
            train.x.view(),
            &train.meta,
            &train.outcome,
            &settings(),
            &options,
        )
        .expect("the benchmark forest trains")
        .forest
    });
    let rows = forest.leaf_rows().expect("kept");
    let trees = forest.trees().len();
    table.row(
        "leaf rows kept: bytes per training row and tree",
        format!("{:.2}", rows.heap_bytes() as f64 / (n * trees) as f64),
        String::new(),
        "",
    );
    table.note(&format!(
        "{} members ({:.3} per row and tree, 5 bytes each), {} nodes (4 bytes each), \
         {n} outcomes (8 bytes each)",
        rows.members(),
        rows.members() as f64 / (n * trees) as f64,
        forest.n_nodes()
    ));
    let x = score.x.view();
    let (ranges, plain) = pool(threads).install(|| {
        let t = Instant::now();
        black_box(forest.outcome_intervals(x, 0.9).expect("ranges"));
        let ranges = t.elapsed();
        let t = Instant::now();
        black_box(forest.predict(x).expect("scores"));
        (ranges, t.elapsed())
    });
    table.ratio_row(
        &format!("range rows per second, {threads} threads (limit: prediction)"),
        n as f64 / ranges.as_secs_f64(),
        n as f64 / plain.as_secs_f64(),
        "",
    );
    if let Some(c) = rows.oob_check() {
        table.note(&format!(
            "out-of-bag: {:.3} of {} training outcomes inside their 90% range, mean width {:.2}",
            c.share_inside(),
            c.rows,
            c.mean_width
        ));
    }
}
