//! Independent helpers: per-node counts rebuilt from the leaves, and a slow reference
//! split finder written straight from the definition.
use copse_tree::Tree;
use ndarray::Array2;

/// Weighted class counts of every node, rebuilt from leaf probabilities and weights
/// (children always follow their parent in the node array).
pub(crate) fn node_counts(tree: &Tree) -> Vec<Vec<f64>> {
    let k = tree.n_outputs();
    let nodes = tree.nodes();
    let mut counts = vec![vec![0.0; k]; nodes.len()];
    for i in (0..nodes.len()).rev() {
        let n = nodes[i];
        if n.is_leaf() {
            let w = tree.leaf_weight(i);
            counts[i] = tree.leaf_value(i).iter().map(|p| p * w).collect();
        } else {
            let (l, r) = (n.child(), n.child() + 1);
            counts[i] = (0..k).map(|c| counts[l][c] + counts[r][c]).collect();
        }
    }
    counts
}

/// Weighted impurity decrease `w(t) i(t) - w(l) i(l) - w(r) i(r)` from class counts.
pub(crate) fn decrease(imp: fn(&[f64]) -> f64, parent: &[f64], left: &[f64], right: &[f64]) -> f64 {
    let w = |c: &[f64]| c.iter().sum::<f64>();
    w(parent) * imp(parent) - w(left) * imp(left) - w(right) * imp(right)
}

#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) enum Kind {
    Numeric,
    Categorical(usize),
}

/// One candidate split found by the reference search.
#[derive(Debug, Clone)]
pub(crate) struct RefSplit {
    pub(crate) feature: usize,
    /// Numeric threshold: the midpoint of the two successive distinct values.
    pub(crate) threshold: Option<f64>,
    pub(crate) gain: f64,
}

/// Every split of the `rows` (with positive weight and a class) the slow way: for each
/// numeric input, sort the distinct non-missing values and try every midpoint; for each
/// categorical input, try every subset of the categories present; in both cases send
/// the missing cases left and right. `cuts`, when given, restricts numeric thresholds to
/// a list per input. Children must be non-empty. Definition of the split search:
/// Breiman, Friedman, Olshen & Stone (1984), CART, sections 2.4 and 4.1 (memory);
/// midpoints between successive distinct values are common practice.
#[allow(clippy::too_many_arguments)]
pub(crate) fn reference_splits(
    cols: &[Vec<f64>],
    kinds: &[Kind],
    y: &[u32],
    w: &[f64],
    rows: &[usize],
    k: usize,
    imp: fn(&[f64]) -> f64,
    cuts: Option<&[Vec<f64>]>,
) -> Vec<RefSplit> {
    let counts_of = |sel: &dyn Fn(usize) -> bool| {
        let mut c = vec![0.0; k];
        for &r in rows {
            if sel(r) {
                c[y[r] as usize] += w[r];
            }
        }
        c
    };
    let parent = counts_of(&|_| true);
    let mut out = Vec::new();
    for (j, col) in cols.iter().enumerate() {
        let mut try_split = |goes_left: &dyn Fn(f64) -> bool, threshold: Option<f64>| {
            for missing_left in [false, true] {
                let left = counts_of(&|r| {
                    let v = col[r];
                    if v.is_nan() {
                        missing_left
                    } else {
                        goes_left(v)
                    }
                });
                let right: Vec<f64> = parent.iter().zip(&left).map(|(p, l)| p - l).collect();
                if left.iter().sum::<f64>() > 0.0 && right.iter().sum::<f64>() > 0.0 {
                    out.push(RefSplit {
                        feature: j,
                        threshold,
                        gain: decrease(imp, &parent, &left, &right),
                    });
                }
            }
        };
        let mut values: Vec<f64> = rows
            .iter()
            .map(|&r| col[r])
            .filter(|v| !v.is_nan())
            .collect();
        values.sort_by(f64::total_cmp);
        values.dedup();
        if values.len() < 2 {
            continue;
        }
        match kinds[j] {
            Kind::Numeric => match cuts {
                None => {
                    for pair in values.windows(2) {
                        let (a, b) = (pair[0], pair[1]);
                        try_split(&|v| v <= a, Some((a + b) / 2.0));
                    }
                }
                Some(cuts) => {
                    for &t in &cuts[j] {
                        let left = values.iter().filter(|&&v| v <= t).count();
                        if left > 0 && left < values.len() {
                            try_split(&|v| v <= t, Some(t));
                        }
                    }
                }
            },
            Kind::Categorical(_) => {
                // Every subset of the categories present; each two-way partition is
                // met twice (a set and its complement), which does no harm.
                let m = values.len();
                for mask in 1u32..(1 << m) - 1 {
                    let chosen: Vec<f64> = (0..m)
                        .filter(|i| mask >> i & 1 == 1)
                        .map(|i| values[i])
                        .collect();
                    try_split(&|v| chosen.contains(&v), None);
                }
            }
        }
    }
    out
}

pub(crate) fn best_gain(splits: &[RefSplit]) -> f64 {
    splits.iter().map(|s| s.gain).fold(0.0, f64::max)
}

/// Rows of the training data that reach each leaf of `tree`, by the leaf's node index
/// (internal nodes get none).
pub(crate) fn rows_by_leaf(tree: &Tree, x: &Array2<f64>, rows: &[usize]) -> Vec<Vec<usize>> {
    let mut out = vec![Vec::new(); tree.nodes().len()];
    for &r in rows {
        let row: Vec<f64> = x.row(r).to_vec();
        out[tree.leaf_index(&row)].push(r);
    }
    out
}
