//! Bad input and edge cases: typed errors, never a panic; rows with a missing outcome
//! left out and counted.
use super::{importance_settings, seed, settings, train, train_importance};
use copse_forest::synth::{self, Synthetic};
use copse_forest::{
    FeatureMeta, FeaturesPerSplit, Forest, ForestSettings, Metrics, Outcome, Sampling,
    TrainOptions, MISSING,
};
use ndarray::Array2;

#[test]
fn bad_input_gives_typed_errors() {
    use copse_forest::ErrorKind;
    let d = synth::twonorm(50, seed(131));
    let s = settings(5, FeaturesPerSplit::Default, 1);
    let kind = |x: &Array2<f64>, meta: &[FeatureMeta], o: &Outcome, s: &ForestSettings| {
        Forest::train(x.view(), meta, o, s, &TrainOptions::default())
            .map(|_| ())
            .expect_err("must fail")
            .kind()
    };
    // Outcome length differs from the rows.
    let short = Outcome::Values(vec![1.0; 49]);
    assert_eq!(kind(&d.x, &d.meta, &short, &s), ErrorKind::LengthMismatch);
    // Input descriptions do not match the columns.
    assert_eq!(
        kind(&d.x, &d.meta[..3], &d.outcome, &s),
        ErrorKind::LengthMismatch
    );
    // Every outcome missing.
    let none = Outcome::Classes {
        codes: vec![MISSING; 50],
        labels: vec!["1".into(), "2".into()],
    };
    assert_eq!(kind(&d.x, &d.meta, &none, &s), ErrorKind::NoTargets);
    // An infinite input value.
    let mut inf = d.x.clone();
    inf[[3, 4]] = f64::INFINITY;
    assert_eq!(kind(&inf, &d.meta, &d.outcome, &s), ErrorKind::BadValue);
    // More inputs per split than inputs; zero trees; balanced regression.
    let too_many = settings(5, FeaturesPerSplit::Count(21), 1);
    assert_eq!(
        kind(&d.x, &d.meta, &d.outcome, &too_many),
        ErrorKind::InvalidSetting
    );
    let zero = settings(0, FeaturesPerSplit::Default, 1);
    assert_eq!(
        kind(&d.x, &d.meta, &d.outcome, &zero),
        ErrorKind::InvalidSetting
    );
    let f = synth::friedman1(50, seed(1));
    let bal = ForestSettings {
        balanced: true,
        ..s.clone()
    };
    assert_eq!(
        kind(&f.x, &f.meta, &f.outcome, &bal),
        ErrorKind::InvalidSetting
    );
    // An outcome of the wrong kind for the model.
    let t = train(&d, &s);
    let e = t
        .forest
        .evaluate(d.x.view(), &Outcome::Values(vec![0.0; 50]))
        .expect_err("classes expected");
    assert_eq!(e.kind(), ErrorKind::OutcomeMismatch);
    let e = t
        .forest
        .permutation_importance(d.x.view(), &d.outcome, 0, 1)
        .expect_err("repeats 0");
    assert_eq!(e.kind(), ErrorKind::InvalidSetting);
}

#[test]
fn rows_with_missing_outcome_are_left_out_and_counted() {
    // Rows with no outcome are never drawn, so every tree leaves them out: they get an
    // out-of-bag prediction from all trees but count in no measure.
    let d = synth::friedman1(200, seed(141));
    let Outcome::Values(mut y) = d.outcome.clone() else {
        panic!("values")
    };
    for v in y.iter_mut().step_by(10) {
        *v = f64::NAN;
    }
    let partial = Synthetic {
        outcome: Outcome::Values(y),
        ..d
    };
    let s = ForestSettings {
        sampling: Sampling::Subsample(0.5),
        ..importance_settings(40, 142)
    };
    let t = train_importance(&partial, &s);
    let o = t.forest.oob();
    assert_eq!(o.rows_missing_outcome, 20);
    assert_eq!(o.rows_labelled, 180);
    assert_eq!(t.oob.trees_out[0], 40);
    assert!(!t.oob.predictions[[0, 0]].is_nan());
    // Half-samples leave each labelled row out of about 20 of 40 trees: every row is
    // out of bag at least once (chance of never: 2^-40 per row).
    assert_eq!(o.rows_never_oob, 0);
    assert_eq!(o.metrics.as_ref().expect("measured").rows(), 180);
    assert!(t.forest.oob_importance().is_some());
    // Held-out importance and evaluation on fresh data work for regression too.
    let fresh = synth::friedman1(300, seed(143));
    let imp = t
        .forest
        .permutation_importance(fresh.x.view(), &fresh.outcome, 4, seed(9))
        .expect("importance");
    assert!(imp.brier.is_none());
    assert_eq!(imp.error.replicates, 4);
    assert_eq!(imp.error.ranked()[0].rank, 1);
    let ev = t
        .forest
        .evaluate(fresh.x.view(), &fresh.outcome)
        .expect("evaluates");
    let Metrics::Values(m) = ev.metrics else {
        panic!("values")
    };
    println!(
        "friedman1 half-samples: fresh-case MSE {:.3}, MAE {:.3}",
        m.mse, m.mae
    );
    assert!(m.r_squared.expect("y varies") > 0.5);
}
