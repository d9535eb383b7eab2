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
            let lw = tree.leaf_weight(i);
            w[i] = lw;
            for (s, v) in sums[i * k..(i + 1) * k].iter_mut().zip(&tree.leaf_value(i)) {
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
///
/// # Example
/// ```
/// use copse_tree::render::render;
/// use copse_tree::{BinnedData, FeatureMeta, Grower, OutcomeView, TreeSettings};
/// use ndarray::array;
///
/// let x = array![[1.0], [2.0], [3.0], [4.0]];
/// let meta = vec![FeatureMeta::numeric("size")];
/// let data = BinnedData::new(x.view(), &meta, 256)?;
/// let target = OutcomeView::classes(&[0, 0, 1, 1], 2)?;
/// let tree = Grower::new(TreeSettings::default()).grow(&data, &target, &[1.0; 4], 0)?;
/// let labels = vec!["small".to_string(), "large".to_string()];
/// let text = render(&tree, &meta, Some(&labels));
/// // A summary line, then one line per node: the root and its two leaves.
/// assert_eq!(text.lines().next(), Some("tree: 3 nodes, 2 leaves, depth 1"));
/// assert_eq!(text.lines().count(), 4);
/// assert!(text.contains("=> large"));
/// # Ok::<(), copse_tree::Error>(())
/// ```
pub fn render(tree: &Tree, meta: &[FeatureMeta], classes: Option<&[String]>) -> String {
    let (w, sums) = node_totals(tree);
    let k = tree.n_outputs();
    let describe = |i: usize| -> String {
        let s = &sums[i * k..(i + 1) * k];
        // Case counts are weighted, so "1 case" only for a weight of exactly one.
        let noun = if w[i] == 1.0 { "case" } else { "cases" };
        let mut out = format!("{} {noun}", fmt_num(w[i]));
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
            let v = tree.leaf_value(i);
            match classes {
                Some(labels) => format!("  => {}", labels.get(argmax(&v)).map_or("?", |l| l)),
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

/// Short numeric display: integers as such; other values to 4 significant digits with
/// trailing zeros dropped (2.45, not 2.450); very small or large ones in exponent form.
fn fmt_num(v: f64) -> String {
    let a = v.abs();
    if !v.is_finite() {
        return v.to_string();
    }
    if v.fract() == 0.0 && a < 1e15 {
        return format!("{v:.0}");
    }
    if !(1e-4..1e15).contains(&a) {
        return format!("{v:.3e}");
    }
    let digits = (3 - a.log10().floor() as i32).clamp(0, 8) as usize;
    let s = format!("{v:.digits$}");
    if s.contains('.') {
        s.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        s
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::{BinnedData, Grower, OutcomeView, TreeSettings};
    use ndarray::array;

    fn small_tree() -> (Tree, Vec<FeatureMeta>) {
        let x = array![[1.0, 0.0], [2.0, 1.0], [3.0, 1.0], [4.0, f64::NAN]];
        let meta = vec![
            FeatureMeta::numeric("length"),
            FeatureMeta::categorical("colour", vec!["red".into(), "blue".into()]),
        ];
        let data = BinnedData::new(x.view(), &meta, 256).expect("test input is valid");
        let target = OutcomeView::classes(&[0, 1, 1, 1], 2).expect("test input is valid");
        let tree = Grower::new(TreeSettings::default())
            .grow(&data, &target, &[1.0; 4], 1)
            .expect("test input is valid");
        (tree, meta)
    }

    #[test]
    fn one_case_is_singular_and_rules_read_in_order() {
        let (tree, meta) = small_tree();
        let labels = ["short".to_string(), "long".to_string()];
        let text = render(&tree, &meta, Some(&labels));
        let lines: Vec<&str> = text.lines().collect();
        assert_eq!(lines[0], "tree: 3 nodes, 2 leaves, depth 1");
        assert_eq!(lines[1], "all data (4 cases, short 25%, long 75%)");
        // Input 0 and input 1 both isolate the first row; the tie goes to input 0.
        assert_eq!(
            lines[2],
            "  when length <= 1.5 (1 case, short 100%)  => short"
        );
        assert_eq!(
            lines[3],
            "  when length > 1.5 or missing (3 cases, long 100%)  => long"
        );
        assert_eq!(lines.len(), 4);
        assert!(!text.contains("1 cases"));
    }

    #[test]
    fn numbers_are_short_and_plain() {
        assert_eq!(fmt_num(3.0), "3");
        assert_eq!(fmt_num(2.45), "2.45");
        assert_eq!(fmt_num(-0.05), "-0.05");
        assert_eq!(fmt_num(1234.5678), "1235");
        assert_eq!(fmt_num(0.123456), "0.1235");
        assert_eq!(fmt_num(2.5e-7), "2.500e-7");
        assert_eq!(fmt_num(f64::NAN), "NaN");
    }

    #[test]
    fn regression_leaves_show_the_mean() {
        let x = array![[1.0], [2.0], [3.0]];
        let meta = vec![FeatureMeta::numeric("t")];
        let data = BinnedData::new(x.view(), &meta, 256).expect("test input is valid");
        let y = [1.0, 1.0, 2.5];
        let target = OutcomeView::values(&y).expect("test input is valid");
        let tree = Grower::new(TreeSettings::default())
            .grow(&data, &target, &[1.0; 3], 1)
            .expect("test input is valid");
        let text = render(&tree, &meta, None);
        // With no missing values in training, missing ones follow the heavier child.
        assert!(text.contains("all data (3 cases, mean 1.5)"), "{text}");
        assert!(
            text.contains("when t <= 2.5 or missing (2 cases, mean 1)  => 1"),
            "{text}"
        );
        assert!(
            text.contains("when t > 2.5 (1 case, mean 2.5)  => 2.5"),
            "{text}"
        );
    }
}
