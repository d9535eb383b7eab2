//! Out-of-bag estimates: honest against a large test set, and rows never out of bag
//! reported as such.
use super::{oob_error, seed, settings, test_error, train};
use copse_forest::synth;
use copse_forest::{FeaturesPerSplit, ForestSettings, Sampling};

#[test]
fn oob_error_is_honest_on_twonorm() {
    // Breiman 2001, section 3.1 (memory): the OOB estimate is about as accurate as a
    // test set of the training set's size. With 2000 training cases and an error near
    // 0.035, the OOB estimate's sd is about sqrt(0.035 * 0.965 / 2000) = 0.004 and the
    // 5000-case test error's 0.0026, so their difference has sd about 0.005: 2 points
    // is 4 sd.
    let tr = synth::twonorm(2000, seed(11));
    let te = synth::twonorm(5000, seed(12));
    let t = train(&tr, &settings(200, FeaturesPerSplit::Default, 13));
    let (oob, test) = (oob_error(&t), test_error(&t.forest, &te));
    println!("twonorm n=2000: OOB error {oob:.4}, fresh-case error {test:.4}");
    assert!((oob - test).abs() <= 0.02, "OOB {oob} vs test {test}");
    // The error curve ends at the final OOB error (same rows, same trees).
    let curve = &t.forest.oob().error_curve;
    assert_eq!(curve.len(), 200);
    assert_eq!(curve[199], Some(oob));
    assert_eq!(t.forest.oob().rows_never_oob, 0);
}

#[test]
fn one_tree_reports_rows_never_out_of_bag() {
    // A bootstrap sample of n leaves out (1 - 1/n)^n of the cases, tending to e^-1 =
    // 0.368 (Breiman 1996, "Out-of-bag estimation"); with one tree the other 63.2% are
    // never out of bag. The share is a mean of 500 weakly dependent indicators with sd
    // about sqrt(0.368 * 0.632 / 500) = 0.022, so 4 sd = 0.09.
    let d = synth::twonorm(500, seed(21));
    let t = train(&d, &settings(1, FeaturesPerSplit::Default, 22));
    let s = t.forest.oob();
    let never = s.rows_never_oob as f64 / 500.0;
    println!(
        "one tree: {} of 500 rows never out of bag",
        s.rows_never_oob
    );
    assert!((never - 0.632).abs() < 0.09, "{never}");
    let m = s
        .metrics
        .as_ref()
        .expect("the out-of-bag rows are measured");
    assert_eq!(m.rows(), 500 - s.rows_never_oob);
    for (i, row) in t.oob.predictions.rows().into_iter().enumerate() {
        assert_eq!(row.iter().all(|v| v.is_nan()), t.oob.trees_out[i] == 0);
    }

    // With no resampling, no row is ever out of bag: reported, not a crash.
    let s = ForestSettings {
        sampling: Sampling::Whole,
        ..settings(3, FeaturesPerSplit::Default, 1)
    };
    let t = train(&d, &s);
    assert!(t.forest.oob().metrics.is_none());
    assert_eq!(t.forest.oob().rows_never_oob, 500);
    assert!(t.forest.oob().error_curve.iter().all(Option::is_none));
}
