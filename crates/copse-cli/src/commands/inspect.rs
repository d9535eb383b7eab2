//! `copse inspect`: describe a model file (inputs, settings, sizes, out-of-bag summary)
//! and optionally print one tree's rules.
use crate::args::InspectArgs;
use crate::commands::emit;
use crate::error::{CliError, CliResult};
use crate::json;
use crate::report::{self, bytes_words, Style};
use crate::ui::Ui;
use copse_forest::Forest as Model;
use copse_tree::render::render;
use serde_json::json;
use std::fmt::Write;

/// Sizes of a model.
struct Sizes {
    trees: usize,
    nodes: usize,
    leaves: usize,
    deepest: usize,
    mean_depth: f64,
    bytes_in_memory: usize,
    file_bytes: u64,
}

fn sizes(model: &Model, file_bytes: u64) -> Sizes {
    let trees = model.trees();
    let depths: Vec<usize> = trees.iter().map(|t| t.depth()).collect();
    Sizes {
        trees: trees.len(),
        nodes: model.n_nodes(),
        leaves: trees.iter().map(|t| t.n_leaves()).sum(),
        deepest: depths.iter().copied().max().unwrap_or(0),
        mean_depth: depths.iter().sum::<usize>() as f64 / depths.len().max(1) as f64,
        bytes_in_memory: model.heap_bytes(),
        file_bytes,
    }
}

/// Runs `copse inspect`.
///
/// # Errors
/// Input errors for a bad model or tree number; failures when writing.
pub fn run(a: &InspectArgs, ui: &Ui) -> CliResult<()> {
    let model = crate::commands::load_model(&a.model)?;
    let file_bytes = std::fs::metadata(&a.model).map(|m| m.len()).unwrap_or(0);
    let n_trees = model.trees().len();
    let tree = match a.tree {
        Some(k) if k >= n_trees => {
            return Err(CliError::input(format!(
                "--tree {k}: the model has {n_trees} trees, numbered 0 to {}",
                n_trees - 1
            )))
        }
        Some(k) => Some((k, &model.trees()[k])),
        None => None,
    };
    let classes = (!model.classes().is_empty()).then(|| model.classes());
    let rules = tree.map(|(k, t)| (k, t, render(t, model.meta(), classes)));
    let s = sizes(&model, file_bytes);

    if a.json {
        let mut map = json::model_object("inspect", &model);
        map.insert("model_file".into(), json!(a.model.display().to_string()));
        map.insert(
            "sizes".into(),
            json!({
                "trees": s.trees,
                "nodes": s.nodes,
                "leaves": s.leaves,
                "deepest_leaf": s.deepest,
                "mean_tree_depth": s.mean_depth,
                "bytes_in_memory": s.bytes_in_memory,
                "file_bytes": s.file_bytes,
            }),
        );
        map.insert(
            "impurity_importance".into(),
            json::ranking(model.impurity_importance()),
        );
        if let Some((k, t, text)) = &rules {
            map.insert(
                "tree".into(),
                json!({
                    "index": k,
                    "nodes": t.nodes().len(),
                    "leaves": t.n_leaves(),
                    "depth": t.depth(),
                    "rules": text,
                }),
            );
        }
        return json::print(map);
    }

    let st = Style::new(ui.stdout_colour());
    let mut text = String::new();
    let _ = writeln!(
        text,
        "copse model {} (made by copse {})\n",
        a.model.display(),
        model.card().copse_version
    );
    report::data_section(&mut text, st, &model);
    report::settings_section(&mut text, st, &model, None);
    let _ = writeln!(text, "{}", st.head("SIZE"));
    let _ = writeln!(text, "  {:<24}{}", "trees", s.trees);
    let _ = writeln!(text, "  {:<24}{} ({} leaves)", "nodes", s.nodes, s.leaves);
    let _ = writeln!(
        text,
        "  {:<24}{:.1} on average, deepest leaf at {}",
        "tree depth", s.mean_depth, s.deepest
    );
    let _ = writeln!(
        text,
        "  {:<24}{} in memory, {} on disk\n",
        "bytes",
        bytes_words(s.bytes_in_memory as u64),
        bytes_words(s.file_bytes)
    );
    report::oob_section(&mut text, st, &model);
    report::importance_section(&mut text, st, &model);
    if let Some((k, _, rules)) = &rules {
        let _ = writeln!(text, "{}", st.head(&format!("RULES OF TREE {k}")));
        for l in rules.lines() {
            let _ = writeln!(text, "  {l}");
        }
        let _ = writeln!(text);
    }
    report::caution(&mut text, st);
    emit(&text)
}
