//! T1M: the same training on a million rows, run in a child process (this executable,
//! re-run with `COPSE_BENCH_CHILD` set) so that its peak resident memory is its own.
use crate::config::{Config, CHILD, TRAIN_SEED};
use crate::fit::train_timed;
use crate::kernels::kernel_train_timed;
use crate::machine::vm_hwm_kb;
use crate::table::Table;
use copse_forest::synth;
use std::process::Command;
use std::time::Instant;

/// Adds the T1M section for `n1m` rows; returns the child's growing wall in seconds
/// when it was measured (a point of the scaling fit).
pub fn section(cfg: &Config, n1m: usize, table: &mut Table) -> Option<f64> {
    let threads = cfg.threads;
    table.section(&format!(
        "T1M: the same training on {n1m} rows, {threads} threads (child process)"
    ));
    if cfg.skip("t1m") {
        table.note("skipped (COPSE_BENCH_SKIP)");
        return None;
    }
    eprintln!("T1M on {n1m} rows, {threads} threads (child process) ...");
    let c = match run_child() {
        Ok(c) => c,
        Err(msg) => {
            table.note(&format!("not measured: {msg}"));
            return None;
        }
    };
    table.row(
        "growing wall (s)",
        format!("{:.2}", c.grow),
        String::new(),
        "<= 8 s on 2 threads (issue 19)",
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
        "<= 420 (issue 19)",
    );
    table.note(&format!(
        "units {:.3e}, mean leaf depth {:.2}, nodes {}; memory limit = inputs \
         as f64 + outcome + binned bytes + model",
        c.units, c.mean_depth, c.nodes
    ));
    Some(c.grow)
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
pub fn child(cfg: &Config) {
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
