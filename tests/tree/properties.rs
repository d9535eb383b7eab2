//! Property tests of the grower against the slow reference and the definitions.
use crate::reference::{best_gain, decrease, node_counts, reference_splits, rows_by_leaf, Kind};
use copse_tree::impurity::{entropy, gini};
use copse_tree::outcome::MISSING_CLASS;
use copse_tree::{
    BinnedData, ErrorKind, FeatureMeta, Grower, Impurity, OutcomeView, Tree, TreeSettings,
};
use ndarray::Array2;
use proptest::collection::vec;
use proptest::prelude::*;
use proptest::test_runner::{Config as ProptestConfig, RngSeed};
use rand::SeedableRng;
use rand_xoshiro::Xoshiro256PlusPlus;

// ---------------------------------------------------------------------------------------
// Property tests. Fixed seed and no failure files, so every run tries the same cases
// (other cases under `COPSE_TEST_SEED_OFFSET`, see `support::seed`); case counts are kept
// small so the whole file runs in a few seconds in release mode.
// ---------------------------------------------------------------------------------------

pub(crate) fn config(cases: u32) -> ProptestConfig {
    ProptestConfig {
        cases,
        failure_persistence: None,
        rng_seed: RngSeed::Fixed(crate::support::seed(0x00c0_95e7)),
        ..ProptestConfig::default()
    }
}

/// A random data set: mixed inputs with missing values, classes, case weights.
#[derive(Debug, Clone)]
struct Sample {
    cols: Vec<Vec<f64>>,
    kinds: Vec<Kind>,
    y: Vec<u32>,
    n_classes: usize,
    w: Vec<f64>,
}

impl Sample {
    fn n(&self) -> usize {
        self.y.len()
    }

    fn x(&self) -> Array2<f64> {
        Array2::from_shape_fn((self.n(), self.cols.len()), |(i, j)| self.cols[j][i])
    }

    fn meta(&self) -> Vec<FeatureMeta> {
        self.kinds
            .iter()
            .enumerate()
            .map(|(j, k)| match k {
                Kind::Numeric => FeatureMeta::numeric(format!("x{j}")),
                Kind::Categorical(m) => FeatureMeta::categorical(
                    format!("x{j}"),
                    (0..*m).map(|c| format!("c{c}")).collect(),
                ),
            })
            .collect()
    }

    /// Rows that take part in growing: positive weight and a class.
    fn used_rows(&self) -> Vec<usize> {
        (0..self.n())
            .filter(|&i| self.w[i] > 0.0 && self.y[i] != MISSING_CLASS)
            .collect()
    }

    fn grow(
        &self,
        settings: TreeSettings,
        bin_limit: usize,
        seed: u64,
    ) -> Option<(Tree, BinnedData)> {
        let x = self.x();
        let data = BinnedData::new(x.view(), &self.meta(), bin_limit).expect("bins");
        let target = OutcomeView::classes(&self.y, self.n_classes).expect("target");
        match Grower::new(settings).grow(&data, &target, &self.w, seed) {
            Ok(t) => Some((t, data)),
            Err(e) => {
                // Only the documented refusals for too few usable rows.
                let labelled = self.y.iter().filter(|&&c| c != MISSING_CLASS).count();
                match e.kind() {
                    ErrorKind::NoTargets => assert_eq!(labelled, 0),
                    ErrorKind::SingleRow => assert_eq!(labelled, 1),
                    ErrorKind::EmptyData => assert!(self.used_rows().is_empty()),
                    k => panic!("unexpected error {k:?}: {e}"),
                }
                None
            }
        }
    }
}

fn column(n: usize) -> BoxedStrategy<(Kind, Vec<f64>)> {
    let coarse = prop_oneof![6 => (0i32..5).prop_map(f64::from), 1 => Just(f64::NAN)];
    let fine = prop_oneof![6 => -100.0f64..100.0, 1 => Just(f64::NAN)];
    prop_oneof![
        vec(coarse, n).prop_map(|v| (Kind::Numeric, v)),
        vec(fine, n).prop_map(|v| (Kind::Numeric, v)),
        (2usize..=4).prop_flat_map(move |m| {
            let cell = prop_oneof![6 => (0..m).prop_map(|c| c as f64), 1 => Just(f64::NAN)];
            vec(cell, n).prop_map(move |v| (Kind::Categorical(m), v))
        }),
    ]
    .boxed()
}

/// Samples of 2..=`max_rows` rows, 1..=`max_cols` inputs, 2..=4 classes; with
/// `weighted`, integer case weights 0..=3 (a bootstrap-like weight vector) and a few
/// missing classes.
fn sample(max_rows: usize, max_cols: usize, weighted: bool) -> impl Strategy<Value = Sample> {
    (2usize..=max_rows, 1usize..=max_cols, 2usize..=4).prop_flat_map(move |(n, p, k)| {
        let class = if weighted {
            prop_oneof![12 => 0..k as u32, 1 => Just(MISSING_CLASS)].boxed()
        } else {
            (0..k as u32).boxed()
        };
        let weight = if weighted {
            prop_oneof![1 => Just(0.0), 3 => Just(1.0), 1 => Just(2.0), 1 => Just(3.0)].boxed()
        } else {
            Just(1.0).boxed()
        };
        (vec(column(n), p), vec(class, n), vec(weight, n)).prop_map(move |(cols, y, w)| {
            let (kinds, cols) = cols.into_iter().unzip();
            Sample {
                cols,
                kinds,
                y,
                n_classes: k,
                w,
            }
        })
    })
}

/// Samples whose first input is a shuffle of distinct values, so every pair of rows is
/// separable by some threshold.
fn separable_sample() -> impl Strategy<Value = Sample> {
    sample(40, 3, false).prop_flat_map(|s| {
        let n = s.n();
        let first = Just((0..n).map(|i| i as f64 * 0.5 - 3.0).collect::<Vec<f64>>()).prop_shuffle();
        (Just(s), first).prop_map(|(mut s, first)| {
            s.cols.insert(0, first);
            s.kinds.insert(0, Kind::Numeric);
            s
        })
    })
}

/// Checks that hold for every grown classification tree: leaf probabilities are a
/// distribution; every split decreases impurity (strictly, since the grower only splits
/// on a positive decrease) and the per-input sums match `impurity_decrease`; each
/// leaf's weight is the weight of the training rows that prediction routes to it.
fn check_tree_invariants(s: &Sample, tree: &Tree, imp: fn(&[f64]) -> f64) {
    for l in tree.leaves() {
        let p = tree.leaf_value(l);
        assert!(
            (p.iter().sum::<f64>() - 1.0).abs() < 1e-12,
            "leaf {l}: {p:?}"
        );
        assert!(p.iter().all(|v| (0.0..=1.0).contains(v)));
        assert!(tree.leaf_weight(l) > 0.0);
    }
    let counts = node_counts(tree);
    let mut per_input = vec![0.0; tree.n_features()];
    for (i, n) in tree.nodes().iter().enumerate() {
        if let Some(f) = n.feature() {
            let d = decrease(imp, &counts[i], &counts[n.child()], &counts[n.child() + 1]);
            assert!(d > 0.0, "node {i}: decrease {d}");
            per_input[f] += d;
        }
    }
    for (a, b) in per_input.iter().zip(tree.impurity_decrease()) {
        assert!((a - b).abs() < 1e-9 * (1.0 + b.abs()), "{a} vs {b}");
    }
    let rows = s.used_rows();
    let by_leaf = rows_by_leaf(tree, &s.x(), &rows);
    for l in tree.leaves() {
        let w: f64 = by_leaf[l].iter().map(|&r| s.w[r]).sum();
        assert_eq!(w, tree.leaf_weight(l), "leaf {l}");
    }
}

fn measure(entropy_tree: bool) -> (Impurity, fn(&[f64]) -> f64) {
    if entropy_tree {
        (Impurity::Entropy, entropy)
    } else {
        (Impurity::Gini, gini)
    }
}

proptest! {
    #![proptest_config(config(96))]

    /// A tree grown without limits fits its training data perfectly when the data
    /// holds no conflicting duplicates. Common practice; the proof needs every impure
    /// node to offer a split with a positive decrease, which an input with all values
    /// distinct guarantees (the split isolating its smallest value leaves a pure child
    /// and so changes the class shares; Gini and entropy are strictly concave). Without
    /// such an input it can fail, see `xor_data_stops_where_no_split_decreases_impurity`.
    #[test]
    fn unlimited_tree_fits_separable_training_data(s in separable_sample(), ent in any::<bool>()) {
        let (imp, f) = measure(ent);
        let settings = TreeSettings { impurity: imp, ..TreeSettings::default() };
        let (tree, _) = s.grow(settings, 256, 11).expect("grows");
        for i in 0..s.n() {
            let row: Vec<f64> = s.cols.iter().map(|c| c[i]).collect();
            prop_assert_eq!(tree.leaf_value(tree.leaf_index(&row))[s.y[i] as usize], 1.0);
            prop_assert_eq!(tree.predict_class(&row), s.y[i] as usize);
        }
        check_tree_invariants(&s, &tree, f);
    }

    /// The same for regression, in any units: an unlimited tree reproduces every
    /// training outcome exactly when an input separates every pair of rows. (On such an
    /// input some threshold always has a positive decrease unless the node's outcomes
    /// are all equal: if every prefix of the rows sorted by that input had the node's
    /// mean, every single outcome would equal it. The best such decrease is at least
    /// the node's sum of squares divided by n^2, far above rounding noise.)
    #[test]
    fn unlimited_regression_tree_fits_separable_training_data(
        s in separable_sample(),
        u in vec(-1.0f64..1.0, 41),
        exponent in -6i32..7,
        offset in prop_oneof![Just(0.0), Just(1e6), Just(-1e9)],
    ) {
        let y: Vec<f64> = (0..s.n()).map(|i| offset + 10f64.powi(exponent) * u[i]).collect();
        let x = s.x();
        let data = BinnedData::new(x.view(), &s.meta(), 256).expect("bins");
        let target = OutcomeView::values(&y).expect("target");
        let tree = Grower::new(TreeSettings::default())
            .grow(&data, &target, &s.w, 16)
            .expect("grows");
        for (i, (row, want)) in x.rows().into_iter().zip(&y).enumerate() {
            let row: Vec<f64> = row.to_vec();
            prop_assert_eq!(tree.predict_row(&row)[0], *want, "row {}", i);
        }
    }

    /// On any data, an unlimited tree stops only where it must: every impure leaf
    /// holds cases with identical inputs, or no split of its cases decreases impurity
    /// (checked by the slow reference search). Plus the general invariants.
    #[test]
    fn impure_leaves_have_no_useful_split(s in sample(30, 3, true), ent in any::<bool>()) {
        let (imp, f) = measure(ent);
        let settings = TreeSettings { impurity: imp, ..TreeSettings::default() };
        let Some((tree, _)) = s.grow(settings, 256, 12) else { return Ok(()) };
        check_tree_invariants(&s, &tree, f);
        let rows = s.used_rows();
        let by_leaf = rows_by_leaf(&tree, &s.x(), &rows);
        for l in tree.leaves() {
            let rs = &by_leaf[l];
            if tree.leaf_value(l).contains(&1.0) {
                continue;
            }
            let same = |a: f64, b: f64| a == b || (a.is_nan() && b.is_nan());
            let identical = rs.iter().all(|&r| s.cols.iter().all(|c| same(c[r], c[rs[0]])));
            if identical {
                continue;
            }
            let refs = reference_splits(&s.cols, &s.kinds, &s.y, &s.w, rs, s.n_classes, f, None);
            let scale: f64 = rs.iter().map(|&r| s.w[r]).sum();
            prop_assert!(best_gain(&refs) <= 1e-9 * scale, "leaf {} could split: {}", l, best_gain(&refs));
        }
    }

    /// The grower's root split agrees with the slow reference search when the bin limit
    /// exceeds the number of distinct values (exact mode): the same largest decrease,
    /// and a split (input, threshold) that the reference also finds with that decrease.
    /// For two classes the ordered scan of categories is exact (Breiman et al. 1984,
    /// CART, section 9.4; Fisher 1958), so the decrease must equal the best over all
    /// subsets; for more classes the one-class-at-a-time orderings are a heuristic and
    /// may only fall short on a categorical input, never on a numeric one.
    #[test]
    fn root_split_agrees_with_the_exact_reference(s in sample(40, 4, true), ent in any::<bool>()) {
        let (imp, f) = measure(ent);
        let stump = TreeSettings { impurity: imp, max_depth: Some(1), ..TreeSettings::default() };
        let Some((tree, _)) = s.grow(stump, 256, 13) else { return Ok(()) };
        let rows = s.used_rows();
        let refs = reference_splits(&s.cols, &s.kinds, &s.y, &s.w, &rows, s.n_classes, f, None);
        let best = best_gain(&refs);
        let scale: f64 = rows.iter().map(|&r| s.w[r]).sum::<f64>() + 1.0;
        let tol = 1e-9 * scale;
        if tree.is_single_leaf() {
            prop_assert!(best <= tol, "no split made but the reference gains {}", best);
            return Ok(());
        }
        let root = tree.nodes()[0];
        let j = root.feature().expect("split");
        let got = tree.impurity_decrease()[j];
        // The decrease of the partition the root actually makes, recomputed.
        let counts = node_counts(&tree);
        let made = decrease(f, &counts[0], &counts[root.child()], &counts[root.child() + 1]);
        prop_assert!((made - got).abs() <= tol);
        let exact = s.n_classes == 2 || s.kinds.iter().all(|k| *k == Kind::Numeric);
        if exact {
            prop_assert!((got - best).abs() <= tol, "grower {} reference {}", got, best);
        } else {
            prop_assert!(got <= best + tol);
            let best_numeric = best_gain(&refs.iter().filter(|r| s.kinds[r.feature] == Kind::Numeric).cloned().collect::<Vec<_>>());
            prop_assert!(got >= best_numeric - tol, "grower {} numeric reference {}", got, best_numeric);
        }
        if let Some(t) = root.threshold() {
            prop_assert!(
                refs.iter().any(|r| r.feature == j
                    && r.threshold.is_some_and(|rt| (rt - t).abs() <= 1e-12 * (1.0 + t.abs()))
                    && (r.gain - got).abs() <= tol),
                "threshold {} on input {} is not a reference split with decrease {}", t, j, got
            );
        }
    }

    /// Quantile mode (fewer bins than distinct values) and the two-byte bin codes
    /// (more than 255 bins): the root split is the best among the thresholds at the bin
    /// boundaries, and in exact mode those boundaries are every midpoint between
    /// successive distinct values.
    #[test]
    fn binned_search_is_exact_over_its_candidate_thresholds(
        n in 20usize..400,
        p in 1usize..3,
        limit in prop_oneof![3usize..12, Just(65_536usize)],
        seed in any::<u64>(),
        ent in any::<bool>(),
    ) {
        use rand::RngExt;
        let (imp, f) = measure(ent);
        let mut rng = Xoshiro256PlusPlus::seed_from_u64(seed);
        let cols: Vec<Vec<f64>> = (0..p)
            .map(|_| (0..n).map(|_| f64::from(rng.random_range(0..600)) / 8.0).collect())
            .collect();
        let y: Vec<u32> = (0..n).map(|i| u32::from(cols[0][i] + rng.random_range(0.0..20.0) > 45.0)).collect();
        let s = Sample { cols, kinds: vec![Kind::Numeric; p], y, n_classes: 2, w: vec![1.0; n] };
        let stump = TreeSettings { impurity: imp, max_depth: Some(1), ..TreeSettings::default() };
        let Some((tree, data)) = s.grow(stump, limit, 14) else { return Ok(()) };
        let mut cuts = Vec::new();
        for j in 0..p {
            let b = &data.bins()[j];
            prop_assert!(b.n_bins < limit);
            let mut distinct = s.cols[j].clone();
            distinct.sort_by(f64::total_cmp);
            distinct.dedup();
            let c: Vec<f64> = (1..b.n_bins).map(|k| b.threshold_between(k, k + 1)).collect();
            if distinct.len() < limit {
                // Exact mode: one bin per distinct value, every midpoint a candidate.
                let mids: Vec<f64> = distinct.windows(2).map(|w| (w[0] + w[1]) / 2.0).collect();
                prop_assert_eq!(&c, &mids);
                prop_assert_eq!(data.candidate_thresholds(j), Some(distinct.len() - 1));
            }
            cuts.push(c);
        }
        let rows = s.used_rows();
        let refs = reference_splits(&s.cols, &s.kinds, &s.y, &s.w, &rows, 2, f, Some(&cuts));
        let best = best_gain(&refs);
        let tol = 1e-9 * n as f64;
        let got: f64 = tree.impurity_decrease().iter().sum();
        prop_assert!((got - best).abs() <= tol, "grower {} reference {}", got, best);
        if let Some(t) = tree.nodes()[0].threshold() {
            let j = tree.nodes()[0].feature().expect("split");
            prop_assert!(cuts[j].contains(&t));
        }
    }

    /// Same data, settings and generator seed give the same tree, bit for bit, with a
    /// random subset of inputs tried at each split; also when the grower's scratch
    /// buffers were used for another tree first.
    #[test]
    fn same_seed_gives_the_same_tree(s in sample(40, 6, true), k in 1usize..4, seed in any::<u64>()) {
        let settings = TreeSettings { features_per_split: Some(k), ..TreeSettings::default() };
        let Some((a, data)) = s.grow(settings.clone(), 256, seed) else { return Ok(()) };
        let (b, _) = s.grow(settings.clone(), 256, seed).expect("grows again");
        prop_assert_eq!(&a, &b);
        let target = OutcomeView::classes(&s.y, s.n_classes).expect("target");
        let mut g = Grower::new(settings);
        g.grow(&data, &target, &vec![1.0; s.n()], seed ^ 0xffff).expect("other tree");
        let c = g.grow(&data, &target, &s.w, seed).expect("grows with reused buffers");
        prop_assert_eq!(&a, &c);
        let bits = |t: &Tree| -> Vec<u64> {
            t.leaves().flat_map(|l| t.leaf_value(l).iter().map(|v| v.to_bits()).collect::<Vec<_>>()).collect()
        };
        prop_assert_eq!(bits(&a), bits(&c));
    }
}
