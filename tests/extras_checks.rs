//! Checks of the forest extras: standard errors of predictions (infinitesimal
//! jackknife), importance p-values (mirrored-null and response-permutation tests) and
//! the stability report. Each check names its source beside it; values recalled from
//! memory carry wider tolerances, and each statistical tolerance is derived from
//! sampling error in a comment. Figures are printed (run with `--nocapture`).
use copse_forest::synth::{self, Synthetic};
use copse_forest::{
    holdout_importance, mirrored_null_test, response_permutation_test, stability_report, ErrorKind,
    FeatureMeta, Forest, ForestSettings, ModelKind, Outcome, Sampling, StabilitySettings,
    TrainOptions, TreeRules,
};
use ndarray::Array2;
use rand::{RngExt, SeedableRng};
use rand_xoshiro::Xoshiro256PlusPlus;

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

/// Training options without out-of-bag importance.
fn plain() -> TrainOptions<'static> {
    TrainOptions {
        oob_importance: false,
        ..TrainOptions::default()
    }
}

fn train_keeping(d: &Synthetic, s: &ForestSettings) -> Forest {
    let options = TrainOptions {
        keep_draws: true,
        ..plain()
    };
    Forest::train(d.x.view(), &d.meta, &d.outcome, s, &options)
        .expect("training succeeds")
        .forest
}

/// Regression forest settings with leaves of at least 5 cases (the usual leaf size for
/// regression forests: common practice), which also keeps the tests fast.
fn regression_settings(trees: usize, seed: u64) -> ForestSettings {
    ForestSettings {
        trees,
        seed,
        tree: TreeRules {
            min_leaf: 5.0,
            ..Default::default()
        },
        ..Default::default()
    }
}

/// `n` rows of `p` inputs uniform on [0, 1] and an outcome independent of all of them:
/// two equally likely classes, or a uniform value.
fn pure_noise(n: usize, p: usize, classes: bool, seed: u64) -> Synthetic {
    let mut rng = Xoshiro256PlusPlus::seed_from_u64(seed);
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
// Draw counts
// ---------------------------------------------------------------------------------

#[test]
fn draw_counts_match_the_bootstrap_and_the_out_of_bag_rows() {
    let mut d = synth::friedman1(150, 1);
    if let Outcome::Values(y) = &mut d.outcome {
        y[7] = f64::NAN;
    }
    let s = regression_settings(40, 2);
    let options = TrainOptions {
        keep_draws: true,
        ..plain()
    };
    let trained =
        Forest::train(d.x.view(), &d.meta, &d.outcome, &s, &options).expect("training succeeds");
    let draws = trained.forest.draws().expect("kept");
    assert_eq!(
        (draws.rows(), draws.trees(), draws.population()),
        (150, 40, 149)
    );
    // A bootstrap sample holds as many draws as there are rows to draw from (common
    // practice: Efron's bootstrap).
    for t in 0..40 {
        let drawn: u32 = (0..150).map(|i| u32::from(draws.count(i, t))).sum();
        assert_eq!(drawn, 149, "tree {t}");
    }
    // A row is out of bag for exactly the trees that drew it 0 times.
    for i in 0..150 {
        let zeros = draws.row(i).iter().filter(|&&c| c == 0).count() as u32;
        assert_eq!(zeros, trained.oob.trees_out[i], "row {i}");
    }
    assert_eq!(
        draws.row(7),
        &[0u8; 40][..],
        "a row without outcome is never drawn"
    );
    // Not kept unless asked for.
    let plain = Forest::train(d.x.view(), &d.meta, &d.outcome, &s, &plain()).expect("trains");
    assert!(plain.forest.draws().is_none());
}

// ---------------------------------------------------------------------------------
// Standard errors: Wager, Hastie & Efron (2014), JMLR 15:1625-1651
// ---------------------------------------------------------------------------------

/// The infinitesimal jackknife estimates the variance of a forest's prediction over
/// independent training sets. Protocol: 60 training sets of Friedman #1 (Friedman 1991)
/// with 100 rows each; for 24 fixed query points (the centre of the cube and 23 drawn
/// once with a fixed seed) the observed variance of the forest's prediction across the
/// sets is compared with the mean of the estimates.
///
/// Trees: the correction subtracts `n/B` times the spread of the tree outputs, which
/// for these data is about 20 times the variance being estimated when B = n; with
/// B = 10 n = 1000 the corrected estimate is rarely negative (the count is printed:
/// 16 of 1440 at the committed seeds).
///
/// Tolerances. (1) The issue asks for a factor of 1.5. The observed variance of one
/// point over R = 60 sets has a relative standard error of sqrt(2 / (R - 1)) = 0.18
/// (normal theory), too coarse for a factor of 1.5 on one point, so the points are
/// pooled (sum of mean estimates over sum of observed variances). The pooled ratio's
/// standard error, computed by resampling the training sets, is printed: 0.043 at the
/// committed seeds, against a ratio of 0.74 (at this small n the estimate sits
/// somewhat below the truth). (2) The paper's account of the uncorrected estimate:
/// its excess over the corrected one is Monte Carlo noise of expected size
/// `(n/B^2) sum_b (t_b - tbar)^2`, so from 200 to 1000 trees it must fall by as much as
/// the correction term falls. The ratio of the two falls, per training set, has mean
/// 0.998 and standard error 0.007 at the committed seeds; the bound |ratio - 1| < 0.1
/// is over 10 standard errors and leaves room for the second-order terms the formula
/// omits. (3) The uncorrected estimate overstates the variance and the corrected one
/// is nearer.
#[test]
fn jackknife_variance_matches_the_variance_over_training_sets() {
    const SETS: u64 = 60;
    const ROWS: usize = 100;
    const POINTS: usize = 24;
    let started = std::time::Instant::now();
    // The centre of the cube and 23 points drawn uniformly in it.
    let mut rng = Xoshiro256PlusPlus::seed_from_u64(21);
    let points =
        Array2::from_shape_fn(
            (POINTS, 10),
            |(r, _)| {
                if r == 0 {
                    0.5
                } else {
                    rng.random::<f64>()
                }
            },
        );
    let mut pred = vec![Vec::new(); POINTS];
    let mut est = vec![Vec::new(); POINTS]; // corrected, B = 1000 (clamped, as reported)
    let mut raw_big = vec![Vec::new(); POINTS];
    let mut fall_ratio = Vec::new();
    let mut clamped = 0;
    for r in 0..SETS {
        let d = synth::friedman1(ROWS, 7000 + r);
        let big = train_keeping(&d, &regression_settings(1000, 100 + r))
            .prediction_uncertainty(points.view())
            .expect("standard errors");
        let small = train_keeping(&d, &regression_settings(200, 500 + r))
            .prediction_uncertainty(points.view())
            .expect("standard errors");
        clamped += big.clamped;
        let (mut fall_raw, mut fall_corr) = (0.0, 0.0);
        for q in 0..POINTS {
            pred[q].push(big.predictions[[q, 0]]);
            est[q].push(big.variance[[q, 0]]);
            raw_big[q].push(big.variance_uncorrected[[q, 0]]);
            assert!(big.variance[[q, 0]] <= big.variance_uncorrected[[q, 0]]);
            fall_raw += small.variance_uncorrected[[q, 0]] - big.variance_uncorrected[[q, 0]];
            fall_corr += small.correction[[q, 0]] - big.correction[[q, 0]];
        }
        fall_ratio.push(fall_raw / fall_corr);
    }
    let observed: Vec<f64> = pred.iter().map(|p| sample_var(p)).collect();
    for q in 0..4 {
        println!(
            "point {q}: observed variance {:.4}, mean corrected {:.4} (ratio {:.2}), mean \
             uncorrected {:.4} (ratio {:.2})",
            observed[q],
            mean(&est[q]),
            mean(&est[q]) / observed[q],
            mean(&raw_big[q]),
            mean(&raw_big[q]) / observed[q]
        );
    }
    let pooled = |sets: &[usize]| -> f64 {
        let (mut e, mut o) = (0.0, 0.0);
        for q in 0..POINTS {
            let p: Vec<f64> = sets.iter().map(|&s| pred[q][s]).collect();
            e += sets.iter().map(|&s| est[q][s]).sum::<f64>() / sets.len() as f64;
            o += sample_var(&p);
        }
        e / o
    };
    let all: Vec<usize> = (0..SETS as usize).collect();
    let ratio = pooled(&all);
    // Standard error by resampling the training sets (200 resamples, fixed seed).
    let mut rng = Xoshiro256PlusPlus::seed_from_u64(3);
    let resampled: Vec<f64> = (0..200)
        .map(|_| {
            let sets: Vec<usize> = (0..SETS as usize)
                .map(|_| rng.random_range(0..SETS as usize))
                .collect();
            pooled(&sets)
        })
        .collect();
    let se = sample_var(&resampled).sqrt();
    let raw_ratio =
        (0..POINTS).map(|q| mean(&raw_big[q])).sum::<f64>() / observed.iter().sum::<f64>();
    let fall = mean(&fall_ratio);
    let fall_se = (sample_var(&fall_ratio) / fall_ratio.len() as f64).sqrt();
    println!(
        "pooled: corrected / observed {ratio:.3} (se {se:.3}), uncorrected / observed \
         {raw_ratio:.3}; clamped {clamped} of {}; fall of the uncorrected estimate from \
         200 to 1000 trees / fall of the correction {fall:.3} (se {fall_se:.3}); {:.1} s",
        SETS as usize * POINTS,
        started.elapsed().as_secs_f64()
    );
    assert!(
        ratio > 1.0 / 1.5 && ratio < 1.5,
        "corrected estimate / observed variance = {ratio}"
    );
    // The uncorrected estimate overstates the variance and the corrected one is nearer.
    assert!(raw_ratio > ratio && (raw_ratio - 1.0).abs() > (ratio - 1.0).abs());
    assert!((fall - 1.0).abs() < 0.1, "fall ratio {fall}");
}

#[test]
fn jackknife_standard_errors_for_class_probabilities() {
    let d = synth::twonorm(200, 4);
    let s = ForestSettings {
        trees: 300,
        seed: 5,
        ..Default::default()
    };
    let f = train_keeping(&d, &s);
    let q = synth::twonorm(40, 99);
    let u = f
        .prediction_uncertainty(q.x.view())
        .expect("standard errors");
    // The predictions are the forest's predictions, exactly.
    assert_eq!(u.predictions, f.predict(q.x.view()).expect("predicts"));
    // With two classes p_2 = 1 - p_1 in every tree, so both probabilities have the same
    // deviations up to sign and the same variance (computed from the formula).
    for r in 0..40 {
        let (a, b) = (u.variance[[r, 0]], u.variance[[r, 1]]);
        assert!((a - b).abs() <= 1e-12 * (1.0 + a), "row {r}: {a} {b}");
        assert!(u.variance_uncorrected[[r, 0]] >= a);
    }
    // A probability's variance is at most 1/4 (common practice: the variance of a
    // quantity in [0, 1]); the estimates should be far inside that.
    let se = u.std_errors();
    assert!(se.iter().flatten().all(|s| (0.0..=0.5).contains(s)));
    // Same result on one thread as on two.
    let one = with_threads(1, || f.prediction_uncertainty(q.x.view()).expect("ok"));
    let two = with_threads(2, || f.prediction_uncertainty(q.x.view()).expect("ok"));
    assert_eq!(one, two);
}

#[test]
fn jackknife_refuses_models_it_cannot_serve() {
    let d = synth::friedman1(80, 6);
    let q = d.x.select(ndarray::Axis(0), &[0, 1, 2]);
    let plain = Forest::train(
        d.x.view(),
        &d.meta,
        &d.outcome,
        &regression_settings(20, 1),
        &plain(),
    )
    .expect("trains")
    .forest;
    let e = plain
        .prediction_uncertainty(q.view())
        .expect_err("no counts");
    assert_eq!(e.kind(), ErrorKind::InvalidSetting);
    assert!(e.message().contains("draw counts"), "{}", e.message());
    let sub = ForestSettings {
        sampling: Sampling::Subsample(0.5),
        ..regression_settings(20, 1)
    };
    let e = train_keeping(&d, &sub)
        .prediction_uncertainty(q.view())
        .expect_err("not a bootstrap");
    assert!(e.message().contains("bootstrap"), "{}", e.message());
    let ok = train_keeping(&d, &regression_settings(20, 1));
    let e = ok
        .prediction_uncertainty(d.x.select(ndarray::Axis(1), &[0, 1, 2, 3]).view())
        .expect_err("wrong width");
    assert_eq!(e.kind(), ErrorKind::LengthMismatch);
}

// ---------------------------------------------------------------------------------
// Importance p-values: Janitza, Celik & Boulesteix (2018); Altmann et al. (2010)
// ---------------------------------------------------------------------------------

/// With the outcome independent of every input, p-values must not pile up near 0.
/// Mirrored-null test on hold-out importance (the pairing of Janitza et al. 2018): 12
/// data sets of each kind (values, two classes), 200 rows of 50 inputs, 50 trees: 1200
/// p-values. The nominal share at or below 0.05 is at most 0.05; the issue asks for less
/// than twice that. The p-values of one data set share one null sample, so the share's
/// standard error is computed from the spread of the per-set shares and printed (0.006
/// in our runs, against a share of 0.036: the bound 0.10 is 10 of them away).
#[test]
fn mirrored_null_p_values_are_not_small_when_nothing_matters() {
    let mut shares = Vec::new();
    for classes in [false, true] {
        for seed in 0..12 {
            let d = pure_noise(200, 50, classes, 300 + seed);
            let s = ForestSettings {
                trees: 50,
                seed: 40 + seed,
                ..Default::default()
            };
            let imp = holdout_importance(d.x.view(), &d.meta, &d.outcome, &s, seed)
                .expect("hold-out importance");
            let sig = mirrored_null_test(&imp.error).expect("some importances are negative");
            let small = sig.p_values.iter().filter(|&&p| p <= 0.05).count();
            shares.push(small as f64 / sig.p_values.len() as f64);
        }
    }
    let share = mean(&shares);
    let se = (sample_var(&shares) / shares.len() as f64).sqrt();
    println!("mirrored null, pure noise: share of p <= 0.05 = {share:.4} (se {se:.4})");
    assert!(share < 0.10, "{share}");
}

/// Response-permutation test with the outcome independent of every input. With 19
/// permutations the p-value takes the values 1/20, ..., 20/20, and by exchangeability
/// (the observed outcome is just one more permutation) P(p <= 0.05) = 1/20 exactly, less
/// with ties. 8 data sets of each kind, 100 rows of 30 inputs, 30 trees: 480 p-values.
/// The share's standard error, from the per-set shares, is printed (0.009 in our runs
/// against a share of 0.058, so the bound 0.10 is 4.5 of them away). One
/// data set is run again on one thread: the same p-values.
#[test]
fn permutation_p_values_are_not_small_when_nothing_matters() {
    let mut shares = Vec::new();
    for classes in [false, true] {
        for seed in 0..8 {
            let d = pure_noise(100, 30, classes, 600 + seed);
            let s = ForestSettings {
                trees: 30,
                seed: 80 + seed,
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
                    seed,
                    &|_, _| {},
                )
                .expect("test runs")
            };
            let sig = with_threads(2, run);
            if seed == 0 {
                assert_eq!(with_threads(1, run), sig, "same for any thread count");
            }
            assert_eq!(sig.error.null_size, 19);
            assert_eq!(sig.brier.is_some(), classes);
            let small = sig.error.p_values.iter().filter(|&&p| p <= 0.05).count();
            shares.push(small as f64 / sig.error.p_values.len() as f64);
        }
    }
    let share = mean(&shares);
    let se = (sample_var(&shares) / shares.len() as f64).sqrt();
    println!("response permutation, pure noise: share of p <= 0.05 = {share:.4} (se {se:.4})");
    assert!(share < 0.10, "{share}");
}

/// Friedman #1 with 500 rows: x1..x5 drive the outcome, x6..x10 are noise (Friedman
/// 1991). With 199 permutations the smallest p-value is 1/200 = 0.005; the five real
/// inputs must reach p < 0.01, i.e. no permuted-outcome forest may give them as much
/// importance as the real one. The noise inputs must not all look significant: at
/// least three of five above 0.05 (under the null each has P(p > 0.05) = 0.95, so
/// fewer than three happens with probability 0.001).
#[test]
fn friedman_real_inputs_are_significant_by_permuting_the_outcome() {
    let d = synth::friedman1(500, 3);
    let s = regression_settings(25, 9);
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
    let perm =
        response_permutation_test(d.x.view(), &d.meta, &d.outcome, &s, imp, 199, 4, &|_, _| {})
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
    let base = synth::friedman1(500, 13);
    let mut rng = Xoshiro256PlusPlus::seed_from_u64(14);
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
    let held = holdout_importance(x.view(), &meta, &base.outcome, &s, 16).expect("importance");
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
    let d = synth::waveform21(300, 5);
    let st = StabilitySettings {
        seeds: 5,
        folds: 5,
        forest: ForestSettings {
            trees: 100,
            seed: 3,
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
    let d = synth::friedman1(200, 5);
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
