//! The training workloads measured in this process: T100k on 1 and all threads beside
//! the training kernel, and the scaling of the growing wall with the row count.
use crate::config::{Config, K, TRAIN_SEED, TREES};
use crate::fit::{fastest, train_timed, Fit};
use crate::kernels::kernel_train_timed;
use crate::table::{fmt_s, Table};
use copse_forest::synth;

/// Adds the T100k section: `train` on 1 thread, then on all threads with out-of-bag
/// importance (unless skipped); returns the all-threads run, whose model the later
/// workloads use.
pub fn t100k(cfg: &Config, train: &synth::Synthetic, table: &mut Table) -> Fit {
    let threads = cfg.threads;
    let n100k = train.x.nrows();
    eprintln!("T100k on {n100k} rows, 1 thread ...");
    let t1 = fastest(cfg.repeat, || train_timed(train, 1, false));
    eprintln!("T100k on {n100k} rows, {threads} threads, with importance ...");
    let ta = fastest(cfg.repeat, || {
        train_timed(train, threads, !cfg.skip("importance"))
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
        "<= 2.5 (issue 19)",
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
    ta
}

/// Adds the scaling section: the growing wall on all threads at 10k rows (trained
/// here), at T100k's rows and, when measured, at T1M's, with the fitted exponent.
pub fn scaling(cfg: &Config, t100k: (usize, f64), t1m: Option<(usize, f64)>, table: &mut Table) {
    let threads = cfg.threads;
    table.section(&format!("Scaling: growing wall, {threads} threads"));
    if cfg.skip("scaling") {
        table.note("skipped (COPSE_BENCH_SKIP)");
        return;
    }
    let n10k = cfg.rows(10_000);
    let small = synth::twonorm(n10k, TRAIN_SEED);
    let t10 = train_timed(&small, threads, false);
    let scaling: Vec<(usize, f64)> = [Some((n10k, t10.grow.as_secs_f64())), Some(t100k), t1m]
        .into_iter()
        .flatten()
        .collect();
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
