//! Stability, the reason for an ensemble: forests grown with other seeds disagree on
//! few test cases.
use super::{classify, seed, settings, train};
use copse_forest::synth::{self, Synthetic};
use copse_forest::{FeaturesPerSplit, Forest};
use ndarray::Array2;

/// Share of test cases on which two models predict different classes.
fn disagreement(a: &Forest, b: &Forest, x: &Array2<f64>) -> f64 {
    let (pa, pb) = (classify(a, x), classify(b, x));
    pa.iter().zip(&pb).filter(|(u, v)| u != v).count() as f64 / pa.len() as f64
}

fn check_stability(name: &str, gen: &dyn Fn(usize, u64) -> Synthetic) {
    // Breiman 1996 ("Bagging predictors", section 4; common practice): a single tree is
    // unstable under resampling of its training cases, averaging many such trees is
    // not. The single tree here is a forest of one tree with the same settings (its own
    // bootstrap sample and input draws), so the seed changes it as it changes a forest.
    // 3000 test cases make each disagreement share accurate to about 0.01, far below
    // the margin a factor of two leaves when trees disagree on 20-30% of cases.
    let tr = gen(300, seed(61));
    let te = gen(3000, seed(62));
    let forest_a = train(&tr, &settings(100, FeaturesPerSplit::Default, 1)).forest;
    let forest_b = train(&tr, &settings(100, FeaturesPerSplit::Default, 2)).forest;
    let tree_a = train(&tr, &settings(1, FeaturesPerSplit::Default, 1)).forest;
    let tree_b = train(&tr, &settings(1, FeaturesPerSplit::Default, 2)).forest;
    let (f, t) = (
        disagreement(&forest_a, &forest_b, &te.x),
        disagreement(&tree_a, &tree_b, &te.x),
    );
    println!("{name}: forests disagree on {f:.4} of test cases, single trees on {t:.4}");
    assert!(f <= 0.5 * t, "{name}: forest {f} vs tree {t}");
}

#[test]
fn forests_are_stable_across_seeds() {
    check_stability("twonorm", &synth::twonorm);
    check_stability("waveform", &synth::waveform21);
}
