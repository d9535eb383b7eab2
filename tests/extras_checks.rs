//! Checks of the forest extras: importance p-values (mirrored-null and
//! response-permutation tests) and the stability report (standard errors of
//! predictions are checked in `tests/jackknife_checks.rs`). Each check names its
//! source beside it; values recalled from memory carry wider tolerances, and each
//! statistical tolerance is derived from sampling error in a comment. Figures are
//! printed (run with `--nocapture`). Seeds move with `COPSE_TEST_SEED_OFFSET`
//! (`support::seed`).
use copse_forest::synth::{self, Synthetic};
use copse_forest::{
    holdout_importance, mirrored_null_test, response_permutation_test, stability_report, ErrorKind,
    FeatureMeta, Forest, ForestSettings, ModelKind, Outcome, StabilitySettings, TrainOptions,
    TreeRules,
};
use ndarray::Array2;
use rand::{RngExt, SeedableRng};
use rand_xoshiro::Xoshiro256PlusPlus;

mod support;
use support::seed;

// ---------------------------------------------------------------------------------
// Helpers
// ---------------------------------------------------------------------------------

fn with_threads<T: Send>(threads: usize, job: impl FnOnce() -> T + Send) -> T {
    rayon::ThreadPoolBuilder::new()
        .num_threads(threads)
        .build()
        .expect("thread pool")
        .install(job)
}

/// Regression forest settings with leaves of at least 5 cases (the usual leaf size for
/// regression forests: common practice), which also keeps the tests fast.
/// `base` is moved by the test seed offset (`support::seed`).
fn regression_settings(trees: usize, base: u64) -> ForestSettings {
    ForestSettings {
        trees,
        seed: seed(base),
        tree: TreeRules {
            min_leaf: 5.0,
            ..Default::default()
        },
        ..Default::default()
    }
}

/// `n` rows of `p` inputs uniform on [0, 1] and an outcome independent of all of them:
/// two equally likely classes, or a uniform value. `base` is moved by the test seed
/// offset.
fn pure_noise(n: usize, p: usize, classes: bool, base: u64) -> Synthetic {
    let mut rng = Xoshiro256PlusPlus::seed_from_u64(seed(base));
    let x = Array2::from_shape_fn((n, p), |_| rng.random::<f64>());
    let meta = (1..=p)
        .map(|j| FeatureMeta::numeric(format!("z{j}")))
        .collect();
    let outcome = if classes {
        Outcome::Classes {
            codes: (0..n).map(|_| rng.random_range(0..2u32)).collect(),
            labels: vec!["a".into(), "b".into()],
        }
    } else {
        Outcome::Values((0..n).map(|_| rng.random::<f64>()).collect())
    };
    Synthetic { x, meta, outcome }
}

fn mean(v: &[f64]) -> f64 {
    v.iter().sum::<f64>() / v.len() as f64
}

fn sample_var(v: &[f64]) -> f64 {
    let m = mean(v);
    v.iter().map(|x| (x - m) * (x - m)).sum::<f64>() / (v.len() - 1) as f64
}

// ---------------------------------------------------------------------------------
// Importance p-values: Janitza, Celik & Boulesteix (2018); Altmann et al. (2010)
// ---------------------------------------------------------------------------------

/// Levels at which the share of null p-values is compared with the level itself.
const LEVELS: [f64; 3] = [0.05, 0.25, 0.5];

/// Checks p-values computed where nothing matters, one list per data set, against the
/// uniform distribution a valid test gives under the null (two-sided, so p-values
/// piled near 1 fail as surely as p-values piled near 0): at each level `q` of
/// [`LEVELS`], the share at or below `q` must lie within 3 standard errors of `q`
/// (normal approximation, two-sided 0.27% per level). The standard error is the larger
/// of the binomial one, sqrt(q (1 - q) / N) for N p-values, and the one computed from
/// the spread of the per-set shares (the p-values of one data set are not independent:
/// they share one forest, and for the mirrored null one null sample). `slack` widens
/// the band where a test is known to be conservative or liberal by a bounded amount
/// (stated by the caller). At 0.05 the share must also stay below 0.10, the bound the
/// issue asks for.
fn assert_uniform(name: &str, per_set: &[Vec<f64>], slack: f64) {
    let n: usize = per_set.iter().map(Vec::len).sum();
    for q in LEVELS {
        let shares: Vec<f64> = per_set
            .iter()
            .map(|p| p.iter().filter(|&&v| v <= q).count() as f64 / p.len() as f64)
            .collect();
        let share = per_set.iter().flatten().filter(|&&v| v <= q).count() as f64 / n as f64;
        let se_sets = (sample_var(&shares) / shares.len() as f64).sqrt();
        let se_binomial = (q * (1.0 - q) / n as f64).sqrt();
        let se = se_sets.max(se_binomial);
        println!(
            "{name}: share of p <= {q} = {share:.4} (se over data sets {se_sets:.4}, \
             binomial {se_binomial:.4}; {n} p-values)"
        );
        assert!(
            (share - q).abs() <= 3.0 * se + slack,
            "{name}: share of p <= {q} is {share}, not within 3 x {se:.4} + {slack} of {q}"
        );
        if q == 0.05 {
            assert!(share < 0.10, "{name}: share of p <= 0.05 is {share}");
        }
    }
}

/// With the outcome independent of every input, the p-values must be uniform (see
/// [`assert_uniform`]). Mirrored-null test on hold-out importance (the pairing of
/// Janitza et al. 2018): 12 data sets of each kind (values, two classes), 200 rows of
/// 50 inputs, 50 trees: 1200 p-values.
#[test]
fn mirrored_null_p_values_are_uniform_when_nothing_matters() {
    let mut per_set = Vec::new();
    for classes in [false, true] {
        for k in 0..12 {
            let d = pure_noise(200, 50, classes, 300 + k);
            let s = ForestSettings {
                trees: 50,
                seed: seed(40 + k),
                ..Default::default()
            };
            let imp = holdout_importance(d.x.view(), &d.meta, &d.outcome, &s, seed(k))
                .expect("hold-out importance");
            let sig = mirrored_null_test(&imp.error).expect("some importances are negative");
            per_set.push(sig.p_values);
        }
    }
    assert_uniform("mirrored null, pure noise", &per_set, 0.0);
}

/// Response-permutation test with the outcome independent of every input. With 19
/// permutations the p-value takes the values 1/20, ..., 20/20, and by exchangeability
/// (the observed outcome is just one more permutation) P(p <= k/20) = k/20 exactly,
/// less with ties; so at the levels 0.05, 0.25 and 0.5 the p-values must look uniform
/// (see [`assert_uniform`]). 8 data sets of each kind, 100 rows of 30 inputs, 30 trees:
/// 480 p-values. One data set is run again on one thread: the same p-values.
#[test]
fn permutation_p_values_are_uniform_when_nothing_matters() {
    let mut per_set = Vec::new();
    for classes in [false, true] {
        for k in 0..8 {
            let d = pure_noise(100, 30, classes, 600 + k);
            let s = ForestSettings {
                trees: 30,
                seed: seed(80 + k),
                ..Default::default()
            };
            let f = Forest::train(
                d.x.view(),
                &d.meta,
                &d.outcome,
                &s,
                &TrainOptions::default(),
            )
            .expect("trains")
            .forest;
            let imp = f.oob_importance().expect("importance");
            let run = || {
                response_permutation_test(
                    d.x.view(),
                    &d.meta,
                    &d.outcome,
                    &s,
                    imp,
                    19,
                    seed(k),
                    &|_, _| {},
                )
                .expect("test runs")
            };
            let sig = with_threads(2, run);
            if k == 0 {
                assert_eq!(with_threads(1, run), sig, "same for any thread count");
            }
            assert_eq!(sig.error.null_size, 19);
            assert_eq!(sig.brier.is_some(), classes);
            per_set.push(sig.error.p_values);
        }
    }
    assert_uniform("response permutation, pure noise", &per_set, 0.0);
}

/// Friedman #1 with 500 rows: x1..x5 drive the outcome, x6..x10 are noise (Friedman
/// 1991). With 199 permutations the smallest p-value is 1/200 = 0.005; the five real
/// inputs must reach p < 0.01, i.e. no permuted-outcome forest may give them as much
/// importance as the real one. Power: that needs the real importance above the largest
/// of 199 null importances, about 2.8 null standard deviations out (the expected
/// maximum of 199 normal draws; common practice) and more than 3.5 in one run of
/// fifty. The weakest real input, x3 (the quadratic term), failed that with 25 trees
/// in about half of the seed sets tried (p 0.01 to 0.04), so its importance sat near 3
/// null standard deviations. Both the null spread and the noise of the real importance
/// shrink as 1/sqrt(trees) (importance is a mean over trees), so 100 trees double that
/// distance to about 6, beyond any of the 199 null values (p below 1e-6 per value
/// under normality); it held at seed offsets 0-9. The noise inputs must not all look significant: at
/// least three of five above 0.05 (under the null each has P(p > 0.05) = 0.95, so
/// fewer than three happens with probability 0.001).
#[test]
fn friedman_real_inputs_are_significant_by_permuting_the_outcome() {
    let d = synth::friedman1(500, seed(3));
    let s = regression_settings(100, 9);
    let f = Forest::train(
        d.x.view(),
        &d.meta,
        &d.outcome,
        &s,
        &TrainOptions::default(),
    )
    .expect("trains")
    .forest;
    let imp = f.oob_importance().expect("importance");
    let perm = response_permutation_test(
        d.x.view(),
        &d.meta,
        &d.outcome,
        &s,
        imp,
        199,
        seed(4),
        &|_, _| {},
    )
    .expect("test runs");
    println!("response permutation p-values: {:?}", perm.error.p_values);
    for j in 0..5 {
        assert!(
            perm.error.p_values[j] < 0.01,
            "x{}: {}",
            j + 1,
            perm.error.p_values[j]
        );
    }
    let noise_large = perm.error.p_values[5..]
        .iter()
        .filter(|&&p| p > 0.05)
        .count();
    assert!(noise_large >= 3, "{:?}", perm.error.p_values);
}

/// The mirrored-null test builds its null from the unrelated inputs, so p < 0.01 needs
/// about 100 of them (smallest p-value 1 / (1 + null size)); plain Friedman #1 has 5.
/// Friedman #1 with 500 rows is therefore widened with 190 further inputs of uniform
/// noise (200 inputs), the high-dimensional setting the test was made for (Janitza et
/// al. 2018). x1..x5 must get p < 0.01. Of the 195 noise inputs, the share with
/// p <= 0.05 must stay below 0.10 (expected at most 0.05; binomial standard error
/// sqrt(0.05 x 0.95 / 195) = 0.016, so 0.10 is 3 of them away).
#[test]
fn friedman_real_inputs_are_significant_by_the_mirrored_null() {
    let base = synth::friedman1(500, seed(13));
    let mut rng = Xoshiro256PlusPlus::seed_from_u64(seed(14));
    let x = Array2::from_shape_fn((500, 200), |(i, j)| {
        if j < 10 {
            base.x[[i, j]]
        } else {
            rng.random::<f64>()
        }
    });
    let meta: Vec<FeatureMeta> = (1..=200)
        .map(|j| FeatureMeta::numeric(format!("x{j}")))
        .collect();
    let s = regression_settings(50, 15);
    let held =
        holdout_importance(x.view(), &meta, &base.outcome, &s, seed(16)).expect("importance");
    let sig = mirrored_null_test(&held.error).expect("a null sample");
    println!(
        "mirrored null ({} values): x1..x10 {:?}",
        sig.null_size,
        &sig.p_values[..10]
    );
    assert!(sig.null_size >= 99, "{}", sig.null_size);
    for j in 0..5 {
        assert!(sig.p_values[j] < 0.01, "x{}: {}", j + 1, sig.p_values[j]);
    }
    let small = sig.p_values[5..].iter().filter(|&&p| p <= 0.05).count();
    assert!((small as f64) / 195.0 < 0.10, "{small} of 195");
}

// ---------------------------------------------------------------------------------
// Stability report
// ---------------------------------------------------------------------------------

/// Waveform (Breiman, Friedman, Olshen & Stone 1984), 300 rows, 5 seeds, 100 trees.
/// Published test errors with 300 training cases (Breiman 1996, "Bagging predictors",
/// Table 2, memory): one tree 29.1%, bagged trees 19.3%. An error rate measured on 300
/// rows has standard error sqrt(0.3 x 0.7 / 300) = 0.026 (one tree) and
/// sqrt(0.19 x 0.81 / 300) = 0.023 (bagged), which averaging over seeds does not
/// reduce (the rows stay the same); the published values come from memory and from
/// other training sets, so the bound is 4 standard errors: 0.10 and 0.09. The single
/// tree is cross-validated on 4/5 of the rows, which raises its error slightly.
/// Facts of the trade (Breiman 1996, section 4, "instability"): a tree's predictions
/// and importance change far more with the sample than an ensemble's.
#[test]
fn stability_report_on_waveform() {
    let d = synth::waveform21(300, seed(5));
    let st = StabilitySettings {
        seeds: 5,
        folds: 5,
        forest: ForestSettings {
            trees: 100,
            seed: seed(3),
            ..Default::default()
        },
    };
    let r = stability_report(d.x.view(), &d.meta, &d.outcome, &st, &|_, _| {}).expect("runs");
    for k in &r.kinds {
        println!(
            "waveform {:?}: error {:.3} (sd {:.3}, {:.3}..{:.3}), change {:?}, tau {:?}",
            k.kind,
            k.error_mean,
            k.error_sd,
            k.error_min,
            k.error_max,
            k.prediction_change,
            k.rank_tau
        );
    }
    assert!(r.classes && r.rows == 300 && r.forest_features_per_split == 4);
    let [tree, bag, forest] = [&r.kinds[0], &r.kinds[1], &r.kinds[2]];
    assert_eq!(
        [tree.kind, bag.kind, forest.kind],
        [
            ModelKind::SingleTree,
            ModelKind::BaggedTrees,
            ModelKind::Forest
        ]
    );
    assert!(
        (tree.error_mean - 0.291).abs() < 0.10,
        "{}",
        tree.error_mean
    );
    assert!((bag.error_mean - 0.193).abs() < 0.09, "{}", bag.error_mean);
    assert!(forest.error_mean < tree.error_mean && bag.error_mean < tree.error_mean);
    let change = |k: &copse_forest::KindStability| k.prediction_change.expect("defined");
    let tau = |k: &copse_forest::KindStability| k.rank_tau.expect("defined");
    assert!(change(tree) > 2.0 * change(bag) && change(tree) > 2.0 * change(forest));
    assert!(tau(tree) < tau(bag) && tau(tree) < tau(forest));
    assert_eq!(tree.errors.len(), 5);
    assert_eq!(tree.importance.len(), 5);
    assert_eq!(tree.importance[0].len(), 21);
}

/// Friedman #1 (Friedman 1991), 200 rows, 5 seeds. Breiman 1996, "Bagging predictors"
/// (memory): with 200 training cases, test MSE one tree about 11.4, bagged about 6.1.
/// With Var(y) = 24.8 and these sizes, a test MSE varies by roughly 15% between
/// training sets (our runs); with the values from memory the bounds are a factor of
/// 1.5 either way. The prediction change (relative root mean squared difference) must
/// be at least twice as large for the tree (fact of the trade, as above). The report is
/// the same on one thread and on two.
#[test]
fn stability_report_on_friedman() {
    let d = synth::friedman1(200, seed(5));
    let st = StabilitySettings {
        seeds: 4,
        folds: 5,
        forest: regression_settings(100, 8),
    };
    let run = || stability_report(d.x.view(), &d.meta, &d.outcome, &st, &|_, _| {}).expect("runs");
    let r = with_threads(2, run);
    for k in &r.kinds {
        println!(
            "friedman {:?}: mse {:.3} (sd {:.3}), change {:?}, tau {:?}",
            k.kind, k.error_mean, k.error_sd, k.prediction_change, k.rank_tau
        );
    }
    let [tree, bag] = [&r.kinds[0], &r.kinds[1]];
    assert!(tree.error_mean > 11.4 / 1.5 && tree.error_mean < 11.4 * 1.5);
    assert!(bag.error_mean > 6.1 / 1.5 && bag.error_mean < 6.1 * 1.5);
    let change = |k: &copse_forest::KindStability| k.prediction_change.expect("defined");
    assert!(change(tree) > 2.0 * change(bag));
    assert_eq!(with_threads(1, run), r);
    // Too few seeds or folds are refused with a setting error.
    let bad = StabilitySettings {
        seeds: 1,
        ..st.clone()
    };
    let e =
        stability_report(d.x.view(), &d.meta, &d.outcome, &bad, &|_, _| {}).expect_err("refused");
    assert_eq!(e.kind(), ErrorKind::InvalidSetting);
}
