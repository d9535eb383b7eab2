//! Randomized cut points against the best-cut search: growing time per tree on the
//! T100k data (same K, min leaf 1), with the sizes of the trees grown, since random
//! cuts grow deeper trees with more nodes (they split until leaves are pure).
use crate::config::{pool, settings, Config};
use crate::table::Table;
use copse_forest::{CutChoice, Forest, Progress, Sampling, Stage, TrainOptions};
use std::sync::Mutex;
use std::time::{Duration, Instant};

/// Growing wall and nodes per tree of one forest.
fn grow_timed(
    data: &copse_forest::synth::Synthetic,
    threads: usize,
    cuts: CutChoice,
    sampling: Sampling,
) -> (Duration, f64) {
    let mut s = settings();
    s.tree.cuts = cuts;
    s.sampling = sampling;
    let end = Mutex::new(Duration::ZERO);
    let start = Instant::now();
    let trained = pool(threads).install(|| {
        let progress = |p: Progress| {
            if p.stage == Stage::Growing {
                if let Ok(mut e) = end.lock() {
                    *e = (*e).max(start.elapsed());
                }
            }
        };
        let options = TrainOptions {
            oob_importance: false,
            progress: Some(&progress),
            ..TrainOptions::default()
        };
        Forest::train(data.x.view(), &data.meta, &data.outcome, &s, &options)
    });
    let forest = trained.expect("twonorm trains").forest;
    let nodes = forest.n_nodes() as f64 / forest.trees().len() as f64;
    (end.into_inner().expect("no poisoned lock"), nodes)
}

/// Adds the section: ms per tree for the best cut (bootstrap), randomized cuts on
/// every row, and randomized cuts with a bootstrap, on all threads.
pub fn section(cfg: &Config, data: &copse_forest::synth::Synthetic, table: &mut Table) {
    let threads = cfg.threads;
    let n = data.x.nrows();
    table.section(&format!(
        "Cut points: growing wall per tree, {threads} threads, {n} rows"
    ));
    if cfg.skip("cuts") {
        table.note("skipped (COPSE_BENCH_SKIP)");
        return;
    }
    eprintln!("cut points on {n} rows, {threads} threads ...");
    let trees = settings().trees as f64;
    let per_tree = |d: Duration| d.as_secs_f64() * 1e3 * threads as f64 / trees;
    let runs = [
        ("best cuts, bootstrap", CutChoice::Best, Sampling::Bootstrap),
        ("random cuts, every row", CutChoice::Random, Sampling::Whole),
        (
            "random cuts, bootstrap",
            CutChoice::Random,
            Sampling::Bootstrap,
        ),
    ];
    let mut base = None;
    for (label, cuts, sampling) in runs {
        let (wall, nodes) = (0..cfg.repeat.max(1))
            .map(|_| grow_timed(data, threads, cuts, sampling))
            .min_by_key(|r| r.0)
            .expect("at least one run");
        let ms = per_tree(wall);
        let us_node = ms * 1e3 / nodes;
        let (ratio, node_ratio) = match base {
            Some((b, bn)) => (
                format!("{:.2} of best", ms / b),
                format!("{:.2} of best", us_node / bn),
            ),
            None => (String::new(), String::new()),
        };
        base.get_or_insert((ms, us_node));
        table.row(
            &format!("{label}: core-ms per tree ({nodes:.0} nodes a tree)"),
            format!("{ms:.1}"),
            ratio,
            "",
        );
        table.row(
            &format!("{label}: core-us per node"),
            format!("{us_node:.1}"),
            node_ratio,
            "",
        );
    }
    table.note(
        "core time = growing wall x threads; the limit column gives the ratio to the best-cut \
         search; random cuts score one cut per input instead of every cut, but grow to pure \
         leaves, so their trees hold more nodes",
    );
}
