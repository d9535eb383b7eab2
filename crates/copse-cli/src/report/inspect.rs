//! The report of `copse inspect`: the model summary, the model's sizes, its impurity
//! importance and, when asked for, one tree's rules.
use super::model::ModelView;
use super::ranking::{importance_section, oob_baseline, ranking, ImportanceView, RankView};
use super::sections::{data_section, oob_section, settings_section};
use super::{caution, Style, LABEL};
use crate::numbers::decimal_bytes;
use copse_forest::{Forest, Sampling};
use copse_tree::render::{outline, render_with_root, NodeOutline};
use serde::Serialize;
use std::fmt::Write;
use std::path::Path;

/// The model report.
#[derive(Serialize)]
pub struct InspectView<'a> {
    #[serde(flatten)]
    model: ModelView<'a>,
    #[serde(flatten)]
    importance: ImportanceView<'a>,
    model_file: String,
    sizes: Sizes,
    impurity_importance: Vec<RankView<'a>>,
    #[serde(skip_serializing_if = "Option::is_none")]
    tree: Option<TreeView>,
    #[serde(skip)]
    forest: &'a Forest,
}

/// Sizes of a model.
#[derive(Serialize)]
struct Sizes {
    trees: usize,
    nodes: usize,
    leaves: usize,
    deepest_leaf: usize,
    mean_tree_depth: f64,
    bytes_in_memory: usize,
    file_bytes: u64,
}

impl Sizes {
    fn new(model: &Forest, file_bytes: u64) -> Self {
        let trees = model.trees();
        let depths: Vec<usize> = trees.iter().map(|t| t.depth()).collect();
        Sizes {
            trees: trees.len(),
            nodes: model.n_nodes(),
            leaves: trees.iter().map(|t| t.n_leaves()).sum(),
            deepest_leaf: depths.iter().copied().max().unwrap_or(0),
            mean_tree_depth: depths.iter().sum::<usize>() as f64 / depths.len().max(1) as f64,
            bytes_in_memory: model.heap_bytes(),
            file_bytes,
        }
    }
}

/// One tree: its sizes, its rules as text, and its nodes one by one (`node_list`:
/// id, depth, test, cases, class shares or mean, children, prediction).
#[derive(Serialize)]
struct TreeView {
    index: usize,
    nodes: usize,
    leaves: usize,
    depth: usize,
    rules: String,
    node_list: Vec<NodeOutline>,
}

/// What the root of a tree of `model` holds: the rows the tree was grown on.
fn root_label(model: &Forest) -> &'static str {
    let s = model.settings();
    match (s.sampling, s.balanced) {
        (Sampling::Whole, _) => "every training row",
        (_, true) => "this tree's class-balanced resample",
        (Sampling::Bootstrap, false) => "this tree's bootstrap resample",
        (Sampling::Subsample(_), false) => "this tree's subsample",
    }
}

impl<'a> InspectView<'a> {
    /// The report on `forest`, read from `model_path` (a file of `file_bytes` bytes),
    /// with the rules of tree `tree` when given (which must be in the model).
    pub fn new(
        forest: &'a Forest,
        model_path: &Path,
        file_bytes: u64,
        tree: Option<usize>,
    ) -> Self {
        let classes = (!forest.classes().is_empty()).then(|| forest.classes());
        let tree = tree
            .and_then(|k| forest.trees().get(k).map(|t| (k, t)))
            .map(|(k, t)| TreeView {
                index: k,
                nodes: t.nodes().len(),
                leaves: t.n_leaves(),
                depth: t.depth(),
                rules: render_with_root(t, forest.meta(), classes, root_label(forest)),
                node_list: outline(t, forest.meta(), classes),
            });
        InspectView {
            model: ModelView::new("inspect", forest),
            importance: ImportanceView::new(forest.oob_importance(), None, oob_baseline(forest)),
            model_file: model_path.display().to_string(),
            sizes: Sizes::new(forest, file_bytes),
            impurity_importance: ranking(forest.impurity_importance()),
            tree,
            forest,
        }
    }

    /// The same report named as made by `command` (its JSON `command` key), for a
    /// command that reports on the model it wrote (`pool`).
    pub fn made_by(mut self, command: &'static str) -> Self {
        self.model.command = command;
        self
    }

    /// The printed report.
    pub fn text(&self, st: Style) -> String {
        let model = self.forest;
        let s = &self.sizes;
        let mut text = String::new();
        let _ = writeln!(
            text,
            "copse model {} (made by copse {})\n",
            self.model_file,
            model.card().copse_version
        );
        data_section(&mut text, st, model, None);
        settings_section(&mut text, st, model, None);
        let _ = writeln!(text, "{}", st.head("SIZE"));
        let _ = writeln!(text, "  {:<LABEL$}{}", "trees", s.trees);
        let _ = writeln!(
            text,
            "  {:<LABEL$}{} ({} leaves)",
            "nodes", s.nodes, s.leaves
        );
        let _ = writeln!(
            text,
            "  {:<LABEL$}{:.1} on average, deepest leaf at {}",
            "tree depth", s.mean_tree_depth, s.deepest_leaf
        );
        let _ = writeln!(
            text,
            "  {:<LABEL$}{} in memory, {} on disk\n",
            "bytes",
            decimal_bytes(s.bytes_in_memory as u64),
            decimal_bytes(s.file_bytes)
        );
        oob_section(&mut text, st, model);
        importance_section(&mut text, st, model, None);
        if let Some(t) = &self.tree {
            let _ = writeln!(text, "{}", st.head(&format!("RULES OF TREE {}", t.index)));
            for l in t.rules.lines() {
                let _ = writeln!(text, "  {l}");
            }
            let _ = writeln!(text);
        }
        caution(&mut text, st);
        text
    }
}
