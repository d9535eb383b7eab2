//! Checks of the contributions: additivity, equality with Shapley values over all
//! subsets, both walks against each other, unused inputs, refused models.
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
        for walk in [ContributionWalk::Leaves, ContributionWalk::Paths] {
            let c = forest.contributions_by(x, walk).unwrap();
            for (r, row) in x.rows().into_iter().enumerate() {
                let row = row.to_vec();
                let phi = brute_force(&forest, &row);
                let got = c.values.index_axis(Axis(0), r);
                for ((i, o), want) in phi.indexed_iter() {
                    assert!(
                        (got[[i, o]] - want).abs() < 1e-12,
                        "{walk:?}: row {r} input {i} output {o}: {} against {want}",
                        got[[i, o]]
                    );
                }
            }
        }
    }
}

#[test]
fn both_walks_agree_on_deep_forests() {
    // Fully grown trees (depths near 20) on all ten Friedman #1 inputs and on the
    // mixed waveform: paths long enough for many repeated inputs and small shares.
    for d in [synth::friedman1(400, 10), mixed_waveform(400, 11)] {
        let forest = train(&d, 10, ForestSettings::default());
        let x = d.x.slice_axis(Axis(0), Slice::from(..100));
        let leaves = forest
            .contributions_by(x, ContributionWalk::Leaves)
            .unwrap();
        let paths = forest.contributions_by(x, ContributionWalk::Paths).unwrap();
        assert_eq!(leaves.base, paths.base);
        for (a, b) in leaves.values.iter().zip(&paths.values) {
            assert!((a - b).abs() < 1e-12, "{a} against {b}");
        }
        assert!(leaves.values.iter().any(|&v| v.abs() > 1e-3));
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
