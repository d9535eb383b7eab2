//! Checks of the forest engine against published results, facts about the estimates,
//! and open data sets. Each check names its source beside it; values recalled from
//! memory carry wider tolerances, and every statistical tolerance is derived from
//! sampling error in a comment. Figures are printed (run with `--nocapture`).
use copse_forest::synth::{self, Synthetic};
use copse_forest::{
    predicted_class, FeatureMeta, FeaturesPerSplit, Forest, ForestSettings, ImportanceMeasure,
    Metrics, Outcome, Sampling, TrainOptions, Trained, MISSING,
};
use ndarray::{Array2, Axis, ShapeBuilder};

mod support;
use support::seed;

// ---------------------------------------------------------------------------------
// Helpers
// ---------------------------------------------------------------------------------

/// Forest settings; `base` is moved by the test seed offset (`support::seed`).
fn settings(trees: usize, k: FeaturesPerSplit, base: u64) -> ForestSettings {
    ForestSettings {
        trees,
        features_per_split: k,
        seed: seed(base),
        ..Default::default()
    }
}

/// `settings` with the default inputs per split (for [`train_importance`]).
fn importance_settings(trees: usize, seed: u64) -> ForestSettings {
    settings(trees, FeaturesPerSplit::Default, seed)
}

/// Trains without out-of-bag importance.
fn train(d: &Synthetic, s: &ForestSettings) -> Trained {
    let options = TrainOptions {
        oob_importance: false,
        ..TrainOptions::default()
    };
    Forest::train(d.x.view(), &d.meta, &d.outcome, s, &options).expect("training succeeds")
}

/// Trains with out-of-bag importance measured.
fn train_importance(d: &Synthetic, s: &ForestSettings) -> Trained {
    Forest::train(d.x.view(), &d.meta, &d.outcome, s, &TrainOptions::default())
        .expect("training succeeds")
}

fn codes(o: &Outcome) -> &[u32] {
    match o {
        Outcome::Classes { codes, .. } => codes,
        Outcome::Values(_) => panic!("class outcome expected"),
    }
}

/// Predicted class of every row.
fn classify(f: &Forest, x: &Array2<f64>) -> Vec<usize> {
    let p = f.predict(x.view()).expect("prediction succeeds");
    p.rows()
        .into_iter()
        .map(|r| predicted_class(&r.to_vec()))
        .collect()
}

/// Misclassification rate of `f` on a labelled set.
fn test_error(f: &Forest, d: &Synthetic) -> f64 {
    let hat = classify(f, &d.x);
    let y = codes(&d.outcome);
    hat.iter()
        .zip(y)
        .filter(|(h, &c)| **h != c as usize)
        .count() as f64
        / y.len() as f64
}

fn oob_error(t: &Trained) -> f64 {
    t.forest
        .oob()
        .metrics
        .as_ref()
        .expect("some rows were out of bag")
        .error()
}

/// One CART-style tree grown on every case with every input (a "forest" of one tree
/// with no resampling and no input sampling is exactly that).
fn single_tree(d: &Synthetic) -> Forest {
    let s = ForestSettings {
        trees: 1,
        features_per_split: FeaturesPerSplit::Every,
        sampling: Sampling::Whole,
        ..Default::default()
    };
    train(d, &s).forest
}

// ---------------------------------------------------------------------------------
// Breiman 2001, "Random Forests", Machine Learning 45:5-32, Table 2 protocol
// ---------------------------------------------------------------------------------

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

// ---------------------------------------------------------------------------------
// Breiman 1996, "Bagging predictors", Machine Learning 24:123-140
// ---------------------------------------------------------------------------------

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

// ---------------------------------------------------------------------------------
// Out-of-bag estimates
// ---------------------------------------------------------------------------------

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

// ---------------------------------------------------------------------------------
// Importance
// ---------------------------------------------------------------------------------

#[test]
fn friedman1_importance_finds_the_five_real_inputs() {
    // Friedman (1991): y depends on x1..x5 only. Breiman 1996 "Bagging predictors" uses
    // 200 training cases; 300 here. Every real input must rank above every noise input
    // in out-of-bag permutation importance (MSE increase).
    let d = synth::friedman1(300, seed(31));
    let s = importance_settings(200, 32);
    let t = train_importance(&d, &s);
    let imp = &t
        .forest
        .oob_importance()
        .expect("importance was requested")
        .error;
    assert_eq!(imp.measure, ImportanceMeasure::MeanSquaredError);
    for f in imp.ranked() {
        println!(
            "friedman1 {}: {:.3} ± {:.3}",
            f.name,
            f.mean,
            f.std_error.unwrap_or(f64::NAN)
        );
    }
    let lowest_real = imp.features[..5]
        .iter()
        .map(|f| f.mean)
        .fold(f64::INFINITY, f64::min);
    let highest_noise = imp.features[5..]
        .iter()
        .map(|f| f.mean)
        .fold(f64::NEG_INFINITY, f64::max);
    assert!(
        lowest_real > highest_noise,
        "{lowest_real} vs {highest_noise}"
    );
    assert!(imp.features[..5].iter().all(|f| f.rank <= 5));
    let ve = match t.forest.oob().metrics.as_ref().expect("measured") {
        Metrics::Values(v) => v.r_squared.expect("y varies"),
        Metrics::Classes(_) => panic!("regression"),
    };
    println!("friedman1: OOB R² {ve:.3}");
}

/// Over `reps` data sets drawn by `gen(seed)`, each input's OOB permutation importance
/// (misclassification) and impurity-decrease importance from a forest of `trees`:
/// returns per input (mean over data sets, standard error over data sets) for
/// permutation, the mean impurity importance, and the mean OOB error.
///
/// Why replicate data sets: an importance's own standard error (sd over trees /
/// sqrt(trees)) measures how much the trees of one forest vary, given its training
/// set. A noise input that happens to be associated with the outcome in that training
/// set is important to most of its trees, so the per-tree standard error does not
/// cover the variation from drawing another training set. Independent data sets do.
struct Replicated {
    perm: Vec<(f64, f64)>,
    impurity: Vec<f64>,
    oob_error: f64,
}

fn replicated_importance(gen: &dyn Fn(u64) -> Synthetic, reps: u64, trees: usize) -> Replicated {
    let mut per_set: Vec<Vec<f64>> = Vec::new();
    let mut impurity: Vec<f64> = Vec::new();
    let mut oob = 0.0;
    for r in 0..reps {
        let d = gen(seed(5000 + r));
        let s = importance_settings(trees, 6000 + r);
        let t = train_importance(&d, &s);
        let imp = &t.forest.oob_importance().expect("requested").error;
        per_set.push(imp.features.iter().map(|f| f.mean).collect());
        let dec = &t.forest.impurity_importance().features;
        impurity.resize(dec.len(), 0.0);
        impurity
            .iter_mut()
            .zip(dec)
            .for_each(|(a, f)| *a += f.mean / reps as f64);
        oob += oob_error(&t) / reps as f64;
    }
    let m = reps as f64;
    let perm = (0..per_set[0].len())
        .map(|j| {
            let mean = per_set.iter().map(|v| v[j]).sum::<f64>() / m;
            let var = per_set.iter().map(|v| (v[j] - mean).powi(2)).sum::<f64>() / (m - 1.0);
            (mean, (var / m).sqrt())
        })
        .collect();
    Replicated {
        perm,
        impurity,
        oob_error: oob,
    }
}

#[test]
fn waveform40_importance_ignores_the_noise_inputs() {
    // Breiman 2001, section 10 (memory): on waveform with 19 added noise inputs the
    // permutation importance singles out the waveform inputs. Inputs 1 and 21 are
    // zero in all three base waves (CART p. 49), so they are noise too; the top ten
    // must all be among the first 21.
    let d = synth::waveform40(600, seed(41));
    let s = importance_settings(200, 42);
    let t = train_importance(&d, &s);
    let imp = &t.forest.oob_importance().expect("requested").error;
    let top: Vec<usize> = imp.ranked().iter().take(10).map(|f| f.feature).collect();
    println!("waveform-40 top ten inputs (0-based): {top:?}");
    assert!(top.iter().all(|&j| j < 21), "{top:?}");
    let z = imp.features[21..]
        .iter()
        .map(|f| f.mean / f.std_error.expect("200 trees"))
        .fold(f64::NEG_INFINITY, f64::max);
    println!("waveform-40 one training set: largest noise z (per-tree SE) {z:.2}");

    // No noise input more than 3 standard errors above 0, with the standard error taken
    // over 20 independent training sets of 300 cases (see `replicated_importance`).
    // With 19 degrees of freedom, P(t > 3) = 0.0037 per input; 19 inputs give about a
    // 7% chance of a false alarm for a correct forest, a risk taken once since the
    // seeds are fixed. The per-tree standard error of the single training set above is
    // printed for comparison: it is far narrower (see `replicated_importance`).
    let rep = replicated_importance(&|s| synth::waveform40(300, s), 20, 100);
    for (j, (mean, se)) in rep.perm.iter().enumerate().skip(21) {
        println!("  noise x{}: {mean:+.5} ± {se:.5}", j + 1);
        assert!(*mean <= 3.0 * se, "noise input x{}: {mean} ± {se}", j + 1);
    }
    let worst_signal = rep.perm[1..20]
        .iter()
        .map(|p| p.0)
        .fold(f64::INFINITY, f64::min);
    println!("  weakest waveform input x2..x20: {worst_signal:+.5}");
}

/// Strobl et al. (2007) null case: X1 ~ N(0,1) and X2..X5 categorical, uniform on 2, 4,
/// 10 and 20 categories, Y ~ Bernoulli(1/2) independent of all (memory: n = 120).
fn strobl_null(n: usize, seed: u64) -> Synthetic {
    use rand::{RngExt, SeedableRng};
    let mut rng = rand_xoshiro::Xoshiro256PlusPlus::seed_from_u64(seed);
    let levels = [2usize, 4, 10, 20];
    let mut x = Array2::zeros((n, 5));
    let mut y = Vec::with_capacity(n);
    for i in 0..n {
        x[[i, 0]] = rng.sample::<f64, _>(rand_distr::StandardNormal);
        for (j, &l) in levels.iter().enumerate() {
            x[[i, j + 1]] = rng.random_range(0..l) as f64;
        }
        y.push(rng.random_range(0..2u32));
    }
    let mut meta = vec![FeatureMeta::numeric("x1")];
    for (j, &l) in levels.iter().enumerate() {
        meta.push(FeatureMeta::categorical(
            format!("x{}", j + 2),
            (0..l).map(|c| format!("c{c}")).collect(),
        ));
    }
    Synthetic {
        x,
        meta,
        outcome: Outcome::Classes {
            codes: y,
            labels: vec!["a".into(), "b".into()],
        },
    }
}

#[test]
fn strobl_null_case_permutation_importance_is_noise() {
    // Strobl, Boulesteix, Zeileis & Hothorn (2007), BMC Bioinformatics 8:25: with Y
    // independent of every input, impurity-decrease importance grows with the number
    // of values or categories, while permutation importance shows no such preference.
    // Repeated over 20 independent null data sets of 120 cases (their design, memory),
    // so the standard errors cover data-set variation (see `replicated_importance`).
    let rep = replicated_importance(&|s| strobl_null(120, s), 20, 100);
    println!("Strobl null case, 20 data sets (input: permutation mean ± se | impurity):");
    for (j, ((m, se), imp)) in rep.perm.iter().zip(&rep.impurity).enumerate() {
        println!("  x{}: {m:+.4} ± {se:.4} | {imp:.4}", j + 1);
    }
    println!("  mean OOB error on pure noise: {:.3}", rep.oob_error);
    println!(
        "  caution shown with impurity importance: {}",
        copse_forest::IMPURITY_CAUTION
    );

    // Permutation importance: every input within 3 standard errors of 0 (t with 19
    // df, two-sided 0.54% per input, 2.7% for the five), and none preferred for having
    // more values (each within 3 standard errors of the five inputs' common mean).
    // Within one data set the importances can sit several per-tree standard errors
    // away from 0 (a first version of this check saw -0.011 ± 0.004 on one draw, whose
    // OOB error was 0.60 by chance); hence the replication.
    let common = rep.perm.iter().map(|p| p.0).sum::<f64>() / 5.0;
    for (j, (m, se)) in rep.perm.iter().enumerate() {
        assert!(m.abs() <= 3.0 * se, "x{}: {m} ± {se}", j + 1);
        assert!(
            (m - common).abs() <= 3.0 * se,
            "x{}: {m} vs common {common} ± {se}",
            j + 1
        );
    }

    // Impurity importance: the published bias, reported and checked rather than
    // hidden. More categories collect more impurity decrease (x2..x5 have 2, 4, 10 and
    // 20), and the continuous x1 collects more than the two-category x2.
    let imp = &rep.impurity;
    assert!(
        imp[1] < imp[2] && imp[2] < imp[3] && imp[3] < imp[4],
        "{imp:?}"
    );
    assert!(imp[0] > imp[1], "{imp:?}");
}

// ---------------------------------------------------------------------------------
// Stability: the reason for an ensemble
// ---------------------------------------------------------------------------------

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

// ---------------------------------------------------------------------------------
// Open data sets
// ---------------------------------------------------------------------------------

/// Reads `tests/data/<name>` (see `support::read_data_set`) with `target` as the
/// outcome, `NA` missing.
fn read_csv(name: &str, target: &str) -> Synthetic {
    let d = support::read_data_set(name, target);
    let outcome = Outcome::from_labels(d.target.iter().map(|c| (c != "NA").then_some(c.as_str())));
    Synthetic {
        x: d.x,
        meta: d.meta,
        outcome,
    }
}

#[test]
fn iris_oob_error() {
    // iris (Fisher 1936; tests/data/iris.csv): random forests' OOB error is commonly
    // 4-6% (common practice, memory); the range [2%, 8%] allows for that memory and
    // for the sampling sd of an error rate on 150 cases (about 0.017).
    let d = read_csv("iris.csv", "species");
    let t = train(&d, &settings(500, FeaturesPerSplit::Default, 71));
    let e = oob_error(&t);
    println!("iris: OOB error {e:.4}");
    assert!((0.02..=0.08).contains(&e), "{e}");
}

#[test]
fn penguins_oob_error_with_missing_values_kept() {
    // Palmer penguins (Gorman, Williams & Fraser 2014; Horst, Hill & Gorman 2020;
    // tests/data/penguins.csv), all 344 rows kept, NA as missing, island and sex
    // categorical: species is nearly separable from bill and flipper measurements;
    // forests reach about 1-2% OOB error (memory), so at most 4%.
    let d = read_csv("penguins.csv", "species");
    assert_eq!(d.x.nrows(), 344);
    assert!(d.x.iter().any(|v| v.is_nan()));
    let t = train(&d, &settings(500, FeaturesPerSplit::Default, 81));
    let e = oob_error(&t);
    println!("penguins: OOB error {e:.4}");
    assert!(e <= 0.04, "{e}");
    assert_eq!(t.forest.oob().rows_missing_outcome, 0);
}

// ---------------------------------------------------------------------------------
// Determinism and order
// ---------------------------------------------------------------------------------

fn encode(f: &Forest) -> Vec<u8> {
    bincode::serde::encode_to_vec(f, bincode::config::standard()).expect("model encodes")
}

fn with_threads<T: Send>(threads: usize, job: impl FnOnce() -> T + Send) -> T {
    rayon::ThreadPoolBuilder::new()
        .num_threads(threads)
        .build()
        .expect("thread pool")
        .install(job)
}

#[test]
fn same_model_for_any_thread_count() {
    // The model's randomness comes only from per-tree generators seeded by (seed, tree
    // index) and results are combined in tree order (issue 3), so serialized bytes,
    // out-of-bag predictions and held-out importance must match exactly.
    let classes = read_csv("penguins.csv", "species");
    let values = synth::friedman1(400, seed(91));
    for d in [&classes, &values] {
        let s = importance_settings(60, 92);
        let runs: Vec<(Vec<u8>, Vec<u64>, Vec<u64>)> = [1, 2, 4]
            .iter()
            .map(|&n| {
                with_threads(n, || {
                    let t = train_importance(d, &s);
                    let imp = t
                        .forest
                        .permutation_importance(d.x.view(), &d.outcome, 3, seed(5))
                        .expect("importance");
                    let imp_bits = imp
                        .error
                        .features
                        .iter()
                        .map(|f| f.mean.to_bits())
                        .collect();
                    let oob_bits = t.oob.predictions.iter().map(|v| v.to_bits()).collect();
                    (encode(&t.forest), oob_bits, imp_bits)
                })
            })
            .collect();
        assert!(runs[0].0.len() > 1000);
        assert_eq!(runs[0], runs[1], "1 vs 2 threads");
        assert_eq!(runs[0], runs[2], "1 vs 4 threads");
        // And a different seed gives a different model.
        let other = train(
            d,
            &ForestSettings {
                seed: seed(93),
                ..s.clone()
            },
        );
        assert_ne!(encode(&other.forest), runs[0].0);
    }
}

#[test]
fn predictions_follow_input_order_and_round_trip() {
    let d = synth::waveform21(700, seed(101));
    let t = train(&d, &settings(30, FeaturesPerSplit::Default, 102));
    let p = t.forest.predict(d.x.view()).expect("predicts");
    // Reversed input gives reversed output (rows are independent).
    let mut rev = d.x.clone();
    rev.invert_axis(Axis(0));
    let mut q = t.forest.predict(rev.view()).expect("predicts");
    q.invert_axis(Axis(0));
    assert_eq!(p, q);
    // A column-major copy predicts the same.
    let fortran = Array2::from_shape_vec(d.x.raw_dim().f(), d.x.t().iter().copied().collect())
        .expect("shape");
    assert_eq!(fortran, d.x);
    assert_eq!(t.forest.predict(fortran.view()).expect("predicts"), p);
    // Probabilities sum to 1.
    for r in p.rows() {
        assert!((r.sum() - 1.0).abs() < 1e-9);
    }
    // A decoded model predicts the same.
    let bytes = encode(&t.forest);
    let (back, _): (Forest, usize) =
        bincode::serde::decode_from_slice(&bytes, bincode::config::standard()).expect("decodes");
    back.check().expect("consistent");
    assert_eq!(back, t.forest);
    assert_eq!(back.predict(d.x.view()).expect("predicts"), p);
}

#[test]
fn evaluation_matches_classes_by_label_and_refuses_strangers() {
    let d = synth::twonorm(400, seed(111));
    let t = train(&d, &settings(40, FeaturesPerSplit::Default, 112));
    let direct = t
        .forest
        .evaluate(d.x.view(), &d.outcome)
        .expect("evaluates");
    // The same outcome with labels listed in the other order and codes swapped.
    let swapped = Outcome::Classes {
        codes: codes(&d.outcome).iter().map(|&c| 1 - c).collect(),
        labels: vec!["2".into(), "1".into()],
    };
    let again = t.forest.evaluate(d.x.view(), &swapped).expect("evaluates");
    assert_eq!(direct, again);
    let Metrics::Classes(m) = &direct.metrics else {
        panic!("classes")
    };
    assert_eq!(m.confusion.iter().flatten().sum::<u64>(), 400);
    assert!(m.roc_auc.expect("two classes") > 0.9);
    // A class the model never saw is named.
    let mut strange = codes(&d.outcome).to_vec();
    strange[5] = 2;
    let e = t
        .forest
        .evaluate(
            d.x.view(),
            &Outcome::Classes {
                codes: strange,
                labels: vec!["1".into(), "2".into(), "3".into()],
            },
        )
        .expect_err("unknown class");
    assert!(e.message().contains("'3'"), "{e}");
    // Wrong number of columns is an error, not a panic.
    let narrow = d.x.select(Axis(1), &[0, 1, 2, 3, 4]);
    assert!(t.forest.predict(narrow.view()).is_err());
    // Missing outcomes are skipped and counted.
    let mut some_missing = codes(&d.outcome).to_vec();
    some_missing[0] = MISSING;
    let ev = t
        .forest
        .evaluate(
            d.x.view(),
            &Outcome::Classes {
                codes: some_missing,
                labels: vec!["1".into(), "2".into()],
            },
        )
        .expect("evaluates");
    assert_eq!(ev.rows_missing_outcome, 1);
    assert_eq!(ev.metrics.rows(), 399);
}

#[test]
fn balanced_sampling_lowers_the_minority_class_wrong_share() {
    // Chen, Liaw & Breiman (2004), "Using random forest to learn imbalanced data":
    // drawing the same number of cases from each class trades majority-class error
    // for a lower minority-class error. Twonorm with about 1 case in 10 from class 2;
    // 3000 test cases hold about 300 of class 2, so its error is known to about
    // sqrt(0.25 / 300) = 0.03 at worst; the two forests are compared on the same cases.
    let keep = |d: Synthetic, seed: u64| -> Synthetic {
        use rand::{RngExt, SeedableRng};
        let mut rng = rand_xoshiro::Xoshiro256PlusPlus::seed_from_u64(seed);
        let c = codes(&d.outcome).to_vec();
        let rows: Vec<usize> = (0..c.len())
            .filter(|&i| c[i] == 0 || rng.random_bool(1.0 / 9.0))
            .collect();
        Synthetic {
            x: d.x.select(Axis(0), &rows),
            meta: d.meta,
            outcome: Outcome::Classes {
                codes: rows.iter().map(|&i| c[i]).collect(),
                labels: vec!["1".into(), "2".into()],
            },
        }
    };
    let tr = keep(synth::twonorm(600, seed(121)), seed(122));
    let te = keep(synth::twonorm(6000, seed(123)), seed(124));
    let plain = train(&tr, &settings(200, FeaturesPerSplit::Default, 125)).forest;
    let balanced = train(
        &tr,
        &ForestSettings {
            balanced: true,
            ..settings(200, FeaturesPerSplit::Default, 125)
        },
    )
    .forest;
    // The balanced forest's probabilities are shifted back to the training class
    // shares (Saerens, Latinne & Decaestecker 2002), so its class-2 probabilities
    // average like the plain forest's (unshifted, balanced trees would average near
    // 0.5 on class 2's share of cases, over 0.3 here): within 0.02, against a spread
    // of the mean over 3000 cases of about 0.005.
    let share2 = |o: &Outcome| {
        let c = codes(o);
        c.iter().filter(|&&k| k == 1).count() as f64 / c.len() as f64
    };
    let probs = balanced.predict(te.x.view()).expect("scores");
    let mean2 = probs.column(1).mean().expect("rows");
    let plain2 = plain
        .predict(te.x.view())
        .expect("scores")
        .column(1)
        .mean()
        .expect("rows");
    println!("class-2 mean: balanced {mean2:.4}, plain {plain2:.4}");
    assert!(
        (mean2 - plain2).abs() < 0.02,
        "balanced {mean2}, plain {plain2}"
    );
    // Chen et al.'s trade shows at the balanced forest's own operating point: calling
    // class 2 when its shifted probability reaches its training share (where the
    // balanced trees' unshifted vote is even) misses fewer class-2 cases than the plain
    // forest's most probable class.
    let prior2 = share2(&tr.outcome);
    let c = codes(&te.outcome);
    let twos: Vec<usize> = (0..c.len()).filter(|&i| c[i] == 1).collect();
    let b = twos.iter().filter(|&&i| probs[[i, 1]] < prior2).count() as f64 / twos.len() as f64;
    let p = match plain
        .evaluate(te.x.view(), &te.outcome)
        .expect("evaluates")
        .metrics
    {
        Metrics::Classes(m) => m.wrong_share_by_class[1].expect("class 2 present"),
        Metrics::Values(_) => panic!("classes"),
    };
    println!("imbalanced twonorm: class-2 error plain {p:.4}, balanced at its share {b:.4}");
    assert!(b < p, "balanced {b} vs plain {p}");
}

// ---------------------------------------------------------------------------------
// Bad input and edge cases: typed errors, never a panic
// ---------------------------------------------------------------------------------

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
