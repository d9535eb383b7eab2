//! A tree for people to read: as structured nodes ([`outline`]: id, depth, the test
//! that leads there, the cases that reached it, their class shares or mean, children,
//! a leaf's prediction) and as text ([`render`]: one line per node, indented by depth,
//! a leaf's prediction after `=>`).
use crate::data::{FeatureKind, FeatureMeta};
use crate::tree::{argmax, Tree};
use serde::Serialize;
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

/// One node of a tree as people read it: where it sits, the test that leads to it from
/// its parent, the case weight that reached it and what those cases say.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct NodeOutline {
    /// The node's index in the tree (the root is 0).
    pub id: usize,
    /// Its level: the root is at 0.
    pub depth: usize,
    /// The test a case passes to reach it from its parent (`length <= 2.45`,
    /// `colour in {red, blue} or missing`); `None` for the root. A category test lists
    /// only the categories that can reach the node.
    pub test: Option<String>,
    /// Case weight that reached it in training (draws counted with their weight).
    pub cases: f64,
    /// Share of the case weight in each class, in class order (classes only).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub class_shares: Option<Vec<f64>>,
    /// Mean outcome of the cases (numbers only).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub mean: Option<f64>,
    /// Ids of its two children, the first taken when the test holds; empty for a leaf.
    pub children: Vec<usize>,
    /// A leaf's prediction: its class, or its value as text; `None` for a split.
    pub prediction: Option<String>,
}

/// The nodes of `tree` in reading order (each node before its children, the first
/// child's branch before the second's), with input names from `meta` and class labels
/// (`None` for regression).
pub fn outline(tree: &Tree, meta: &[FeatureMeta], classes: Option<&[String]>) -> Vec<NodeOutline> {
    let (w, sums) = node_totals(tree);
    let k = tree.n_outputs();
    let mut nodes = Vec::with_capacity(tree.nodes().len());
    // (node, depth, test, categories of each categorical input that can reach it)
    let mut stack: Vec<(usize, usize, Option<String>, Reach)> = vec![(0, 0, None, Reach::new())];
    while let Some((i, depth, test, reach)) = stack.pop() {
        let n = tree.nodes()[i];
        let s = &sums[i * k..(i + 1) * k];
        let weight = w[i].max(f64::MIN_POSITIVE);
        let (class_shares, mean) = match classes {
            Some(_) => (Some(s.iter().map(|v| v / weight).collect()), None),
            None => (None, Some(s[0] / weight)),
        };
        let prediction = n.is_leaf().then(|| {
            let v = tree.leaf_value(i);
            match classes {
                Some(labels) => labels.get(argmax(&v)).map_or("?", |l| l).to_string(),
                None => fmt_num(v[0]),
            }
        });
        let children = if n.is_leaf() {
            Vec::new()
        } else {
            vec![n.child(), n.child() + 1]
        };
        if !n.is_leaf() {
            let [(lt, lr), (rt, rr)] = child_tests(tree, meta, i, &reach);
            // Pushed second first so the first child's branch comes out first.
            stack.push((n.child() + 1, depth + 1, Some(rt), rr));
            stack.push((n.child(), depth + 1, Some(lt), lr));
        }
        nodes.push(NodeOutline {
            id: i,
            depth,
            test,
            cases: w[i],
            class_shares,
            mean,
            children,
            prediction,
        });
    }
    nodes
}

/// Renders `tree` with input names from `meta` and class labels (`None` for
/// regression); the first line after the summary, the root, is called `all cases`
/// (see [`render_with_root`] for another name).
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
/// assert_eq!(text.lines().nth(1), Some("all cases (4 cases, small 50%, large 50%)"));
/// assert_eq!(text.lines().count(), 4);
/// assert!(text.contains("=> large"));
/// # Ok::<(), copse_tree::Error>(())
/// ```
pub fn render(tree: &Tree, meta: &[FeatureMeta], classes: Option<&[String]>) -> String {
    render_with_root(tree, meta, classes, "all cases")
}

/// As [`render`], with the root called `root` (for a tree of a forest, the resample it
/// was grown on).
pub fn render_with_root(
    tree: &Tree,
    meta: &[FeatureMeta],
    classes: Option<&[String]>,
    root: &str,
) -> String {
    let describe = |n: &NodeOutline| -> String {
        // Case counts are weighted, so "1 case" only for a weight of exactly one.
        let noun = if n.cases == 1.0 { "case" } else { "cases" };
        let mut out = format!("{} {noun}", fmt_num(n.cases));
        if let (Some(labels), Some(shares)) = (classes, &n.class_shares) {
            for (c, v) in shares.iter().enumerate() {
                if *v > 0.0 {
                    let _ = write!(
                        out,
                        ", {} {:.0}%",
                        labels.get(c).map_or("?", |l| l),
                        100.0 * v
                    );
                }
            }
        }
        if let Some(m) = n.mean {
            let _ = write!(out, ", mean {}", fmt_num(m));
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
    for n in outline(tree, meta, classes) {
        let verdict = n
            .prediction
            .as_ref()
            .map_or(String::new(), |p| format!("  => {p}"));
        match &n.test {
            None => {
                let _ = writeln!(text, "{root} ({}){verdict}", describe(&n));
            }
            Some(test) => {
                let indent = "  ".repeat(n.depth);
                let _ = writeln!(text, "{indent}when {test} ({}){verdict}", describe(&n));
            }
        }
    }
    text
}

/// The categories of each categorical input that can still reach a node: an input
/// absent from the list has all its categories.
#[derive(Debug, Clone, Default)]
struct Reach(Vec<(usize, Vec<usize>)>);

impl Reach {
    fn new() -> Self {
        Reach(Vec::new())
    }

    /// The categories of input `f` (of `all` categories) that can reach the node.
    fn of(&self, f: usize, all: usize) -> Vec<usize> {
        self.0
            .iter()
            .find(|(g, _)| *g == f)
            .map_or_else(|| (0..all).collect(), |(_, c)| c.clone())
    }

    /// This reach with input `f` narrowed to `cats`.
    fn with(&self, f: usize, cats: Vec<usize>) -> Self {
        let mut r = self.clone();
        match r.0.iter_mut().find(|(g, _)| *g == f) {
            Some(entry) => entry.1 = cats,
            None => r.0.push((f, cats)),
        }
        r
    }
}

/// The tests leading to the two children of split node `i` and what can reach each.
fn child_tests(tree: &Tree, meta: &[FeatureMeta], i: usize, reach: &Reach) -> [(String, Reach); 2] {
    let n = tree.nodes()[i];
    let Some(f) = n.feature() else {
        return [
            ("left".to_string(), reach.clone()),
            ("right".to_string(), reach.clone()),
        ];
    };
    let name = meta.get(f).map_or("?", |m| m.name.as_str());
    let missing = |left: bool| {
        if left == n.missing_goes_left() {
            " or missing"
        } else {
            ""
        }
    };
    match (&meta.get(f).map(|m| &m.kind), n.threshold()) {
        (_, Some(t)) => [
            (
                format!("{name} <= {}{}", fmt_num(t), missing(true)),
                reach.clone(),
            ),
            (
                format!("{name} > {}{}", fmt_num(t), missing(false)),
                reach.clone(),
            ),
        ],
        (Some(FeatureKind::Categorical { levels }), None) => {
            let lset = tree.left_categories(&n);
            let here = reach.of(f, levels.len());
            let label = |c: &usize| levels.get(*c).cloned().unwrap_or_else(|| format!("#{c}"));
            let (l, r): (Vec<usize>, Vec<usize>) = here.iter().partition(|c| lset.contains(c));
            let words = |cats: &[usize]| cats.iter().map(label).collect::<Vec<_>>().join(", ");
            [
                (
                    format!("{name} in {{{}}}{}", words(&l), missing(true)),
                    reach.with(f, l),
                ),
                (
                    format!("{name} in {{{}}}{}", words(&r), missing(false)),
                    reach.with(f, r),
                ),
            ]
        }
        _ => [
            (format!("{name} left"), reach.clone()),
            (format!("{name} right"), reach.clone()),
        ],
    }
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
        assert_eq!(lines[1], "all cases (4 cases, short 25%, long 75%)");
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

    /// The categories listed in a test such as `colour in {red, blue} or missing`.
    fn listed(test: &str) -> Vec<String> {
        let inside = test.split_once('{').and_then(|(_, r)| r.split_once('}'));
        inside.map_or(Vec::new(), |(set, _)| {
            set.split(", ").map(str::to_string).collect()
        })
    }

    #[test]
    fn category_tests_list_only_the_categories_that_reach_the_node() {
        // Three colours, one class each: the tree splits on colour twice, and the second
        // split may only name the colours its parent let through.
        let x = array![[0.0], [0.0], [1.0], [1.0], [2.0], [2.0]];
        let meta = vec![FeatureMeta::categorical(
            "colour",
            vec!["red".into(), "green".into(), "blue".into()],
        )];
        let data = BinnedData::new(x.view(), &meta, 256).expect("test input is valid");
        let target = OutcomeView::classes(&[0, 0, 1, 1, 2, 2], 3).expect("test input is valid");
        let tree = Grower::new(TreeSettings::default())
            .grow(&data, &target, &[1.0; 6], 1)
            .expect("test input is valid");
        let labels = ["r".to_string(), "g".to_string(), "b".to_string()];
        let nodes = outline(&tree, &meta, Some(&labels));
        assert_eq!(nodes.len(), 5, "{nodes:?}");
        let by_id = |id: usize| nodes.iter().find(|n| n.id == id).expect("a node");
        let mut deep = 0;
        for parent in nodes
            .iter()
            .filter(|n| n.depth == 1 && !n.children.is_empty())
        {
            let allowed = listed(parent.test.as_deref().expect("a test"));
            let mut seen = Vec::new();
            for &c in &parent.children {
                let child = by_id(c);
                assert_eq!(child.depth, 2);
                seen.extend(listed(child.test.as_deref().expect("a test")));
                deep += 1;
            }
            seen.sort();
            let mut allowed = allowed;
            allowed.sort();
            assert_eq!(seen, allowed, "{nodes:?}");
        }
        assert_eq!(deep, 2, "{nodes:?}");
        // The root comes first, has no test, and holds every case.
        assert_eq!((nodes[0].id, nodes[0].depth), (0, 0));
        assert!(nodes[0].test.is_none() && nodes[0].cases == 6.0);
        assert_eq!(nodes[0].children.len(), 2);
        assert!(nodes
            .iter()
            .all(|n| n.children.is_empty() == n.prediction.is_some()));
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
        assert!(text.contains("all cases (3 cases, mean 1.5)"), "{text}");
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
