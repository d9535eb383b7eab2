//! M10: the T1M forest (1,000,000 twonorm rows at scale 1, the T1M settings) grown as 10
//! parts (`Forest::train_part`, as 10 tasks of a job array would) and merged
//! (`Forest::merge_parts`), beside one run of the same forest. The merge re-reads the
//! data: it re-draws every tree's sample and computes the out-of-bag pass and the
//! importance, so it costs about what a whole run costs beyond growing.
use crate::config::{pool, settings, Config, TRAIN_SEED};
use crate::table::{fmt_s, Table};
use copse_forest::{synth, Forest, ForestPart, TrainOptions};
use std::time::{Duration, Instant};

/// Parts the forest is grown in.
const PARTS: usize = 10;

pub fn section(cfg: &Config, n: usize, table: &mut Table) {
    let threads = cfg.threads;
    let s = settings();
    table.section(&format!(
        "M10: the T1M forest, {} trees in {PARTS} parts, merged; {n} rows, {threads} threads",
        s.trees
    ));
    if cfg.skip("merge") {
        table.note("skipped (COPSE_BENCH_SKIP)");
        return;
    }
    eprintln!(
        "M10: {PARTS} parts of {} trees on {n} rows, then the merge ...",
        s.trees
    );
    let train = synth::twonorm(n, TRAIN_SEED);
    let options = TrainOptions::default();
    let (x, meta, outcome) = (train.x.view(), &train.meta, &train.outcome);
    let p = pool(threads);
    let (parts, grow): (Vec<ForestPart>, Duration) = p.install(|| {
        let t = Instant::now();
        let per = s.trees.div_ceil(PARTS);
        let parts = (0..PARTS)
            .map(|i| (i * per)..((i + 1) * per).min(s.trees))
            .filter(|r| !r.is_empty())
            .map(|r| Forest::train_part(x, meta, outcome, &s, r, &options).expect("part trains"))
            .collect();
        (parts, t.elapsed())
    });
    let part_bytes: usize = parts
        .iter()
        .map(|q| q.to_bytes().expect("encodes").len())
        .sum();
    let (merged, merge) = p.install(|| {
        let t = Instant::now();
        let m = Forest::merge_parts(&parts, x, meta, outcome, None).expect("parts merge");
        (m, t.elapsed())
    });
    let (whole, one_run) = p.install(|| {
        let t = Instant::now();
        let w = Forest::train(x, meta, outcome, &s, &options).expect("trains");
        (w, t.elapsed())
    });
    let same = merged.forest.to_bytes().ok() == whole.forest.to_bytes().ok();
    table.row(
        "growing the 10 parts, one after another (s)",
        fmt_s(grow),
        String::new(),
        "",
    );
    table.row("merge wall (s)", fmt_s(merge), String::new(), "");
    table.row(
        "one run of the whole forest (s)",
        fmt_s(one_run),
        String::new(),
        "",
    );
    table.row(
        "merge / one run",
        format!("{:.2}", merge.as_secs_f64() / one_run.as_secs_f64()),
        String::new(),
        "",
    );
    table.note(&format!(
        "part files {:.1} MB in all; merged model the same bytes as one run: {}; the merge \
         re-draws every tree's sample and computes the out-of-bag pass and importance",
        part_bytes as f64 / 1e6,
        if same { "yes" } else { "NO" }
    ));
}
