//! Promises of the forest engine that no published value pins down, each checked
//! directly: the same model file and the same scores whatever the number of threads
//! and the size of the blocks rows are scored in; an unseen category scores as a
//! missing value; the out-of-bag error of a regression forest is honest about fresh
//! data; the error curve's entry k - 1 is the out-of-bag error of the forest's first k
//! trees. Sources beside each check; seeds move with `COPSE_TEST_SEED_OFFSET`
//! (`support::seed`).
use copse_forest::synth::{self, Synthetic};
use copse_forest::{
    FeatureMeta, Forest, ForestSettings, Metrics, Outcome, Sampling, TrainOptions, TreeRules,
};
use ndarray::{Array2, Axis};
use rand::{RngExt, SeedableRng};
use rand_xoshiro::Xoshiro256PlusPlus;

mod support;
use support::seed;

fn with_threads<T: Send>(threads: usize, job: impl FnOnce() -> T + Send) -> T {
    rayon::ThreadPoolBuilder::new()
        .num_threads(threads)
        .build()
        .expect("thread pool")
        .install(job)
}

fn train(d: &Synthetic, s: &ForestSettings, options: &TrainOptions<'_>) -> Forest {
    Forest::train(d.x.view(), &d.meta, &d.outcome, s, options)
        .expect("training succeeds")
        .forest
}

fn plain() -> TrainOptions<'static> {
    TrainOptions {
        oob_importance: false,
        ..TrainOptions::default()
    }
}

fn bits(a: &Array2<f64>) -> Vec<u64> {
    a.iter().map(|v| v.to_bits()).collect()
}

/// `d` with about one cell in ten missing (NaN), so that every descent meets missing
/// values too.
fn with_missing(mut d: Synthetic, base: u64) -> Synthetic {
    let mut rng = Xoshiro256PlusPlus::seed_from_u64(seed(base));
    d.x.mapv_inplace(|v| if rng.random_bool(0.1) { f64::NAN } else { v });
    d
}

/// Twonorm (Breiman 1996) with about 1 case in 6 from the second class.
fn imbalanced(n: usize, base: u64) -> Synthetic {
    let d = synth::twonorm(n, seed(base));
    let Outcome::Classes { codes, labels } = &d.outcome else {
        panic!("classes")
    };
    let mut rng = Xoshiro256PlusPlus::seed_from_u64(seed(base + 1));
    let rows: Vec<usize> = (0..n)
        .filter(|&i| codes[i] == 0 || rng.random_bool(0.2))
        .collect();
    Synthetic {
        x: d.x.select(Axis(0), &rows),
        meta: d.meta.clone(),
        outcome: Outcome::Classes {
            codes: rows.iter().map(|&i| codes[i]).collect(),
            labels: labels.clone(),
        },
    }
}

// ---------------------------------------------------------------------------------
// Threads and blocks
// ---------------------------------------------------------------------------------

/// The model's randomness comes only from per-tree generators seeded by (seed, tree),
/// and results are combined in tree order, so the model file is the same bytes on 1,
/// 2, 3 or 8 threads: for regression, with randomized cut points, with the draw counts
/// kept, with class-balanced samples and with subsamples (each its own code path in
/// sampling and training).
/// Out-of-bag predictions match bit for bit as well.
#[test]
fn model_bytes_are_the_same_on_1_2_3_and_8_threads() {
    let keep = TrainOptions {
        keep_draws: true,
        ..TrainOptions::default()
    };
    let regression = ForestSettings {
        trees: 40,
        seed: seed(11),
        tree: TreeRules {
            min_leaf: 5.0,
            ..Default::default()
        },
        ..Default::default()
    };
    let classes = ForestSettings {
        trees: 40,
        seed: seed(12),
        ..Default::default()
    };
    let friedman = with_missing(synth::friedman1(300, seed(13)), 14);
    let twonorm = imbalanced(400, 15);
    let random_cuts = ForestSettings {
        sampling: Sampling::Bootstrap,
        tree: TreeRules {
            cuts: copse_forest::CutChoice::Random,
            ..regression.tree.clone()
        },
        ..regression.clone()
    };
    let cases: [(&str, &Synthetic, ForestSettings, TrainOptions<'_>); 5] = [
        (
            "randomized cut points",
            &friedman,
            random_cuts,
            TrainOptions::default(),
        ),
        (
            "regression",
            &friedman,
            regression.clone(),
            TrainOptions::default(),
        ),
        ("draw counts kept", &friedman, regression, keep),
        (
            "class-balanced",
            &twonorm,
            ForestSettings {
                balanced: true,
                ..classes.clone()
            },
            TrainOptions::default(),
        ),
        (
            "subsample",
            &twonorm,
            ForestSettings {
                sampling: Sampling::Subsample(0.5),
                ..classes
            },
            TrainOptions::default(),
        ),
    ];
    for (name, d, s, options) in cases {
        let run = |threads: usize| {
            with_threads(threads, || {
                let t = Forest::train(d.x.view(), &d.meta, &d.outcome, &s, &options)
                    .expect("training succeeds");
                (
                    t.forest.to_bytes().expect("the model encodes"),
                    bits(&t.oob.predictions),
                )
            })
        };
        let one = run(1);
        assert!(one.0.len() > 1000, "{name}");
        for threads in [2, 3, 8] {
            assert!(
                run(threads) == one,
                "{name}: {threads} threads differ from 1"
            );
        }
    }
}

/// Scores do not depend on how the rows are cut up: the same bits on 1, 2, 3 and 8
/// threads (which change the engine's block size), one row at a time, and in batches
/// of 1, 7, 300 and 1000 rows. Three classes and regression, with missing values.
#[test]
fn scores_are_the_same_bits_for_any_threads_and_blocks() {
    let waveform = with_missing(synth::waveform21(1500, seed(21)), 22);
    let friedman = with_missing(synth::friedman1(1500, seed(23)), 24);
    for d in [&waveform, &friedman] {
        let s = ForestSettings {
            trees: 30,
            seed: seed(25),
            ..Default::default()
        };
        let f = train(d, &s, &plain());
        let q = &d.x;
        let whole = with_threads(1, || f.predict(q.view()).expect("scores"));
        for threads in [2, 3, 8] {
            let p = with_threads(threads, || f.predict(q.view()).expect("scores"));
            assert_eq!(bits(&p), bits(&whole), "{threads} threads");
        }
        let mut out = vec![0.0; f.n_outputs()];
        for (i, row) in q.rows().into_iter().enumerate() {
            f.predict_row(&row.to_vec(), &mut out).expect("scores");
            let want: Vec<u64> = whole.row(i).iter().map(|v| v.to_bits()).collect();
            let got: Vec<u64> = out.iter().map(|v| v.to_bits()).collect();
            assert_eq!(got, want, "row {i} alone");
        }
        for batch in [1, 7, 300, 1000] {
            let mut parts = Vec::new();
            for start in (0..q.nrows()).step_by(batch) {
                let end = (start + batch).min(q.nrows());
                let p = f
                    .predict(q.slice_axis(Axis(0), (start..end).into()))
                    .expect("scores");
                parts.extend(p.iter().map(|v| v.to_bits()));
            }
            assert_eq!(parts, bits(&whole), "batches of {batch}");
        }
    }
}

// ---------------------------------------------------------------------------------
// Categories
// ---------------------------------------------------------------------------------

/// A category the model never saw is scored as a missing value (the documented rule,
/// `copse_tree::grow`): every row scores the same with an unseen code in a categorical
/// input as with NaN there. Data: two categorical inputs of 4 and 10 categories and two
/// numeric ones; the class depends on all of them.
#[test]
fn an_unseen_category_scores_exactly_like_a_missing_value() {
    let n = 400;
    let mut rng = Xoshiro256PlusPlus::seed_from_u64(seed(31));
    let x = Array2::from_shape_fn((n, 4), |(_, j)| match j {
        0 => f64::from(rng.random_range(0..4u32)),
        1 => f64::from(rng.random_range(0..10u32)),
        _ => rng.random::<f64>(),
    });
    let codes: Vec<u32> = x
        .rows()
        .into_iter()
        .map(|r| u32::from((r[0] + r[1] / 3.0 + 2.0 * r[2] - r[3]) % 3.0 >= 1.5))
        .collect();
    let meta = vec![
        FeatureMeta::categorical("c4", (0..4).map(|c| format!("k{c}")).collect()),
        FeatureMeta::categorical("c10", (0..10).map(|c| format!("m{c}")).collect()),
        FeatureMeta::numeric("u"),
        FeatureMeta::numeric("v"),
    ];
    let d = Synthetic {
        x,
        meta,
        outcome: Outcome::Classes {
            codes,
            labels: vec!["a".into(), "b".into()],
        },
    };
    let s = ForestSettings {
        trees: 50,
        seed: seed(32),
        ..Default::default()
    };
    let f = train(&d, &s, &plain());
    let categorical_splits = f
        .trees()
        .iter()
        .flat_map(|t| t.nodes().iter())
        .filter(|n| n.is_categorical())
        .count();
    assert!(categorical_splits > 50, "{categorical_splits}");
    for (j, unseen) in [(0usize, 4.0), (1, 10.0), (1, 250.0)] {
        let mut missing = d.x.clone();
        missing.column_mut(j).fill(f64::NAN);
        let mut strange = d.x.clone();
        strange.column_mut(j).fill(unseen);
        assert_eq!(
            bits(&f.predict(strange.view()).expect("scores")),
            bits(&f.predict(missing.view()).expect("scores")),
            "input {j}, code {unseen}"
        );
    }
}

// ---------------------------------------------------------------------------------
// Out of bag
// ---------------------------------------------------------------------------------

/// Breiman 2001, section 3.1 (memory): the out-of-bag estimate is about as accurate as
/// a test set of the training set's size; here for regression. Friedman #1 (Friedman
/// 1991), 1000 training rows, 300 trees, 5000 fresh rows. Each mean squared error is a
/// mean of squared errors, so its standard error is their standard deviation over the
/// square root of their number (computed from the data and printed); the two estimates
/// must agree within 4 standard errors of their difference. (The out-of-bag prediction
/// averages about 110 of the 300 trees, which raises its error a little; the fresh-row
/// error of a forest of the first 110 trees is printed beside that of all 300 to show
/// the size of that effect against the tolerance.)
#[test]
fn oob_error_is_honest_for_regression() {
    let tr = synth::friedman1(1000, seed(41));
    let te = synth::friedman1(5000, seed(42));
    let s = ForestSettings {
        trees: 300,
        seed: seed(43),
        tree: TreeRules {
            min_leaf: 5.0,
            ..Default::default()
        },
        ..Default::default()
    };
    let t = Forest::train(tr.x.view(), &tr.meta, &tr.outcome, &s, &plain()).expect("trains");
    let (Outcome::Values(y_tr), Outcome::Values(y_te)) = (&tr.outcome, &te.outcome) else {
        panic!("values")
    };
    let sq = |pred: &[f64], y: &[f64]| -> Vec<f64> {
        pred.iter().zip(y).map(|(p, v)| (p - v) * (p - v)).collect()
    };
    let mean = |v: &[f64]| v.iter().sum::<f64>() / v.len() as f64;
    let var = |v: &[f64]| {
        let m = mean(v);
        v.iter().map(|x| (x - m) * (x - m)).sum::<f64>() / (v.len() - 1) as f64
    };
    let oob_sq = sq(&t.oob.predictions.column(0).to_vec(), y_tr);
    let fresh = t.forest.predict(te.x.view()).expect("scores");
    let test_sq = sq(&fresh.column(0).to_vec(), y_te);
    let (oob, test) = (mean(&oob_sq), mean(&test_sq));
    let se = (var(&oob_sq) / oob_sq.len() as f64 + var(&test_sq) / test_sq.len() as f64).sqrt();
    let Some(Metrics::Values(m)) = &t.forest.oob().metrics else {
        panic!("values")
    };
    assert!((m.mse - oob).abs() <= 1e-9 * oob, "{} vs {oob}", m.mse);
    let fewer = train(
        &tr,
        &ForestSettings {
            trees: 110,
            ..s.clone()
        },
        &plain(),
    );
    let fewer_sq = sq(
        &fewer
            .predict(te.x.view())
            .expect("scores")
            .column(0)
            .to_vec(),
        y_te,
    );
    println!(
        "friedman1 n=1000: OOB MSE {oob:.3}, fresh-row MSE {test:.3} (se of the difference \
         {se:.3}); fresh-row MSE of the first 110 trees {:.3}",
        mean(&fewer_sq)
    );
    assert!(
        (oob - test).abs() <= 4.0 * se,
        "OOB {oob} vs fresh {test}, se {se}"
    );
}

/// Tree t is grown from a generator seeded by (seed, t) alone, so the first k trees of
/// a forest are the trees of a k-tree forest with the same seed, and the error curve's
/// entry k - 1 (the out-of-bag error of trees 0..k) must be that forest's out-of-bag
/// error: exactly for classes (a count of wrong rows over a count of rows), to
/// rounding for regression (a running sum of squared errors).
#[test]
fn error_curve_entry_k_minus_1_is_the_oob_error_of_k_trees() {
    let classes = synth::waveform21(300, seed(51));
    let values = synth::friedman1(300, seed(52));
    for (name, d) in [("waveform", &classes), ("friedman1", &values)] {
        let s = |trees: usize| ForestSettings {
            trees,
            seed: seed(53),
            ..Default::default()
        };
        let full = train(d, &s(40), &plain());
        let curve = &full.oob().error_curve;
        assert_eq!(curve.len(), 40);
        for k in [1, 2, 7, 25, 40] {
            let small = train(d, &s(k), &plain());
            assert_eq!(
                small.trees(),
                &full.trees()[..k],
                "{name}: the first {k} trees"
            );
            let want = small.oob().metrics.as_ref().expect("measured").error();
            let got = curve[k - 1].expect("measured");
            match d.outcome {
                Outcome::Classes { .. } => assert_eq!(got, want, "{name}, k = {k}"),
                Outcome::Values(_) => {
                    assert!(
                        (got - want).abs() <= 1e-9 * want,
                        "{name}, k = {k}: {got} vs {want}"
                    )
                }
            }
        }
    }
}
