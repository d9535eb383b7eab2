//! One timed training run: the forest, its stage times from the progress reports, and
//! the counts the per-unit figures divide by (distinct in-bag rows, mean leaf depth).
use crate::config::{pool, settings, K};
use copse_forest::{synth, Forest, Outcome, Progress, Stage, TrainOptions};
use copse_tree::Tree;
use std::sync::Mutex;
use std::time::{Duration, Instant};

/// One timed training run and what the figures need from it.
pub struct Fit {
    pub forest: Forest,
    pub grow: Duration,
    pub oob: Duration,
    pub importance: Option<Duration>,
    pub distinct_in_bag: u64,
    pub mean_depth: f64,
    pub oob_rows: u64,
}

impl Fit {
    pub fn units(&self) -> f64 {
        self.distinct_in_bag as f64 * K as f64 * self.mean_depth
    }
    pub fn ns_per_unit(&self, threads: usize) -> f64 {
        self.grow.as_secs_f64() * 1e9 * threads as f64 / self.units()
    }
}

/// Trains on `threads` threads; stage times come from the progress reports (the last
/// report of a stage marks its end).
pub fn train_timed(data: &synth::Synthetic, threads: usize, importance: bool) -> Fit {
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
pub fn fastest(repeat: usize, run: impl Fn() -> Fit) -> Fit {
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
pub fn leaf_depths(tree: &Tree) -> Vec<u32> {
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
