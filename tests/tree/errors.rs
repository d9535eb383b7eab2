//! Errors: each typed error, and no panic on any input.
use crate::practice::one_column;
use crate::properties::config;
use copse_tree::outcome::MISSING_CLASS;
use copse_tree::render::render;
use copse_tree::{BinnedData, ErrorKind, FeatureMeta, Grower, OutcomeView, TreeSettings};
use ndarray::Array2;
use proptest::collection::vec;
use proptest::prelude::*;
use proptest::test_runner::TestRunner;
use std::cell::Cell;

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

/// A part of a call drawn from its valid values 19 times in 20 and from awkward ones
/// otherwise, with a flag saying which.
fn knob<T: std::fmt::Debug + Clone + 'static>(
    valid: impl Strategy<Value = T> + 'static,
    awkward: impl Strategy<Value = T> + 'static,
) -> BoxedStrategy<(T, bool)> {
    prop_oneof![
        19 => valid.prop_map(|v| (v, true)),
        1 => awkward.prop_map(|v| (v, false)),
    ]
    .boxed()
}

/// Rows and inputs the calls draw at most.
const MAX_ROWS: usize = 40;
const MAX_INPUTS: usize = 4;

/// One call of the core. Valid parts: 2 to 40 rows of 1 to 4 inputs (numeric values,
/// or codes of 3 categories; a few cells missing), 2 to 4 classes or finite values,
/// positive case weights, a bin limit of 3 to 300, positive leaf and split sizes.
/// Awkward parts (each 1 in 20): no rows, one row or no input; an infinite cell or a
/// code that is no category; 0 or 1 class; a missing or impossible class code, an
/// infinite or missing value; a zero, negative, infinite or missing weight; a bin
/// limit below 3; any leaf or split size.
#[derive(Debug, Clone)]
struct Call {
    /// Rows, inputs.
    shape: ((usize, usize), bool),
    /// Per input: categorical?
    cats: Vec<bool>,
    /// Uniform draws in [0, 1) turned into cells by the input's kind.
    cells: Vec<f64>,
    /// Cells left missing (a valid part: missing values are allowed).
    missing: Vec<bool>,
    bad_cell: (Option<(usize, f64)>, bool),
    n_classes: (usize, bool),
    codes: Vec<u32>,
    bad_code: (Option<(usize, u32)>, bool),
    values: Vec<f64>,
    bad_value: (Option<(usize, f64)>, bool),
    weights: Vec<f64>,
    bad_weight: (Option<(usize, f64)>, bool),
    limit: (usize, bool),
    min_leaf: (f64, bool),
    min_split: (f64, bool),
    depth: Option<usize>,
    k: Option<usize>,
    regression: bool,
}

impl Call {
    fn valid(&self) -> bool {
        self.shape.1
            && self.bad_cell.1
            && self.n_classes.1
            && self.bad_code.1
            && self.bad_value.1
            && self.bad_weight.1
            && self.limit.1
            && self.min_leaf.1
            && self.min_split.1
    }
}

fn call() -> impl Strategy<Value = Call> {
    let cells = MAX_ROWS * MAX_INPUTS;
    let shape = knob(
        (2usize..=MAX_ROWS, 1usize..=MAX_INPUTS),
        prop_oneof![
            (0usize..2, 0usize..=MAX_INPUTS),
            (2usize..=MAX_ROWS, Just(0usize))
        ],
    );
    let bad_cell = knob(
        Just(None),
        (
            0..cells,
            prop_oneof![
                Just(f64::INFINITY),
                Just(f64::NEG_INFINITY),
                Just(0.5),
                Just(-1.0),
                Just(7.0)
            ],
        )
            .prop_map(Some),
    );
    let bad_code = knob(
        Just(None),
        (
            0..MAX_ROWS,
            prop_oneof![Just(MISSING_CLASS), Just(u32::MAX - 1), Just(9)],
        )
            .prop_map(Some),
    );
    let bad_value = knob(
        Just(None),
        (
            0..MAX_ROWS,
            prop_oneof![Just(f64::NAN), Just(f64::INFINITY)],
        )
            .prop_map(Some),
    );
    let bad_weight = knob(Just(None), (0..MAX_ROWS, any_number()).prop_map(Some));
    let weight = prop_oneof![Just(0.5), Just(1.0), Just(2.0), Just(3.0)];
    (
        (
            shape,
            vec(any::<bool>(), MAX_INPUTS),
            vec(0.0f64..1.0, cells),
            vec(prop::bool::weighted(0.05), cells),
            bad_cell,
        ),
        (
            knob(2usize..5, 0usize..2),
            vec(0u32..1000, MAX_ROWS),
            bad_code,
        ),
        (
            vec(-100.0f64..100.0, MAX_ROWS),
            bad_value,
            vec(weight, MAX_ROWS),
            bad_weight,
        ),
        (
            knob(3usize..300, 0usize..3),
            knob(1.0f64..3.0, any_number()),
            knob(0.0f64..6.0, any_number()),
        ),
        (
            proptest::option::of(0usize..8),
            proptest::option::of(1usize..6),
            any::<bool>(),
        ),
    )
        .prop_map(
            |(
                (shape, cats, cells, missing, bad_cell),
                (n_classes, codes, bad_code),
                (values, bad_value, weights, bad_weight),
                (limit, min_leaf, min_split),
                (depth, k, regression),
            )| Call {
                shape,
                cats,
                cells,
                missing,
                bad_cell,
                n_classes,
                codes,
                bad_code,
                values,
                bad_value,
                weights,
                bad_weight,
                limit,
                min_leaf,
                min_split,
                depth,
                k,
                regression,
            },
        )
}

/// Runs one call: a tree or a typed error, never a panic. Returns whether it grew.
fn run(c: &Call) -> bool {
    let ((n, p), _) = c.shape;
    let mut x = Array2::from_shape_fn((n, p), |(i, j)| {
        let u = c.cells[i * MAX_INPUTS + j];
        if c.missing[i * MAX_INPUTS + j] {
            f64::NAN
        } else if c.cats[j] {
            (u * 3.0).floor()
        } else {
            (u * 80.0).round() / 4.0 - 10.0
        }
    });
    if let (Some((at, v)), _) = c.bad_cell {
        if n * p > 0 {
            let at = at % (n * p);
            x[[at / p, at % p]] = v;
        }
    }
    let meta: Vec<FeatureMeta> = (0..p)
        .map(|j| {
            if c.cats[j] {
                FeatureMeta::categorical(format!("c{j}"), vec!["a".into(), "b".into(), "c".into()])
            } else {
                FeatureMeta::numeric(format!("x{j}"))
            }
        })
        .collect();
    let (n_classes, _) = c.n_classes;
    let mut codes: Vec<u32> = c.codes[..n]
        .iter()
        .map(|&v| v % n_classes.max(1) as u32)
        .collect();
    let mut values = c.values[..n].to_vec();
    let mut weights = c.weights[..n].to_vec();
    if n > 0 {
        if let (Some((i, v)), _) = c.bad_code {
            codes[i % n] = v;
        }
        if let (Some((i, v)), _) = c.bad_value {
            values[i % n] = v;
        }
        if let (Some((i, v)), _) = c.bad_weight {
            weights[i % n] = v;
        }
    }
    let Ok(data) = BinnedData::new(x.view(), &meta, c.limit.0) else {
        return false;
    };
    let target = if c.regression {
        OutcomeView::values(&values)
    } else {
        OutcomeView::classes(&codes, n_classes)
    };
    let Ok(target) = target else { return false };
    let settings = TreeSettings {
        min_leaf: c.min_leaf.0,
        min_split: c.min_split.0,
        max_depth: c.depth,
        features_per_split: c.k,
        ..TreeSettings::default()
    };
    let Ok(tree) = Grower::new(settings).grow(&data, &target, &weights, 15) else {
        return false;
    };
    let out = tree.try_predict_batch(x.view()).expect("width matches");
    assert_eq!(out.nrows(), n);
    for row in out.rows() {
        if c.regression {
            assert!(row.iter().all(|v| v.is_finite()), "{row}");
        } else {
            assert!((row.sum() - 1.0).abs() < 1e-9, "{row}");
        }
    }
    let _ = render(&tree, &meta, None);
    true
}

/// No input makes the core panic: every call returns a tree or a typed error. The
/// calls are mostly valid, so the grower and prediction are reached: every call whose
/// parts are all valid must grow a tree, and at least half of the 256 calls must be
/// such calls. (Each of the nine parts that can be awkward is valid with probability
/// 0.95, so a call is valid with probability 0.95^9 = 0.63: about 161 of 256, with a
/// binomial standard deviation of sqrt(256 x 0.63 x 0.37) = 7.7; 128 is more than 4 of
/// them below.) The counts are printed.
#[test]
fn no_input_makes_the_core_panic() {
    let mut runner = TestRunner::new(config(256));
    let (valid, grown) = (Cell::new(0usize), Cell::new(0usize));
    runner
        .run(&call(), |c| {
            let ok = c.valid();
            let grew = run(&c);
            prop_assert!(grew || !ok, "a valid call was refused: {:?}", c);
            valid.set(valid.get() + usize::from(ok));
            grown.set(grown.get() + usize::from(grew));
            Ok(())
        })
        .expect("no panic, and every valid call grows a tree");
    println!(
        "core calls: {} of 256 valid, {} grew a tree",
        valid.get(),
        grown.get()
    );
    assert!(valid.get() >= 128, "{} valid calls of 256", valid.get());
    assert!(grown.get() >= valid.get());
}
