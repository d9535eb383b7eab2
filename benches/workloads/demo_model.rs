//! D2M: `copse score` with the demo's kind of model (500 trees grown on the 2,000-row
//! invented water-main register: about 340 nodes a tree, categorical inputs and missing
//! install years) on rows from `copse make-demo-data`, CSV to CSV, on 1 and all threads.
//!
//! The workload scores 2,000,000 rows; by default this run scores 400,000
//! (times `COPSE_BENCH_SCALE`) so that a bench run stays within minutes, and
//! `COPSE_BENCH_DEMO_ROWS=2000000` gives the full count. Rows per second hardly depend on
//! the count beyond a few blocks of rows.
use crate::config::Config;
use crate::end_to_end::{copse_binary, path_str, run_copse, timed_score};
use crate::table::Table;
use std::time::Duration;

/// Rows scored by default (before the scale).
const DEFAULT_ROWS: usize = 400_000;

/// Adds the D2M section.
pub fn section(cfg: &Config, table: &mut Table) {
    let threads = cfg.threads;
    let rows = std::env::var("COPSE_BENCH_DEMO_ROWS")
        .ok()
        .and_then(|s| s.parse::<usize>().ok())
        .filter(|&r| r > 0)
        .unwrap_or_else(|| cfg.rows(DEFAULT_ROWS));
    table.section(&format!(
        "D2M: copse score, the demo's kind of model (500 trees), {rows} rows from \
         make-demo-data, CSV to CSV"
    ));
    if cfg.skip("demo") {
        table.note("skipped (COPSE_BENCH_SKIP)");
        return;
    }
    eprintln!("D2M: scoring {rows} demo rows ...");
    let d = match run(rows, threads, cfg.repeat) {
        Ok(d) => d,
        Err(msg) => {
            table.note(&format!("not measured: {msg}"));
            return;
        }
    };
    table.row(
        "rows per second, 1 thread",
        format!("{:.0}", rows as f64 / d.score1.as_secs_f64()),
        String::new(),
        "",
    );
    table.row(
        &format!("rows per second, {threads} threads"),
        format!("{:.0}", rows as f64 / d.score_all.as_secs_f64()),
        String::new(),
        ">= 200000 on 2 threads (issue 19)",
    );
    table.ratio_row(
        &format!("speed-up, {threads} threads over 1"),
        d.score1.as_secs_f64() / d.score_all.as_secs_f64(),
        threads as f64,
        "",
    );
    table.note(&format!(
        "CPU seconds of copse score (user + system): {:.2} on 1 thread, {:.2} on {threads}; \
         {:.0} rows per CPU second on 1 thread",
        d.cpu1,
        d.cpu_all,
        rows as f64 / d.cpu1.max(1e-9)
    ));
    table.note(&format!(
        "input CSV {:.1} MB; model {} nodes ({:.0} a tree); walls {:.2} s (1 thread), \
         {:.2} s ({threads} threads); COPSE_BENCH_DEMO_ROWS=2000000 scores the issue's count",
        d.csv_bytes as f64 / 1e6,
        d.nodes,
        d.nodes as f64 / 500.0,
        d.score1.as_secs_f64(),
        d.score_all.as_secs_f64()
    ));
}

/// What the demo-model run measured.
struct DemoRun {
    score1: Duration,
    score_all: Duration,
    /// CPU seconds of the scoring runs (the least of the repeats).
    cpu1: f64,
    cpu_all: f64,
    csv_bytes: u64,
    nodes: u64,
}

/// Writes the demo files (2,000 training rows, `rows` to score), trains the demo's
/// model as `copse demo` does (500 trees, min leaf 1, seed 1, the identifier ignored),
/// then scores on 1 and all threads, the fastest of `repeat` runs each.
fn run(rows: usize, threads: usize, repeat: usize) -> Result<DemoRun, String> {
    let exe = copse_binary().ok_or(
        "no copse binary: build it with `cargo build --release -p copse-cli`, or set COPSE_BIN",
    )?;
    let dir = std::env::temp_dir().join(format!("copse-bench-demo-{}", std::process::id()));
    std::fs::create_dir_all(&dir).map_err(|e| format!("{}: {e}", dir.display()))?;
    let result = (|| {
        let dir_s = path_str(&dir)?;
        run_copse(
            &exe,
            &[
                "--quiet",
                "make-demo-data",
                "--out",
                dir_s,
                "--rows",
                "2000",
                "--score-rows",
                &rows.to_string(),
            ],
        )?;
        let train_csv = dir.join("water_mains.csv");
        let score_csv = dir.join("water_mains_to_score.csv");
        let model = dir.join("demo.copse");
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
                "failed_within_year",
                "--ignore",
                "segment_id",
                "--trees",
                "500",
                "--min-leaf",
                "1",
                "--seed",
                "1",
                "--out",
                path_str(&model)?,
            ],
        )?;
        let info = run_copse(&exe, &["inspect", "--model", path_str(&model)?, "--json"])?;
        let json: serde_json::Value =
            serde_json::from_str(&info).map_err(|e| format!("inspect --json: {e}"))?;
        let nodes = crate::end_to_end::find_number(&json, "nodes").unwrap_or(0);
        let keep = ["--keep", "segment_id"];
        let score_with = |t: usize| {
            let out = dir.join(format!("scored-{t}.csv"));
            timed_score(&exe, t, &model, &score_csv, &out, &keep, Some(rows))
        };
        let (mut score1, mut score_all) = (Duration::MAX, Duration::MAX);
        let (mut cpu1, mut cpu_all) = (f64::INFINITY, f64::INFINITY);
        for _ in 0..repeat {
            let (w, c) = score_with(1)?;
            score1 = score1.min(w);
            cpu1 = cpu1.min(c);
            let (w, c) = score_with(threads)?;
            score_all = score_all.min(w);
            cpu_all = cpu_all.min(c);
        }
        Ok(DemoRun {
            score1,
            score_all,
            cpu1,
            cpu_all,
            csv_bytes: std::fs::metadata(&score_csv).map_or(0, |m| m.len()),
            nodes,
        })
    })();
    let _ = std::fs::remove_dir_all(&dir);
    result
}
