//! Facts of the trade (common practice) and regression trees, on small data sets of
//! our own whose answers follow from the definitions.
use copse_tree::{render::render, BinnedData, FeatureMeta, Grower, OutcomeView, TreeSettings};
use ndarray::Array2;

// ---------------------------------------------------------------------------------------
// Facts of the trade (common practice) on small data sets of our own.
// ---------------------------------------------------------------------------------------

pub(crate) fn one_column(values: &[f64]) -> BinnedData {
    let x = Array2::from_shape_vec((values.len(), 1), values.to_vec()).expect("shape");
    BinnedData::new(x.view(), &[FeatureMeta::numeric("x")], 256).expect("bins")
}

#[test]
fn an_input_with_k_distinct_values_offers_k_minus_1_thresholds() {
    // Common practice: candidate thresholds are the midpoints between successive
    // distinct values, k - 1 of them for k distinct values. Hand count for the values
    // 1 1 2 4 4 7: four distinct values, thresholds 1.5, 3 and 5.5.
    let values = [4.0, 1.0, 7.0, 1.0, 4.0, 2.0];
    let data = one_column(&values);
    assert_eq!(data.candidate_thresholds(0), Some(3));
    assert_eq!(data.occupied_bins(0), 4);
    let b = &data.bins()[0];
    let listed: Vec<f64> = (1..b.n_bins)
        .map(|k| b.threshold_between(k, k + 1))
        .collect();
    assert_eq!(listed, vec![1.5, 3.0, 5.5]);
    // And the grower uses exactly those: over all 2^6 labellings of the six rows, the
    // thresholds chosen at the root are 1.5, 3 and 5.5, each at least once, and
    // nothing else.
    let mut seen: Vec<f64> = Vec::new();
    for labels in 0u32..64 {
        let y: Vec<u32> = (0..6).map(|i| labels >> i & 1).collect();
        let target = OutcomeView::classes(&y, 2).expect("target");
        let tree = Grower::new(TreeSettings::default())
            .grow(&data, &target, &[1.0; 6], 3)
            .expect("grows");
        if let Some(t) = tree.nodes()[0].threshold() {
            if !seen.contains(&t) {
                seen.push(t);
            }
        } else {
            // Only a one-class labelling leaves the root a leaf here.
            assert!(labels == 0 || labels == 63, "labelling {labels:06b}");
        }
    }
    seen.sort_by(f64::total_cmp);
    assert_eq!(seen, vec![1.5, 3.0, 5.5]);
}

#[test]
fn identical_inputs_with_different_classes_end_in_one_impure_leaf() {
    // Common practice: cases with the same inputs and different classes can never be
    // separated; growth must stop with them together (and not loop).
    let x = Array2::from_shape_vec(
        (6, 2),
        vec![
            1.0, 5.0, //
            2.0, 5.0, //
            2.0, 5.0, //
            2.0, 5.0, //
            3.0, 6.0, //
            4.0, 6.0,
        ],
    )
    .expect("shape");
    let meta = [FeatureMeta::numeric("a"), FeatureMeta::numeric("b")];
    let data = BinnedData::new(x.view(), &meta, 256).expect("bins");
    let y = [0, 0, 1, 0, 1, 1];
    let target = OutcomeView::classes(&y, 2).expect("target");
    let tree = Grower::new(TreeSettings::default())
        .grow(&data, &target, &[1.0; 6], 5)
        .expect("grows");
    let impure: Vec<usize> = tree
        .leaves()
        .filter(|&l| tree.leaf_value(l).iter().all(|&p| p < 1.0))
        .collect();
    assert_eq!(impure.len(), 1, "{}", render(&tree, &meta, None));
    let leaf = impure[0];
    assert_eq!(leaf, tree.leaf_index(&[2.0, 5.0]));
    assert_eq!(tree.leaf_weight(leaf), 3.0);
    assert!((tree.leaf_value(leaf)[0] - 2.0 / 3.0).abs() < 1e-12);

    // All rows identical: a single leaf holding the class shares.
    let same = Array2::from_elem((4, 1), 1.0);
    let data = BinnedData::new(same.view(), &[FeatureMeta::numeric("a")], 256).expect("bins");
    let target = OutcomeView::classes(&[0, 1, 1, 1], 2).expect("target");
    let tree = Grower::new(TreeSettings::default())
        .grow(&data, &target, &[1.0; 4], 5)
        .expect("grows");
    assert!(tree.is_single_leaf());
    assert_eq!(tree.leaf_value(0), &[0.25, 0.75]);
}

#[test]
fn xor_data_stops_where_no_split_decreases_impurity() {
    // Common practice (and the stopping rule of issue 2: "no split decreases
    // impurity"): on the four corners of a square labelled by XOR, every single split
    // leaves both children half and half, so no split decreases impurity and the root
    // stays a leaf, even though the inputs differ. This is why the property below that
    // a tree fits its training data perfectly needs an input that separates every pair
    // of rows.
    let x = Array2::from_shape_vec((4, 2), vec![0.0, 0.0, 0.0, 1.0, 1.0, 0.0, 1.0, 1.0])
        .expect("shape");
    let meta = [FeatureMeta::numeric("a"), FeatureMeta::numeric("b")];
    let data = BinnedData::new(x.view(), &meta, 256).expect("bins");
    let target = OutcomeView::classes(&[0, 1, 1, 0], 2).expect("target");
    let tree = Grower::new(TreeSettings::default())
        .grow(&data, &target, &[1.0; 4], 9)
        .expect("grows");
    assert!(tree.is_single_leaf());
    assert_eq!(tree.leaf_value(0), &[0.5, 0.5]);
}

// ---------------------------------------------------------------------------------------
// Regression trees.
// ---------------------------------------------------------------------------------------

#[test]
fn regression_tree_finds_a_step_and_its_means() {
    // Definition of the regression tree (Breiman et al. 1984, CART, chapter 8; memory):
    // the split minimising the within-node sum of squares, leaves predicting the node
    // mean. On a step at x = 11.5 with a small zero-mean wiggle on each side, a
    // one-level tree must split at the midpoint 11.5 and predict the mean of each side
    // (computed here from the data). Changing the outcome's units, y -> a y + b, scales
    // every sum of squares by a^2 and changes no split (variance is shift-invariant,
    // common practice), so the same split must be found at any offset b and scale a,
    // with the means moved accordingly. Tolerances: at b = 1e9 an outcome value is
    // only held to its ulp, 1.2e-7.
    let x: Vec<f64> = (0..24).map(f64::from).collect();
    let wiggle = |i: usize| [0.1, -0.1, 0.05, -0.05][i % 4];
    let base: Vec<f64> = (0..24)
        .map(|i| if i < 12 { 1.0 } else { 4.0 } + wiggle(i))
        .collect();
    let mean = |r: std::ops::Range<usize>| {
        let n = r.len() as f64;
        base[r].iter().sum::<f64>() / n
    };
    let ss = |r: std::ops::Range<usize>| {
        let m = mean(r.clone());
        base[r].iter().map(|v| (v - m) * (v - m)).sum::<f64>()
    };
    let data = one_column(&x);
    for (a, b) in [
        (1.0, 0.0),
        (1.0, 1e9),
        (1e-9, 0.0),
        (1e-9, 5e-3),
        (1e9, -3e12),
    ] {
        let y: Vec<f64> = base.iter().map(|v| a * v + b).collect();
        let target = OutcomeView::values(&y).expect("target");
        let stump = TreeSettings {
            max_depth: Some(1),
            ..TreeSettings::default()
        };
        let tree = Grower::new(stump)
            .grow(&data, &target, &[1.0; 24], 2)
            .expect("grows");
        let root = tree.nodes()[0];
        assert_eq!(root.threshold(), Some(11.5), "a {a}, b {b}");
        // Back in the original units.
        let back = |v: f64| (v - b) / a;
        let (lo, hi) = (tree.predict_row(&[0.0])[0], tree.predict_row(&[23.0])[0]);
        let tol = 1e-6 * (1.0 + (b / a).abs() * 1e-9);
        assert!((back(lo) - mean(0..12)).abs() < tol, "a {a}, b {b}: {lo}");
        assert!((back(hi) - mean(12..24)).abs() < tol, "a {a}, b {b}: {hi}");
        // Decrease: total sum of squares minus the two within-side sums (computed).
        let want = ss(0..24) - ss(0..12) - ss(12..24);
        let got = tree.impurity_decrease()[0] / (a * a);
        assert!(
            (got - want).abs() < 1e-6 * want,
            "a {a}, b {b}: {got} vs {want}"
        );
    }
    // Without a depth limit, a clean step gives two pure leaves and stops.
    let y: Vec<f64> = (0..24).map(|i| if i < 12 { 1.0 } else { 4.0 }).collect();
    let target = OutcomeView::values(&y).expect("target");
    let tree = Grower::new(TreeSettings::default())
        .grow(&data, &target, &[1.0; 24], 2)
        .expect("grows");
    assert_eq!(tree.n_leaves(), 2);
    assert_eq!(tree.predict_row(&[11.0]), &[1.0]);
    assert_eq!(tree.predict_row(&[12.0]), &[4.0]);
}
