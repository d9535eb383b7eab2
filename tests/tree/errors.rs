//! Errors: each typed error, and no panic on any input.
use crate::practice::one_column;
use crate::properties::config;
use copse_tree::outcome::MISSING_CLASS;
use copse_tree::render::render;
use copse_tree::{BinnedData, ErrorKind, FeatureMeta, Grower, OutcomeView, TreeSettings};
use ndarray::Array2;
use proptest::collection::vec;
use proptest::prelude::*;

// ---------------------------------------------------------------------------------------
// Errors: each typed error, and no panic on any input.
// ---------------------------------------------------------------------------------------

fn tiny(values: &[f64]) -> (BinnedData, usize) {
    (one_column(values), values.len())
}

#[test]
fn empty_data_is_an_error() {
    let x = Array2::<f64>::zeros((0, 2));
    let meta = [FeatureMeta::numeric("a"), FeatureMeta::numeric("b")];
    let e = BinnedData::new(x.view(), &meta, 256).expect_err("no rows");
    assert_eq!(e.kind(), ErrorKind::EmptyData);
    let x = Array2::<f64>::zeros((3, 0));
    let e = BinnedData::new(x.view(), &[], 256).expect_err("no inputs");
    assert_eq!(e.kind(), ErrorKind::EmptyData);
    // Rows exist but none has a positive case weight.
    let (data, n) = tiny(&[1.0, 2.0, 3.0]);
    let target = OutcomeView::classes(&[0, 1, 0], 2).expect("target");
    let e = Grower::new(TreeSettings::default())
        .grow(&data, &target, &vec![0.0; n], 0)
        .expect_err("no weight");
    assert_eq!(e.kind(), ErrorKind::EmptyData);
}

#[test]
fn a_single_row_is_an_error() {
    let (data, _) = tiny(&[1.0]);
    let target = OutcomeView::classes(&[0], 2).expect("target");
    let e = Grower::new(TreeSettings::default())
        .grow(&data, &target, &[1.0], 0)
        .expect_err("one row");
    assert_eq!(e.kind(), ErrorKind::SingleRow);
    // Two rows, but only one with an outcome.
    let (data, _) = tiny(&[1.0, 2.0]);
    let target = OutcomeView::values(&[3.0, f64::NAN]).expect("target");
    let e = Grower::new(TreeSettings::default())
        .grow(&data, &target, &[1.0; 2], 0)
        .expect_err("one outcome");
    assert_eq!(e.kind(), ErrorKind::SingleRow);
}

#[test]
fn all_targets_missing_is_an_error() {
    let (data, _) = tiny(&[1.0, 2.0, 3.0]);
    let codes = [MISSING_CLASS; 3];
    let target = OutcomeView::classes(&codes, 2).expect("target");
    let e = Grower::new(TreeSettings::default())
        .grow(&data, &target, &[1.0; 3], 0)
        .expect_err("no classes");
    assert_eq!(e.kind(), ErrorKind::NoTargets);
    let target = OutcomeView::values(&[f64::NAN; 3]).expect("target");
    let e = Grower::new(TreeSettings::default())
        .grow(&data, &target, &[1.0; 3], 0)
        .expect_err("no values");
    assert_eq!(e.kind(), ErrorKind::NoTargets);
}

#[test]
fn a_single_class_grows_a_single_leaf() {
    // Allowed, but the caller can tell: the tree is one leaf predicting that class.
    let (data, _) = tiny(&[1.0, 2.0, 3.0, 4.0]);
    for n_classes in [1, 3] {
        let target = OutcomeView::classes(&[0, 0, 0, 0], n_classes).expect("target");
        let tree = Grower::new(TreeSettings::default())
            .grow(&data, &target, &[1.0; 4], 0)
            .expect("grows");
        assert!(tree.is_single_leaf());
        assert_eq!(tree.n_leaves(), 1);
        assert_eq!(tree.predict_row(&[9.0])[0], 1.0);
        assert_eq!(tree.predict_class(&[9.0]), 0);
    }
    // The same for a constant regression outcome.
    let target = OutcomeView::values(&[2.5; 4]).expect("target");
    let tree = Grower::new(TreeSettings::default())
        .grow(&data, &target, &[1.0; 4], 0)
        .expect("grows");
    assert!(tree.is_single_leaf());
    assert_eq!(tree.predict_row(&[0.0]), &[2.5]);
}

#[test]
fn mismatched_lengths_are_an_error() {
    let x = Array2::<f64>::zeros((3, 2));
    let e = BinnedData::new(x.view(), &[FeatureMeta::numeric("a")], 256).expect_err("meta");
    assert_eq!(e.kind(), ErrorKind::LengthMismatch);
    let (data, _) = tiny(&[1.0, 2.0, 3.0]);
    let short = OutcomeView::classes(&[0, 1], 2).expect("target");
    let e = Grower::new(TreeSettings::default())
        .grow(&data, &short, &[1.0; 3], 0)
        .expect_err("target length");
    assert_eq!(e.kind(), ErrorKind::LengthMismatch);
    let target = OutcomeView::classes(&[0, 1, 1], 2).expect("target");
    let e = Grower::new(TreeSettings::default())
        .grow(&data, &target, &[1.0; 4], 0)
        .expect_err("weight length");
    assert_eq!(e.kind(), ErrorKind::LengthMismatch);
    // Prediction on a row narrower than the training data.
    let wide = Array2::from_shape_vec((3, 2), vec![1.0, 0.0, 2.0, 0.0, 3.0, 1.0]).expect("shape");
    let meta = [FeatureMeta::numeric("a"), FeatureMeta::numeric("b")];
    let data = BinnedData::new(wide.view(), &meta, 256).expect("bins");
    let tree = Grower::new(TreeSettings::default())
        .grow(&data, &target, &[1.0; 3], 0)
        .expect("grows");
    assert_eq!(tree.n_features(), 2);
    let e = tree.try_predict_row(&[1.0]).expect_err("narrow row");
    assert_eq!(e.kind(), ErrorKind::LengthMismatch);
    let narrow = Array2::<f64>::zeros((2, 1));
    let e = tree
        .try_predict_batch(narrow.view())
        .expect_err("narrow batch");
    assert_eq!(e.kind(), ErrorKind::LengthMismatch);
    assert!(tree.try_predict_row(&[1.0, 0.0]).is_ok());
}

#[test]
fn infinite_numbers_are_an_error() {
    for bad in [f64::INFINITY, f64::NEG_INFINITY] {
        let x = Array2::from_shape_vec((3, 1), vec![1.0, bad, 2.0]).expect("shape");
        let e = BinnedData::new(x.view(), &[FeatureMeta::numeric("depth")], 256)
            .expect_err("infinite input");
        assert_eq!(e.kind(), ErrorKind::NonFinite);
        assert!(e.message().contains("row 1") && e.message().contains("depth"));
        let e = OutcomeView::values(&[1.0, 2.0, bad]).expect_err("infinite outcome");
        assert_eq!(e.kind(), ErrorKind::NonFinite);
    }
    // An infinite case weight is refused too.
    let (data, _) = tiny(&[1.0, 2.0]);
    let target = OutcomeView::classes(&[0, 1], 2).expect("target");
    let e = Grower::new(TreeSettings::default())
        .grow(&data, &target, &[1.0, f64::INFINITY], 0)
        .expect_err("weight");
    assert_eq!(e.kind(), ErrorKind::InvalidSetting);
}

#[test]
fn bad_codes_and_settings_are_errors() {
    let e = OutcomeView::classes(&[0, 2], 2).expect_err("class code");
    assert_eq!(e.kind(), ErrorKind::BadCategory);
    let e = OutcomeView::classes(&[0, 1], 0).expect_err("no classes");
    assert_eq!(e.kind(), ErrorKind::InvalidSetting);
    let e = OutcomeView::classes(&[0, 1], usize::MAX).expect_err("too many classes");
    assert_eq!(e.kind(), ErrorKind::TooLarge);
    let x = Array2::from_shape_vec((2, 1), vec![0.0, 0.5]).expect("shape");
    let meta = [FeatureMeta::categorical("c", vec!["a".into(), "b".into()])];
    let e = BinnedData::new(x.view(), &meta, 256).expect_err("fractional code");
    assert_eq!(e.kind(), ErrorKind::BadCategory);
    let (data, _) = tiny(&[1.0, 2.0]);
    let e = BinnedData::new(
        Array2::zeros((2, 1)).view(),
        &[FeatureMeta::numeric("a")],
        2,
    )
    .expect_err("bin limit");
    assert_eq!(e.kind(), ErrorKind::InvalidSetting);
    let target = OutcomeView::classes(&[0, 1], 2).expect("target");
    for bad in [
        TreeSettings {
            min_leaf: 0.0,
            ..TreeSettings::default()
        },
        TreeSettings {
            features_per_split: Some(0),
            ..TreeSettings::default()
        },
        TreeSettings {
            min_decrease: f64::NAN,
            ..TreeSettings::default()
        },
    ] {
        let e = Grower::new(bad)
            .grow(&data, &target, &[1.0; 2], 0)
            .expect_err("setting");
        assert_eq!(e.kind(), ErrorKind::InvalidSetting);
    }
}

/// Any f64 a caller might pass, including the awkward ones.
fn any_number() -> impl Strategy<Value = f64> {
    prop_oneof![
        4 => -10.0f64..10.0,
        1 => Just(f64::NAN),
        1 => Just(f64::INFINITY),
        1 => Just(f64::NEG_INFINITY),
        1 => Just(f64::MAX),
        1 => Just(-f64::MAX),
        1 => Just(f64::MIN_POSITIVE),
        1 => Just(-0.0),
        1 => (0i32..4).prop_map(f64::from),
    ]
}

proptest! {
    #![proptest_config(config(256))]

    /// No input makes the core panic: every call returns a tree or a typed error.
    #[test]
    fn no_input_makes_the_core_panic(
        n in 0usize..12,
        p in 0usize..3,
        cells in vec(any_number(), 36),
        cats in vec(any::<bool>(), 3),
        codes in vec(prop_oneof![0u32..4, Just(MISSING_CLASS), Just(u32::MAX - 1)], 12),
        values in vec(any_number(), 12),
        weights in vec(any_number(), 12),
        n_classes in 0usize..5,
        limit in 0usize..300,
        min_leaf in any_number(),
        min_split in any_number(),
        depth in proptest::option::of(0usize..4),
        k in proptest::option::of(0usize..4),
        regression in any::<bool>(),
    ) {
        let x = Array2::from_shape_fn((n, p), |(i, j)| cells[(i * 3 + j) % 36]);
        let meta: Vec<FeatureMeta> = (0..p)
            .map(|j| if cats[j] {
                FeatureMeta::categorical(format!("c{j}"), vec!["a".into(), "b".into(), "c".into()])
            } else {
                FeatureMeta::numeric(format!("x{j}"))
            })
            .collect();
        let Ok(data) = BinnedData::new(x.view(), &meta, limit) else { return Ok(()) };
        let target = if regression {
            OutcomeView::values(&values[..n])
        } else {
            OutcomeView::classes(&codes[..n], n_classes)
        };
        let Ok(target) = target else { return Ok(()) };
        let settings = TreeSettings {
            min_leaf,
            min_split,
            max_depth: depth,
            features_per_split: k,
            ..TreeSettings::default()
        };
        let Ok(tree) = Grower::new(settings).grow(&data, &target, &weights[..n], 15) else {
            return Ok(());
        };
        let out = tree.try_predict_batch(x.view()).expect("width matches");
        prop_assert_eq!(out.nrows(), n);
        let _ = render(&tree, &meta, None);
    }
}
