//! Per-row contributions: the exact Shapley values of the forest's prediction, with
//! the expectation over absent inputs taken along the trees' own paths and weighted by
//! training cover (Lundberg et al. 2020, "From local explanations to global
//! understanding with explainable AI for trees", Nature Machine Intelligence 2:56-67,
//! Algorithm 2), in time polynomial in the tree's depth.
//!
//! For a set `S` of inputs, a tree's expected output given `x_S` is found by walking
//! it: a node testing an input of `S` sends the row where its value goes (so category
//! sets and the learned missing direction count as in prediction); a node testing any
//! other input averages its two children weighted by their training cover (the case
//! weight of the leaves below). Input `i`'s contribution is the Shapley value of `i`
//! in the game `S -> E[f | x_S]`; the base value is the expectation with no input
//! known, the cover-weighted mean of the leaves. The algorithm follows each root-leaf
//! path once, keeping for the inputs met on it the share of subsets of each size that
//! reach the leaf, so it never lists the subsets. The forest's contributions are the
//! mean of its trees' (the Shapley value is linear in the game).
use crate::error::{Error, ErrorKind, Result};
use crate::forest::Forest;
use copse_tree::Tree;
use ndarray::{Array3, ArrayView2};
use rayon::prelude::*;

/// Contributions of the inputs to the forest's predictions for a batch of rows.
#[derive(Debug, Clone, PartialEq)]
pub struct Contributions {
    /// Expected prediction with no input known, per output (a class's probability,
    /// or the value): the same for every row.
    pub base: Vec<f64>,
    /// Rows by inputs by outputs: how much each input moved each output of the row's
    /// prediction away from the base. Per row and output, the base plus the sum over
    /// inputs is the prediction.
    pub values: Array3<f64>,
}

/// One input on the path from the root to the current node: the share of cover kept
/// when the input is absent (`zero`), whether the row follows it when present (`one`),
/// and the weight of the subsets of one size.
#[derive(Debug, Clone, Copy, Default)]
struct Step {
    input: usize,
    zero: f64,
    one: f64,
    weight: f64,
}

/// The root's step stands for no input.
const NO_INPUT: usize = usize::MAX;

/// A tree with the training cover of every node.
struct Covered<'a> {
    tree: &'a Tree,
    cover: Vec<f64>,
}

impl Forest {
    /// Contributions of every input to the prediction of every row of `x` (columns in
    /// the training order, categories as codes, NaN missing). Rows run in parallel on
    /// the current rayon pool; row `i` of the result belongs to row `i` of `x`. The
    /// base value plus a row's contributions equals [`Forest::predict`] to rounding.
    ///
    /// A model trained with class-balanced sampling is refused: its predictions are
    /// the trees' mean shifted back to the training class shares, a nonlinear step
    /// after the mean, so contributions of the trees' mean would not add up to them.
    ///
    /// # Errors
    /// `LengthMismatch` for a wrong number of columns; `InvalidSetting` for a model
    /// trained with class-balanced sampling.
    ///
    /// # Example
    /// ```
    /// use copse_forest::ndarray::Axis;
    /// use copse_forest::{synth, Forest, ForestSettings, TrainOptions};
    ///
    /// let data = synth::friedman1(200, 1);
    /// let settings = ForestSettings { trees: 20, ..Default::default() };
    /// let options = TrainOptions { oob_importance: false, ..TrainOptions::default() };
    /// let forest = Forest::train(data.x.view(), &data.meta, &data.outcome, &settings, &options)?
    ///     .forest;
    /// let c = forest.contributions(data.x.view())?;
    /// let p = forest.predict(data.x.view())?;
    /// // Row 0: the base plus every input's part of the one output.
    /// let sum = c.base[0] + c.values.index_axis(Axis(0), 0).sum();
    /// assert!((sum - p[[0, 0]]).abs() < 1e-9);
    /// # Ok::<(), copse_forest::Error>(())
    /// ```
    pub fn contributions(&self, x: ArrayView2<'_, f64>) -> Result<Contributions> {
        self.check_columns(x)?;
        if self.prior_shift.is_some() {
            return Err(Error::new(
                ErrorKind::InvalidSetting,
                "contributions are not available for a model trained with class-balanced \
                 sampling: its probabilities are shifted back to the training class shares \
                 after the trees' mean, so no sum of per-input parts gives them; train \
                 without class balancing to explain predictions",
            ));
        }
        let (n, m, k) = (x.nrows(), self.n_features(), self.n_outputs());
        let covered: Vec<Covered<'_>> = self
            .trees
            .iter()
            .map(|tree| Covered {
                tree,
                cover: cover(tree),
            })
            .collect();
        let trees = covered.len().max(1) as f64;
        let mut base = vec![0.0; k];
        for c in &covered {
            let root = c.cover[0];
            for leaf in c.tree.leaves() {
                let share = if root > 0.0 {
                    c.tree.leaf_weight(leaf) / root
                } else {
                    0.0
                };
                for (b, v) in base.iter_mut().zip(&c.tree.leaf_value(leaf)) {
                    *b += share * v;
                }
            }
        }
        base.iter_mut().for_each(|b| *b /= trees);
        // A path holds at most depth + 1 steps, and each level keeps its own copy.
        let depth = self.trees.iter().map(Tree::depth).max().unwrap_or(0) + 2;
        let buffer = depth * (depth + 1) / 2;
        let mut values = vec![0.0; n * m * k];
        values
            .par_chunks_mut((m * k).max(1))
            .enumerate()
            .for_each_init(
                || (vec![Step::default(); buffer], vec![0.0; m]),
                |(path, row), (r, out)| {
                    row.iter_mut().zip(x.row(r)).for_each(|(a, b)| *a = *b);
                    for c in &covered {
                        descend(c, row, out, path, 0, 0, 1.0, 1.0, NO_INPUT);
                    }
                    out.iter_mut().for_each(|v| *v /= trees);
                },
            );
        let values = Array3::from_shape_vec((n, m, k), values)
            .expect("n rows of m inputs of k outputs by construction");
        Ok(Contributions { base, values })
    }
}

/// Training cover of every node: the case weight of the leaves below it.
fn cover(tree: &Tree) -> Vec<f64> {
    fn fill(tree: &Tree, node: usize, cover: &mut [f64]) -> f64 {
        let n = tree.nodes()[node];
        let c = if n.is_leaf() {
            tree.leaf_weight(node)
        } else {
            fill(tree, n.child(), cover) + fill(tree, n.child() + 1, cover)
        };
        cover[node] = c;
        c
    }
    let mut cover = vec![0.0; tree.nodes().len()];
    fill(tree, 0, &mut cover);
    cover
}

/// Visits `node` with the incoming path in `path[..len]`, extended here by the step of
/// `input` (cover share `zero`, followed `one`). At a leaf every input on the path
/// receives its weight times the leaf's output; below an internal node the path is
/// copied after the current one for each child, so no level allocates.
#[allow(clippy::too_many_arguments)]
fn descend(
    c: &Covered<'_>,
    row: &[f64],
    out: &mut [f64],
    path: &mut [Step],
    node: usize,
    len: usize,
    zero: f64,
    one: f64,
    input: usize,
) {
    let (current, rest) = path.split_at_mut(len + 1);
    extend(current, zero, one, input);
    let mut len = len + 1;
    let n = c.tree.nodes()[node];
    let k = out.len() / row.len().max(1);
    if n.is_leaf() {
        let value = c.tree.leaf_value(node);
        for i in 1..len {
            let step = current[i];
            let scale = unwound_sum(&current[..len], i) * (step.one - step.zero);
            let at = step.input * k;
            for (o, v) in out[at..at + k].iter_mut().zip(&value) {
                *o += scale * v;
            }
        }
        return;
    }
    let feature = n.feature().expect("an internal node tests an input");
    let (hot, cold) = if c.tree.goes_left(&n, row[feature]) {
        (n.child(), n.child() + 1)
    } else {
        (n.child() + 1, n.child())
    };
    // An input met again: its earlier step is taken off and its fractions carried on,
    // so each input appears once on the path.
    let (mut in_zero, mut in_one) = (1.0, 1.0);
    if let Some(i) = (1..len).find(|&i| current[i].input == feature) {
        in_zero = current[i].zero;
        in_one = current[i].one;
        unwind(&mut current[..len], i);
        len -= 1;
    }
    let here = c.cover[node];
    for (child, one) in [(hot, in_one), (cold, 0.0)] {
        let zero = if here > 0.0 {
            in_zero * c.cover[child] / here
        } else {
            0.0
        };
        // With both fractions zero every weight below is zero: nothing to add.
        if zero == 0.0 && one == 0.0 {
            continue;
        }
        rest[..len].copy_from_slice(&current[..len]);
        descend(c, row, out, rest, child, len, zero, one, feature);
    }
}

/// Adds a step to the path `path[..len]` (its length is `path.len() - 1`): the weight
/// of subsets of each size splits into those without the input (scaled by its cover
/// share) and those with it (scaled by whether the row follows it).
fn extend(path: &mut [Step], zero: f64, one: f64, input: usize) {
    let l = path.len() - 1;
    path[l] = Step {
        input,
        zero,
        one,
        weight: if l == 0 { 1.0 } else { 0.0 },
    };
    let total = (l + 1) as f64;
    for i in (0..l).rev() {
        path[i + 1].weight += one * path[i].weight * (i + 1) as f64 / total;
        path[i].weight = zero * path[i].weight * (l - i) as f64 / total;
    }
}

/// Takes step `i` off the path, undoing its [`extend`]; the path shortens by one.
fn unwind(path: &mut [Step], i: usize) {
    let l = path.len() - 1;
    let (zero, one) = (path[i].zero, path[i].one);
    let total = (l + 1) as f64;
    let mut next = path[l].weight;
    for j in (0..l).rev() {
        if one != 0.0 {
            let kept = path[j].weight;
            path[j].weight = next * total / ((j + 1) as f64 * one);
            next = kept - path[j].weight * zero * (l - j) as f64 / total;
        } else {
            path[j].weight = path[j].weight * total / (zero * (l - j) as f64);
        }
    }
    for j in i..l {
        path[j].input = path[j + 1].input;
        path[j].zero = path[j + 1].zero;
        path[j].one = path[j + 1].one;
    }
}

/// Sum of the weights the path would have with step `i` taken off, without changing
/// it.
fn unwound_sum(path: &[Step], i: usize) -> f64 {
    let l = path.len() - 1;
    let (zero, one) = (path[i].zero, path[i].one);
    let total = (l + 1) as f64;
    let mut sum = 0.0;
    // The leaves' hot loop: divisions by the step's fractions and the path's length
    // are taken once, as products by their reciprocals.
    if one != 0.0 {
        let (up, down) = (total / one, zero / total);
        let mut next = path[l].weight;
        for j in (0..l).rev() {
            let w = next * up / (j + 1) as f64;
            sum += w;
            next = path[j].weight - w * down * (l - j) as f64;
        }
    } else {
        let up = total / zero;
        for j in (0..l).rev() {
            sum += path[j].weight * up / (l - j) as f64;
        }
    }
    sum
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::oob_importance::tests::mixed_waveform;
    use crate::{synth, ForestSettings, TrainOptions};
    use ndarray::{Array2, Axis, Slice};

    fn train(d: &synth::Synthetic, trees: usize, settings: ForestSettings) -> Forest {
        let settings = ForestSettings { trees, ..settings };
        let options = TrainOptions {
            oob_importance: false,
            ..TrainOptions::default()
        };
        Forest::train(d.x.view(), &d.meta, &d.outcome, &settings, &options)
            .unwrap()
            .forest
    }

    /// Base plus contributions against the forest's own prediction, every row and
    /// output.
    fn assert_additive(forest: &Forest, x: ArrayView2<'_, f64>) {
        let c = forest.contributions(x).unwrap();
        let p = forest.predict(x).unwrap();
        assert_eq!(c.values.dim(), (x.nrows(), x.ncols(), p.ncols()));
        for r in 0..x.nrows() {
            for o in 0..p.ncols() {
                let sum = c.base[o] + c.values.index_axis(Axis(0), r).column(o).sum();
                assert!(
                    (sum - p[[r, o]]).abs() < 1e-9,
                    "row {r} output {o}: {sum} against {}",
                    p[[r, o]]
                );
            }
        }
    }

    #[test]
    fn contributions_add_up_to_the_prediction() {
        // Twonorm (Breiman 1996, "Bias, variance, and arcing classifiers"), Friedman #1
        // (Friedman 1991, "Multivariate adaptive regression splines", Annals of
        // Statistics 19:1-67), and waveform with a category input and missing values.
        let sets = [
            synth::twonorm(300, 1),
            synth::friedman1(300, 2),
            mixed_waveform(300, 3),
        ];
        for d in &sets {
            let forest = train(d, 25, ForestSettings::default());
            let fresh = match d.x.ncols() {
                20 => synth::twonorm(100, 9).x,
                10 => synth::friedman1(100, 9).x,
                _ => mixed_waveform(100, 9).x,
            };
            assert_additive(&forest, fresh.view());
            assert_additive(&forest, d.x.view());
        }
    }

    /// A tree's expected output given the inputs in `known` (a bit set): the row is
    /// followed at nodes testing a known input; elsewhere the two children are averaged
    /// by their training cover.
    fn expected(tree: &Tree, node: usize, row: &[f64], known: usize) -> (f64, Vec<f64>) {
        let n = tree.nodes()[node];
        if n.is_leaf() {
            return (tree.leaf_weight(node), tree.leaf_value(node).to_vec());
        }
        let j = n.feature().unwrap();
        let (left, right) = (n.child(), n.child() + 1);
        if known >> j & 1 == 1 {
            let (_, v) = expected(
                tree,
                if tree.goes_left(&n, row[j]) {
                    left
                } else {
                    right
                },
                row,
                known,
            );
            let (cl, _) = expected(tree, left, row, 0);
            let (cr, _) = expected(tree, right, row, 0);
            return (cl + cr, v);
        }
        let (cl, vl) = expected(tree, left, row, known);
        let (cr, vr) = expected(tree, right, row, known);
        let v = vl
            .iter()
            .zip(&vr)
            .map(|(a, b)| (cl * a + cr * b) / (cl + cr))
            .collect();
        (cl + cr, v)
    }

    /// Shapley values by their definition: every subset of the other inputs, weighted
    /// |S|! (M - |S| - 1)! / M!, of the forest's mean cover-weighted expectation.
    fn brute_force(forest: &Forest, row: &[f64]) -> Array2<f64> {
        let (m, k) = (forest.n_features(), forest.n_outputs());
        let value = |known: usize| -> Vec<f64> {
            let mut v = vec![0.0; k];
            for t in forest.trees() {
                for (a, b) in v.iter_mut().zip(expected(t, 0, row, known).1) {
                    *a += b / forest.trees().len() as f64;
                }
            }
            v
        };
        let fact = |n: usize| (1..=n).product::<usize>() as f64;
        let mut phi = Array2::zeros((m, k));
        for i in 0..m {
            for set in 0..1usize << m {
                if set >> i & 1 == 1 {
                    continue;
                }
                let size = set.count_ones() as usize;
                let w = fact(size) * fact(m - size - 1) / fact(m);
                let (with, without) = (value(set | 1 << i), value(set));
                for o in 0..k {
                    phi[[i, o]] += w * (with[o] - without[o]);
                }
            }
        }
        phi
    }

    #[test]
    fn contributions_equal_shapley_values_over_all_subsets() {
        // Four inputs: Friedman #1's first four (values), and waveform's first four
        // with a category input and missing values (three classes).
        let mut values = synth::friedman1(200, 4);
        values.x = values.x.slice_axis(Axis(1), Slice::from(..4)).to_owned();
        values.meta.truncate(4);
        let mut mixed = mixed_waveform(200, 5);
        mixed.x = mixed.x.slice_axis(Axis(1), Slice::from(..4)).to_owned();
        mixed.meta.truncate(4);
        for d in [values, mixed] {
            let settings = ForestSettings {
                tree: crate::TreeRules {
                    max_depth: Some(5),
                    ..Default::default()
                },
                ..Default::default()
            };
            let forest = train(&d, 4, settings);
            let x = d.x.slice_axis(Axis(0), Slice::from(..40));
            let c = forest.contributions(x).unwrap();
            for (r, row) in x.rows().into_iter().enumerate() {
                let row = row.to_vec();
                let phi = brute_force(&forest, &row);
                let got = c.values.index_axis(Axis(0), r);
                for ((i, o), want) in phi.indexed_iter() {
                    assert!(
                        (got[[i, o]] - want).abs() < 1e-12,
                        "row {r} input {i} output {o}: {} against {want}",
                        got[[i, o]]
                    );
                }
            }
        }
    }

    #[test]
    fn an_input_no_tree_uses_gets_exactly_zero() {
        let mut d = synth::friedman1(300, 6);
        // A constant column: no tree can split on it.
        d.x.column_mut(7).fill(0.5);
        let forest = train(&d, 20, ForestSettings::default());
        let used = forest
            .trees()
            .iter()
            .flat_map(|t| t.nodes().iter().filter_map(|n| n.feature()))
            .any(|j| j == 7);
        assert!(!used);
        let c = forest
            .contributions(synth::friedman1(50, 7).x.view())
            .unwrap();
        assert!(c.values.index_axis(Axis(1), 7).iter().all(|&v| v == 0.0));
        assert!(c.values.index_axis(Axis(1), 0).iter().any(|&v| v != 0.0));
    }

    #[test]
    fn balanced_models_are_refused() {
        let d = synth::twonorm(200, 8);
        let forest = train(
            &d,
            5,
            ForestSettings {
                balanced: true,
                ..Default::default()
            },
        );
        let e = forest.contributions(d.x.view()).unwrap_err();
        assert_eq!(e.kind(), ErrorKind::InvalidSetting);
    }
}
