//! Published results: the Table 2 protocol of Breiman 2001, "Random Forests", Machine
//! Learning 45:5-32 (forest and single-tree errors on synthetic problems), and
//! Breiman 1996, "Bagging predictors", Machine Learning 24:123-140.
use super::{oob_error, seed, settings, single_tree, test_error, train};
use copse_forest::synth::{self, Synthetic};
use copse_forest::FeaturesPerSplit;

/// Seeds averaged per problem. One draw of 3000 test cases has a sampling sd of about
/// sqrt(0.17 * 0.83 / 3000) = 0.007 at waveform's error, but the training draw of 300
/// cases moves a forest's error by more than that, so five training sets are averaged.
const SEEDS: u64 = 5;

/// Table 2 protocol (Breiman 2001, section 5): 300 training and 3000 test cases, 100
/// trees, inputs per split F = 1 and F = int(log2 M + 1), keeping whichever has the
/// lower out-of-bag error. Returns (forest error, single tree error), averaged.
fn table2(gen: &dyn Fn(usize, u64) -> Synthetic) -> (f64, f64) {
    let (mut forest, mut tree) = (0.0, 0.0);
    for s in 0..SEEDS {
        let train_set = gen(300, seed(1000 + s));
        let test_set = gen(3000, seed(2000 + s));
        let m = train_set.x.ncols() as f64;
        let f_log = (m.log2() + 1.0).floor() as usize;
        let a = train(
            &train_set,
            &settings(100, FeaturesPerSplit::Count(1), 3000 + s),
        );
        let b = train(
            &train_set,
            &settings(100, FeaturesPerSplit::Count(f_log), 3000 + s),
        );
        let best = if oob_error(&a) <= oob_error(&b) { a } else { b };
        forest += test_error(&best.forest, &test_set);
        tree += test_error(&single_tree(&train_set), &test_set);
    }
    (forest / SEEDS as f64, tree / SEEDS as f64)
}

/// Lower bound for an error whose true value cannot be below `bayes`: the average of
/// `SEEDS` test sets of 3000 cases has sampling sd sqrt(b(1-b) / (3000 * SEEDS)); three
/// sd below the Bayes error is the tolerance.
fn bayes_floor(bayes: f64) -> f64 {
    bayes - 3.0 * (bayes * (1.0 - bayes) / (3000.0 * SEEDS as f64)).sqrt()
}

/// Asserts the Table 2 checks for one problem. `published` is the forest figure of
/// Table 2 (memory, so 2.5 points of slack as the issue asks); the single tree must
/// err at least 1.4 times as often as the forest (the published one-tree figures of
/// the same table are about twice the forest's on waveform and threenorm, the closest
/// pairs; memory).
fn check_table2(name: &str, gen: &dyn Fn(usize, u64) -> Synthetic, bayes: f64, published: f64) {
    let (forest, tree) = table2(gen);
    println!(
        "{name}: forest test error {forest:.4}, one tree {tree:.4} (Bayes {bayes}, \
         published forest {published})"
    );
    assert!(
        forest >= bayes_floor(bayes),
        "{name}: forest error {forest} is below the Bayes error {bayes}: the test is leaking"
    );
    assert!(
        forest <= published + 0.025,
        "{name}: forest error {forest} is above the published {published} + 0.025"
    );
    assert!(
        tree >= 1.4 * forest,
        "{name}: one tree {tree} is not 1.4 times the forest's {forest}"
    );
}

#[test]
fn table2_twonorm() {
    // Bayes error Phi(-2) = 0.02275 (computed); forest 3.9% (Breiman 2001 Table 2, memory).
    check_table2("twonorm", &synth::twonorm, 0.02275, 0.039);
}

#[test]
fn table2_threenorm() {
    // Bayes error 0.105 (published; Monte Carlo 0.1046); forest 17.5% (Table 2, memory).
    check_table2("threenorm", &synth::threenorm, 0.1046, 0.175);
}

#[test]
fn table2_ringnorm() {
    // Published accounts of the generator differ on a (Breiman 1996, "Bias, variance and
    // arcing classifiers", and later restatements): both are checked against the
    // published forest figure 4.9% (Table 2, memory). Bayes errors 0.0124 (a = 2/sqrt 20)
    // and 0.0150 (a = 1/sqrt 20) by Monte Carlo with 4e7 draws.
    check_table2(
        "ringnorm a=2/sqrt(20)",
        &|n, s| synth::ringnorm(n, synth::NORM_A, s),
        0.0124,
        0.049,
    );
    check_table2(
        "ringnorm a=1/sqrt(20)",
        &|n, s| synth::ringnorm(n, synth::NORM_A / 2.0, s),
        0.0150,
        0.049,
    );
}

#[test]
fn table2_waveform() {
    // Bayes error about 0.14 (CART p. 55: 86% Bayes accuracy; 13.3% computed with these
    // base waves, the lower is used); forest 17.2% (Table 2, memory).
    check_table2("waveform", &synth::waveform21, 0.133, 0.172);
}

#[test]
fn bagging_beats_one_tree_on_waveform() {
    // Table 2 of the paper (memory): waveform, one tree 29.1%, 50 bagged trees 19.3%, a
    // drop of 9.8 points. "Clearly" is taken as at least half that drop, 5 points: the
    // difference of two averages over the same 5 x 3000 test cases has sd below
    // sqrt(2 * 0.25 * 0.75 / 15000) = 0.005 from test sampling, so 5 points is far
    // outside test noise. Bagged trees must also be within 2.5 points of the published
    // 19.3% (memory).
    let (mut bag, mut one) = (0.0, 0.0);
    for s in 0..SEEDS {
        let tr = synth::waveform21(300, seed(1000 + s));
        let te = synth::waveform21(3000, seed(2000 + s));
        let f = train(&tr, &settings(50, FeaturesPerSplit::Every, 50 + s));
        bag += test_error(&f.forest, &te);
        one += test_error(&single_tree(&tr), &te);
    }
    let (bag, one) = (bag / SEEDS as f64, one / SEEDS as f64);
    println!("waveform: 50 bagged trees {bag:.4}, one tree {one:.4}");
    assert!(bag <= one - 0.05, "bagged {bag} vs one tree {one}");
    assert!(bag <= 0.193 + 0.025, "bagged {bag} vs published 0.193");
}
