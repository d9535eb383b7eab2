//! A text rendering of a tree for people to read: one line per node, indented by depth,
//! each giving the rule that leads there, the cases that reached it and their class
//! shares (or mean), and for a leaf the prediction after `=>`.
use crate::data::{FeatureKind, FeatureMeta};
use crate::tree::{argmax, Tree};
use std::fmt::Write;

/// Per-node totals rebuilt from the leaves: case weight and output sums.
fn node_totals(tree: &Tree) -> (Vec<f64>, Vec<f64>) {
    let k = tree.n_outputs();
    let nodes = tree.nodes();
    let mut w = vec![0.0; nodes.len()];
    let mut sums = vec![0.0; nodes.len() * k];
    // Children always sit after their parent, so a reverse pass sees them first.
    for i in (0..nodes.len()).rev() {
        let n = nodes[i];
        if n.is_leaf() {
            let lw = tree.leaf_weight(n.child());
            w[i] = lw;
            for (s, v) in sums[i * k..(i + 1) * k]
                .iter_mut()
                .zip(tree.leaf_value(n.child()))
            {
                *s = v * lw;
            }
        } else {
            let (l, r) = (n.child(), n.child() + 1);
            w[i] = w[l] + w[r];
            for o in 0..k {
                sums[i * k + o] = sums[l * k + o] + sums[r * k + o];
            }
        }
    }
    (w, sums)
}

/// Renders `tree` with input names from `meta` and class labels (`None` for
/// regression).
pub fn render(tree: &Tree, meta: &[FeatureMeta], classes: Option<&[String]>) -> String {
    let (w, sums) = node_totals(tree);
    let k = tree.n_outputs();
    let describe = |i: usize| -> String {
        let s = &sums[i * k..(i + 1) * k];
        let mut out = format!("{} cases", fmt_num(w[i]));
        match classes {
            Some(labels) => {
                for (c, v) in s.iter().enumerate() {
                    if *v > 0.0 {
                        let _ = write!(
                            out,
                            ", {} {:.0}%",
                            labels.get(c).map_or("?", |l| l),
                            100.0 * v / w[i]
                        );
                    }
                }
            }
            None => {
                let _ = write!(out, ", mean {}", fmt_num(s[0] / w[i]));
            }
        }
        out
    };
    let mut text = String::new();
    let _ = writeln!(
        text,
        "tree: {} nodes, {} leaves, depth {}",
        tree.nodes().len(),
        tree.n_leaves(),
        tree.depth()
    );
    let _ = writeln!(text, "all data ({})", describe(0));
    // (node, depth, rule text)
    let mut stack: Vec<(usize, usize, String)> = Vec::new();
    push_children(tree, meta, 0, 1, &mut stack);
    while let Some((i, depth, rule)) = stack.pop() {
        let n = tree.nodes()[i];
        let indent = "  ".repeat(depth);
        let verdict = if n.is_leaf() {
            let v = tree.leaf_value(n.child());
            match classes {
                Some(labels) => format!("  => {}", labels.get(argmax(v)).map_or("?", |l| l)),
                None => format!("  => {}", fmt_num(v[0])),
            }
        } else {
            String::new()
        };
        let _ = writeln!(text, "{indent}when {rule} ({}){verdict}", describe(i));
        if !n.is_leaf() {
            push_children(tree, meta, i, depth + 1, &mut stack);
        }
    }
    text
}

fn push_children(
    tree: &Tree,
    meta: &[FeatureMeta],
    i: usize,
    depth: usize,
    stack: &mut Vec<(usize, usize, String)>,
) {
    let n = tree.nodes()[i];
    if n.is_leaf() {
        return;
    }
    let Some(f) = n.feature() else { return };
    let name = meta.get(f).map_or("?", |m| m.name.as_str());
    let missing = |left: bool| {
        if left == n.missing_goes_left() {
            " or missing"
        } else {
            ""
        }
    };
    let (left, right) = match (&meta.get(f).map(|m| &m.kind), n.threshold()) {
        (_, Some(t)) => (
            format!("{name} <= {}{}", fmt_num(t), missing(true)),
            format!("{name} > {}{}", fmt_num(t), missing(false)),
        ),
        (Some(FeatureKind::Categorical { levels }), None) => {
            let lset = tree.left_categories(&n);
            let label = |c: usize| levels.get(c).cloned().unwrap_or_else(|| format!("#{c}"));
            let l: Vec<String> = lset.iter().map(|&c| label(c)).collect();
            let r: Vec<String> = (0..levels.len())
                .filter(|c| !lset.contains(c))
                .map(label)
                .collect();
            (
                format!("{name} in {{{}}}{}", l.join(", "), missing(true)),
                format!("{name} in {{{}}}{}", r.join(", "), missing(false)),
            )
        }
        _ => (format!("{name} left"), format!("{name} right")),
    };
    // Pushed right first so the left branch prints first.
    stack.push((n.child() + 1, depth, right));
    stack.push((n.child(), depth, left));
}

/// Short numeric display: integers as such, other values to 4 significant digits.
fn fmt_num(v: f64) -> String {
    if v.fract() == 0.0 && v.abs() < 1e12 {
        format!("{v:.0}")
    } else {
        let digits = (3 - v.abs().log10().floor() as i32).clamp(0, 8) as usize;
        format!("{v:.digits$}")
    }
}
