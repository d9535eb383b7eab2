//! The T100k model's size: nodes, bytes per node in memory (tree structure apart from
//! the impurity summaries) and bytes per node encoded.
use crate::table::Table;
use copse_forest::Forest;

/// Adds the "Model (T100k)" section for `forest`.
pub fn section(forest: &Forest, table: &mut Table) {
    let nodes = forest.n_nodes();
    table.section("Model (T100k)");
    table.row("nodes", nodes.to_string(), String::new(), "");
    // The per-tree sums of impurity decrease (8 bytes an input, for impurity
    // importance) are a summary of the tree, not part of its structure: shown apart.
    let sums: usize = forest
        .trees()
        .iter()
        .map(|t| 8 * t.impurity_decrease().len())
        .sum();
    table.row(
        "bytes per node in memory (tree structure)",
        format!("{:.2}", (forest.heap_bytes() - sums) as f64 / nodes as f64),
        String::new(),
        "<= 16",
    );
    table.note(&format!(
        "nodes with their leaves' outputs, leaf tables, category sets; with each tree's \
         impurity sums, 8 bytes an input: {:.3} bytes per node in all",
        forest.heap_bytes() as f64 / nodes as f64
    ));
    let encoded = bincode::serde::encode_to_vec(forest, bincode::config::standard())
        .map(|v| v.len())
        .unwrap_or(0);
    table.row(
        "bytes per node, forest encoded in memory (bincode)",
        format!("{:.2}", encoded as f64 / nodes as f64),
        String::new(),
        "<= 16",
    );
}
