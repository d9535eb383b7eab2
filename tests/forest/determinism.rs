//! Determinism and order: the same model for any thread count, predictions in input
//! order, evaluation matching classes by label, and balanced sampling.
use super::open_data::read_csv;
use super::{codes, importance_settings, seed, settings, train, train_importance};
use copse_forest::synth::{self, Synthetic};
use copse_forest::{FeaturesPerSplit, Forest, ForestSettings, Metrics, Outcome, MISSING};
use ndarray::{Array2, Axis, ShapeBuilder};

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
