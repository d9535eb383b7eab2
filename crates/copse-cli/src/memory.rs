//! A rough guard against training runs whose model obviously cannot fit in memory: an
//! estimate of the model's size from the rows, trees and leaf settings, compared with
//! the memory the system says is available, before any tree is grown.
//!
//! The estimate is an upper bound of the usual kind for fully grown trees: a tree whose
//! leaves hold at least `min_leaf` of its `r` distinct in-sample rows has at most
//! `r / min_leaf` leaves and so at most `2 r / min_leaf` nodes (a binary tree with L
//! leaves has 2L - 1 nodes; common practice), and no more than `2^(depth + 1)` with a
//! depth limit. Each node takes 16 bytes in memory, a leaf's output and case weight
//! included; a leaf with three or more classes also keeps its class shares apart (8
//! bytes a class); with `--keep-draws` the model holds one byte per row and tree. Only
//! a request over the available
//! memory by that estimate is refused: trees on classes usually stop well short of the
//! bound (pure leaves come early), while saving briefly needs room for the encoded file
//! too, so the estimate is neither padded nor cut.
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
    let leaves_by_rows = (distinct_rows(r.rows, r.sampling) / r.min_leaf.max(1) as f64).max(1.0);
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
    let per_tree = nodes * NODE_BYTES as f64 + leaves * 8.0 * shares + draws;
    per_tree * r.trees as f64
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
    }
}
