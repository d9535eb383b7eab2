//! A guard against training runs that obviously cannot fit in memory: an estimate of
//! the run's peak memory from the rows, classes, trees and leaf settings, compared with
//! the memory the system says is available, before any tree is grown.
//!
//! The model: a tree whose leaves hold at least `min_leaf` of its `r` distinct
//! in-sample rows has at most `r / min_leaf` leaves (no more than `2^depth` with a depth
//! limit), and a binary tree with L leaves has 2L - 1 nodes (common practice). Trees on
//! classes stop splitting where a node is pure, so fewer leaves are counted there: a
//! leaf then ends a run of rows of one class, and a sequence of `r` labels drawn with
//! class shares `p_c` holds about `1 + (r - 1)(1 - sum p_c^2)` runs (the expected number
//! of changes between neighbours; the factor is the outcome's Gini impurity). Each node
//! takes 16 bytes, a leaf's output and weight included; a leaf with three or more
//! classes also keeps a table of its class shares, 8 bytes a class, as the engine
//! stores it; `--keep-draws` adds a byte per row and tree; `--keep-leaf-rows` adds,
//! per tree, 5 bytes for each distinct row drawn and 4 per node, and 8 bytes a row
//! once (copse_forest's `leaf_rows`).
//!
//! The peak comes when the model is saved: the model and its encoded file (about the
//! same size) are in memory together, beside the per-row tables of the out-of-bag pass
//! and its importance (a row of outputs per training row, twice), the table read from
//! the file and its binned copy, and the program itself. Checked against peaks measured
//! for 2, 3, 100 and 1,000 classes (tests/cli/reliability.rs): within a factor 1.5,
//! above rather than below when the data has structure (pure leaves come earlier).
use copse_forest::leaf_rows::{LEAF_MEMBER_BYTES, LEAF_NODE_BYTES};
use copse_forest::Sampling;

/// Bytes of one tree node in memory, as the engine lays it out.
const NODE_BYTES: u64 = copse_forest::NODE_BYTES as u64;

/// What an estimate is made from.
#[derive(Debug, Clone, Copy)]
pub struct Request {
    /// Training rows with an outcome.
    pub rows: u64,
    /// Trees to grow.
    pub trees: u64,
    /// Fewest rows per leaf.
    pub min_leaf: u64,
    /// Depth limit, if any.
    pub max_depth: Option<u32>,
    /// Outputs per leaf: the number of classes, or 1 for regression.
    pub outputs: u64,
    /// How each tree's rows are drawn.
    pub sampling: Sampling,
    /// Whether the in-bag counts are kept (`--keep-draws`: a byte per row and tree).
    pub keep_draws: bool,
    /// Whether the leaf rows are kept (`--keep-leaf-rows`).
    pub keep_leaf_rows: bool,
    /// Gini impurity of the class outcome (1 - sum of squared class shares), the share
    /// of neighbouring rows whose classes differ; 1 for regression.
    pub mixing: f64,
    /// Input columns.
    pub inputs: u64,
}

/// Bytes of the program itself, its libraries and thread stacks (measured: about 7 MB
/// when scoring a small model).
const BASE_BYTES: f64 = 8.0 * 1024.0 * 1024.0;

impl Request {
    /// The request of training on `data` with `settings` (`keep_draws` for
    /// `--keep-draws`).
    pub fn new(
        data: &copse_data::TrainingTable,
        settings: &copse_forest::ForestSettings,
        keep_draws: bool,
    ) -> Self {
        let mixing = match &data.outcome {
            copse_forest::Outcome::Classes { codes, labels } => {
                let mut counts = vec![0u64; labels.len()];
                for &c in codes {
                    if let Some(n) = counts.get_mut(c as usize) {
                        *n += 1;
                    }
                }
                let total = counts.iter().sum::<u64>().max(1) as f64;
                1.0 - counts
                    .iter()
                    .map(|&n| (n as f64 / total).powi(2))
                    .sum::<f64>()
            }
            copse_forest::Outcome::Values(_) => 1.0,
        };
        Request {
            rows: data.x.nrows() as u64,
            trees: settings.trees as u64,
            min_leaf: settings.tree.min_leaf.max(1.0) as u64,
            max_depth: settings
                .tree
                .max_depth
                .map(|d| d.min(u32::MAX as usize) as u32),
            outputs: data.classes().len().max(1) as u64,
            sampling: settings.sampling,
            keep_draws,
            keep_leaf_rows: false,
            mixing,
            inputs: data.features.len() as u64,
        }
    }
}

/// Distinct rows a tree sees: about 63.2% of them under the bootstrap (1 - 1/e, the
/// chance a row is drawn at least once in n draws with replacement; common practice).
fn distinct_rows(rows: u64, sampling: Sampling) -> f64 {
    let n = rows as f64;
    match sampling {
        Sampling::Bootstrap => n * (1.0 - (-1.0f64).exp()),
        Sampling::Subsample(f) => n * f,
        Sampling::Whole => n,
    }
}

/// Estimated bytes of the finished model in memory, at most.
pub fn model_bytes(r: &Request) -> f64 {
    let distinct = distinct_rows(r.rows, r.sampling);
    let runs = 1.0 + (distinct - 1.0).max(0.0) * r.mixing.clamp(0.0, 1.0);
    let leaves_by_rows = (distinct / r.min_leaf.max(1) as f64).min(runs).max(1.0);
    let leaves = match r.max_depth {
        Some(d) if d < 62 => leaves_by_rows.min((1u64 << d) as f64),
        _ => leaves_by_rows,
    };
    let nodes = 2.0 * leaves - 1.0;
    // Up to two outputs live in the leaf's node; more are kept in a table apart.
    let shares = if r.outputs >= 3 {
        r.outputs as f64
    } else {
        0.0
    };
    let draws = if r.keep_draws { r.rows as f64 } else { 0.0 };
    let members = if r.keep_leaf_rows {
        distinct * LEAF_MEMBER_BYTES as f64 + (nodes + 1.0) * LEAF_NODE_BYTES as f64
    } else {
        0.0
    };
    let per_tree = nodes * NODE_BYTES as f64 + leaves * 8.0 * shares + draws + members;
    let outcomes = if r.keep_leaf_rows {
        8.0 * r.rows as f64
    } else {
        0.0
    };
    per_tree * r.trees as f64 + outcomes
}

/// Estimated peak bytes of the whole training run: the model and its encoded file
/// together while it is saved, the per-row tables of the out-of-bag pass and its
/// importance, the table read and its binned copy, and the program.
pub fn peak_bytes(r: &Request) -> f64 {
    let model = model_bytes(r);
    let rows = r.rows as f64;
    let row_tables = 2.0 * rows * r.outputs as f64 * 8.0;
    let table = rows * (r.inputs + 1) as f64 * 8.0 * 2.0;
    2.0 * model + row_tables + table + BASE_BYTES
}

/// Memory the system says is available for new work (`MemAvailable` in
/// `/proc/meminfo`), or `None` where that cannot be read.
pub fn available_bytes() -> Option<u64> {
    let text = std::fs::read_to_string("/proc/meminfo").ok()?;
    parse_meminfo(&text)
}

fn parse_meminfo(text: &str) -> Option<u64> {
    let line = text.lines().find(|l| l.starts_with("MemAvailable:"))?;
    let mut parts = line.split_whitespace().skip(1);
    let value: u64 = parts.next()?.parse().ok()?;
    match parts.next() {
        Some("kB") | None => value.checked_mul(1024),
        _ => None,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn meminfo_is_read_in_kibibytes() {
        let text = "MemTotal:       24000000 kB\nMemFree:  100 kB\nMemAvailable:   2000 kB\n";
        assert_eq!(parse_meminfo(text), Some(2_048_000));
        assert_eq!(parse_meminfo("MemTotal: 5 kB\n"), None);
        assert_eq!(parse_meminfo("MemAvailable: lots kB\n"), None);
    }

    #[test]
    fn estimate_follows_rows_trees_and_leaf_size() {
        let base = Request {
            rows: 10_000,
            trees: 100,
            min_leaf: 1,
            max_depth: None,
            outputs: 2,
            sampling: Sampling::Whole,
            keep_draws: false,
            keep_leaf_rows: false,
            mixing: 1.0,
            inputs: 4,
        };
        // 10,000 leaves and 19,999 nodes per tree: 16 * 19,999 bytes, for 100 trees.
        let want = 16.0 * 19_999.0 * 100.0;
        assert!((model_bytes(&base) - want).abs() < 1.0);
        // Three classes: 24 more bytes per leaf; kept draws: a byte per row and tree.
        let three = Request { outputs: 3, ..base };
        assert!((model_bytes(&three) - want - 24.0 * 10_000.0 * 100.0).abs() < 1.0);
        let draws = Request {
            keep_draws: true,
            ..base
        };
        assert!((model_bytes(&draws) - want - 10_000.0 * 100.0).abs() < 1.0);
        // Kept leaf rows: every row drawn once (no resampling) at 5 bytes, 4 bytes per
        // node and one more per tree, and the 10,000 outcomes at 8 bytes.
        let leaf_rows = Request {
            keep_leaf_rows: true,
            ..base
        };
        let extra = (5.0 * 10_000.0 + 4.0 * 20_000.0) * 100.0 + 8.0 * 10_000.0;
        assert!((model_bytes(&leaf_rows) - want - extra).abs() < 1.0);
        let bigger_leaves = Request {
            min_leaf: 10,
            ..base
        };
        assert!(model_bytes(&bigger_leaves) < model_bytes(&base) / 9.0);
        let shallow = Request {
            max_depth: Some(3),
            ..base
        };
        // At most 8 leaves, 15 nodes.
        assert!((model_bytes(&shallow) - 16.0 * 15.0 * 100.0).abs() < 1.0);
        // Two balanced classes: about half as many leaves as rows (pure runs end early).
        let halves = Request {
            mixing: 0.5,
            ..base
        };
        let want = 16.0 * (2.0 * 5_000.5 - 1.0) * 100.0;
        assert!((model_bytes(&halves) - want).abs() < 1.0);
        // The peak holds the model twice (saving), two row tables, the table, the base.
        let peak = 2.0 * model_bytes(&three) + 2.0 * 10_000.0 * 3.0 * 8.0 + 10_000.0 * 5.0 * 16.0;
        assert!((peak_bytes(&three) - peak - BASE_BYTES).abs() < 1.0);
    }
}
