//! The grower's documented rules (`copse_tree::grow`), each on a small data set of our
//! own whose answer follows by hand: where missing values go and how that ties, that
//! unseen and absent categories follow the missing direction, the tie rules between
//! candidate splits, and that inputs constant in a node do not count towards the
//! inputs tried per split. Facts of the trade where marked; the rest are copse's own
//! rules, checked through prediction as a caller meets them.
use copse_tree::{BinnedData, FeatureMeta, Grower, OutcomeView, Tree, TreeSettings};
use ndarray::Array2;

fn numeric(values: &[f64]) -> (BinnedData, Vec<FeatureMeta>) {
    let x = Array2::from_shape_vec((values.len(), 1), values.to_vec()).expect("shape");
    let meta = vec![FeatureMeta::numeric("x")];
    (BinnedData::new(x.view(), &meta, 256).expect("bins"), meta)
}

fn grow_classes(data: &BinnedData, y: &[u32], w: &[f64], settings: TreeSettings) -> Tree {
    let target = OutcomeView::classes(y, 2).expect("target");
    Grower::new(settings)
        .grow(data, &target, w, 1)
        .expect("grows")
}

fn stump() -> TreeSettings {
    TreeSettings {
        max_depth: Some(1),
        ..TreeSettings::default()
    }
}

// ---------------------------------------------------------------------------------------
// Missing values
// ---------------------------------------------------------------------------------------

/// When the node has no missing values, missing values go to the heavier child by case
/// weight, ties to the left. Hand computation: x = 1..6 and one threshold at the class
/// change; the children's weights are counted from the rows, then from case weights
/// that reverse which side is heavier. A row with x missing reaches the leaf of that
/// side.
#[test]
fn without_missing_values_in_training_they_go_to_the_heavier_side_ties_left() {
    let (data, _) = numeric(&[1.0, 2.0, 3.0, 4.0, 5.0, 6.0]);
    // (classes, weights, threshold, missing goes left)
    let cases: [([u32; 6], [f64; 6], f64, bool); 4] = [
        // 4 rows left, 2 right: left is heavier.
        ([0, 0, 0, 0, 1, 1], [1.0; 6], 4.5, true),
        // 2 left, 4 right: right is heavier.
        ([0, 0, 1, 1, 1, 1], [1.0; 6], 2.5, false),
        // 3 and 3: a tie, to the left.
        ([0, 0, 0, 1, 1, 1], [1.0; 6], 3.5, true),
        // 4 rows left of weight 1, 2 right of weight 3: 4 against 6, right is heavier.
        (
            [0, 0, 0, 0, 1, 1],
            [1.0, 1.0, 1.0, 1.0, 3.0, 3.0],
            4.5,
            false,
        ),
    ];
    for (y, w, t, left) in cases {
        let tree = grow_classes(&data, &y, &w, stump());
        let root = tree.nodes()[0];
        assert_eq!(root.threshold(), Some(t), "{y:?} {w:?}");
        assert_eq!(root.missing_goes_left(), left, "{y:?} {w:?}");
        let side = if left { 1.0 } else { 6.0 };
        assert_eq!(
            tree.predict_row(&[f64::NAN]),
            tree.predict_row(&[side]),
            "{y:?} {w:?}: a missing value scores like the {} side",
            if left { "left" } else { "right" }
        );
    }
}

/// When the node has missing values, each candidate is tried with them on either side
/// and the better is kept. Hand computation (Gini, counts): x = 1, 2, 3, 4 with classes
/// 0, 0, 1, 1 and two rows with x missing. If both missing rows are class 1, sending
/// them right (with the class-1 rows) leaves both children pure; if both are class 0,
/// sending them left does. A scored row with x missing follows.
#[test]
fn with_missing_values_in_training_the_better_side_is_kept() {
    let (data, _) = numeric(&[1.0, 2.0, 3.0, 4.0, f64::NAN, f64::NAN]);
    for (missing_class, left) in [(1u32, false), (0, true)] {
        let y = [0, 0, 1, 1, missing_class, missing_class];
        let tree = grow_classes(&data, &y, &[1.0; 6], stump());
        let root = tree.nodes()[0];
        assert_eq!(root.threshold(), Some(2.5));
        assert_eq!(
            root.missing_goes_left(),
            left,
            "missing rows of class {missing_class}"
        );
        let leaf = tree.leaf_index(&[f64::NAN]);
        assert_eq!(
            tree.leaf_weight(leaf),
            4.0,
            "the missing rows joined that side"
        );
        assert_eq!(tree.predict_class(&[f64::NAN]), missing_class as usize);
    }
}

/// When both directions for the missing values give the same decrease, they go right
/// (the documented order: right before left). Hand computation (Gini, counts): x = 1
/// (class 0) and 2 (class 1), two missing rows of classes 0 and 1; at the threshold
/// 1.5, missing left gives children {0, 0, 1} and {1}, missing right {0} and {1, 0, 1}:
/// mirror images, the same decrease 2 - 4/3 = 2/3.
#[test]
fn equal_missing_directions_tie_to_the_right() {
    let (data, _) = numeric(&[1.0, 2.0, f64::NAN, f64::NAN]);
    let tree = grow_classes(&data, &[0, 1, 0, 1], &[1.0; 4], stump());
    let root = tree.nodes()[0];
    assert_eq!(root.threshold(), Some(1.5));
    assert!(!root.missing_goes_left());
    assert_eq!(tree.predict_row(&[f64::NAN]), tree.predict_row(&[2.0]));
}

// ---------------------------------------------------------------------------------------
// Categories
// ---------------------------------------------------------------------------------------

/// Three categories p, q, r of input b beside a numeric input a. Rows with a = 0 hold
/// only p and q; the rows with a = 10 hold r (and one p). Hand computation (Gini,
/// counts): the root splits on a (its children weigh 1.75 against the parent's 8, the
/// best split on b leaves 3.11), and the a = 0 node splits on b into {p} and {q}, in
/// which r is absent.
fn categories_in_nodes() -> (Tree, BinnedData, Vec<FeatureMeta>) {
    let mut rows: Vec<([f64; 2], u32)> = Vec::new();
    for _ in 0..4 {
        rows.push(([0.0, 0.0], 0)); // a = 0, p, class 0
    }
    for class in [0, 0, 0, 1] {
        rows.push(([0.0, 1.0], class)); // a = 0, q
    }
    for _ in 0..7 {
        rows.push(([10.0, 2.0], 1)); // a = 10, r, class 1
    }
    rows.push(([10.0, 0.0], 1)); // a = 10, p, class 1
    let x = Array2::from_shape_fn((rows.len(), 2), |(i, j)| rows[i].0[j]);
    let y: Vec<u32> = rows.iter().map(|r| r.1).collect();
    let meta = vec![
        FeatureMeta::numeric("a"),
        FeatureMeta::categorical("b", vec!["p".into(), "q".into(), "r".into()]),
    ];
    let data = BinnedData::new(x.view(), &meta, 256).expect("bins");
    let tree = grow_classes(&data, &y, &vec![1.0; rows.len()], TreeSettings::default());
    (tree, data, meta)
}

/// A category the node never saw follows the node's missing-value direction, so a row
/// with an unseen category scores exactly like a row with the value missing; at the
/// root of the a = 0 subtree r is absent (see `categories_in_nodes`).
#[test]
fn categories_absent_from_a_node_follow_the_missing_direction() {
    let (tree, _, meta) = categories_in_nodes();
    let root = tree.nodes()[0];
    assert_eq!(
        root.feature(),
        Some(0),
        "{}",
        copse_tree::render::render(&tree, &meta, None)
    );
    // The a = 0 side of the root, and its split on b.
    let left = tree.nodes()[root.child()];
    assert_eq!(
        left.feature(),
        Some(1),
        "{}",
        copse_tree::render::render(&tree, &meta, None)
    );
    // p and q each go to one side; r, absent, sits on the side of the missing values
    // (no missing value reached this node, so the heavier side; 4 against 4: left).
    let sent_left = tree.left_categories(&left);
    assert!(
        sent_left.contains(&0) != sent_left.contains(&1),
        "{sent_left:?}"
    );
    assert!(left.missing_goes_left());
    assert_eq!(
        sent_left.contains(&2),
        left.missing_goes_left(),
        "{sent_left:?}"
    );
    // r (code 2) goes where missing values go, and scores as a missing value does.
    let missing_side = left.child() + usize::from(!left.missing_goes_left());
    let leaf_r = tree.leaf_index(&[0.0, 2.0]);
    assert_eq!(leaf_r, tree.leaf_index(&[0.0, f64::NAN]));
    assert_eq!(leaf_r, missing_side);
    assert_eq!(
        tree.predict_row(&[0.0, 2.0]),
        tree.predict_row(&[0.0, f64::NAN])
    );
}

/// A category unseen in training (a code past the input's categories, or anything that
/// is not a category code) scores exactly like a missing value, at every node.
#[test]
fn an_unseen_category_scores_like_a_missing_value() {
    let (tree, _, _) = categories_in_nodes();
    for a in [0.0, 10.0] {
        let missing = tree.predict_row(&[a, f64::NAN]).to_vec();
        for unseen in [3.0, 7.0, 1e9, -1.0, 0.5] {
            assert_eq!(
                tree.predict_row(&[a, unseen]).to_vec(),
                missing,
                "a = {a}, category code {unseen}"
            );
            assert_eq!(
                tree.leaf_index(&[a, unseen]),
                tree.leaf_index(&[a, f64::NAN])
            );
        }
    }
}

// ---------------------------------------------------------------------------------------
// Tie rules between candidate splits
// ---------------------------------------------------------------------------------------

/// Equal decreases on one input go to the lowest threshold. Hand computation: x = 1, 2,
/// 3, 4 with classes 0, 1, 1, 0 (or outcomes 0, 1, 1, 0): the thresholds 1.5 and 3.5
/// cut off one end row each, mirror images with the same decrease, and 2.5 leaves
/// both children half and half (no decrease). The root takes 1.5.
#[test]
fn equal_decreases_go_to_the_lowest_threshold() {
    let (data, _) = numeric(&[1.0, 2.0, 3.0, 4.0]);
    let tree = grow_classes(&data, &[0, 1, 1, 0], &[1.0; 4], stump());
    assert_eq!(tree.nodes()[0].threshold(), Some(1.5));
    let y = [0.0, 1.0, 1.0, 0.0];
    let target = OutcomeView::values(&y).expect("target");
    let tree = Grower::new(stump())
        .grow(&data, &target, &[1.0; 4], 1)
        .expect("grows");
    assert_eq!(tree.nodes()[0].threshold(), Some(1.5));
    // The same rows in reverse order: the rule is about thresholds, not row order.
    let (data, _) = numeric(&[4.0, 3.0, 2.0, 1.0]);
    let tree = grow_classes(&data, &[0, 1, 1, 0], &[1.0; 4], stump());
    assert_eq!(tree.nodes()[0].threshold(), Some(1.5));
}

/// Equal decreases on different inputs go to the lowest input index: two copies of the
/// same column, in either order of their names.
#[test]
fn equal_decreases_go_to_the_lowest_input() {
    let col = [1.0, 2.0, 3.0, 4.0, 5.0, 6.0];
    let x = Array2::from_shape_fn((6, 2), |(i, _)| col[i]);
    for names in [["u", "v"], ["v", "u"]] {
        let meta = vec![
            FeatureMeta::numeric(names[0]),
            FeatureMeta::numeric(names[1]),
        ];
        let data = BinnedData::new(x.view(), &meta, 256).expect("bins");
        let tree = grow_classes(&data, &[0, 0, 0, 1, 1, 1], &[1.0; 6], stump());
        assert_eq!(tree.nodes()[0].feature(), Some(0), "{names:?}");
    }
}

// ---------------------------------------------------------------------------------------
// Inputs per split
// ---------------------------------------------------------------------------------------

/// A drawn input that is constant in the node does not count towards K. Inputs c1, c2
/// and c3 vary only on rows of weight 0 (so they vary in the data and can be drawn, but
/// are constant in every node), and b separates the classes. With one input tried per
/// split, a root that counted a constant draw would stay a leaf whenever a c came first,
/// in 3 of 4 trees; under the rule every one of 40 generator seeds splits the root on
/// b. (Were the rule broken, all 40 splitting would have probability (1/4)^40.)
#[test]
fn inputs_constant_in_the_node_do_not_count_towards_k() {
    let n = 12;
    let x = Array2::from_shape_fn((n, 4), |(i, j)| match j {
        // The last two rows (weight 0) give c1..c3 a second value.
        0..=2 => f64::from(u8::from(i >= n - 2)),
        _ => i as f64,
    });
    let meta: Vec<FeatureMeta> = ["c1", "c2", "c3", "b"]
        .iter()
        .map(|s| FeatureMeta::numeric(*s))
        .collect();
    let data = BinnedData::new(x.view(), &meta, 256).expect("bins");
    let y: Vec<u32> = (0..n).map(|i| u32::from(i >= 5)).collect();
    let mut w = vec![1.0; n];
    w[n - 2] = 0.0;
    w[n - 1] = 0.0;
    let target = OutcomeView::classes(&y, 2).expect("target");
    let settings = TreeSettings {
        features_per_split: Some(1),
        ..TreeSettings::default()
    };
    let mut grower = Grower::new(settings);
    for seed in 0..40 {
        let tree = grower.grow(&data, &target, &w, seed).expect("grows");
        assert_eq!(tree.nodes()[0].feature(), Some(3), "seed {seed}");
        assert_eq!(tree.nodes()[0].threshold(), Some(4.5), "seed {seed}");
    }
}
