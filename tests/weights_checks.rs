//! Checks of case weights and row groups in training: weights all 1 give today's model
//! byte for byte; whole-number weights give the forest of the rows repeated (in
//! expectation, over seeds); drawing whole groups keeps the out-of-bag error honest on
//! data whose rows are repeated, where drawing rows does not. Figures are printed (run
//! with `--nocapture`).
use copse_forest::synth;
use copse_forest::{
    metrics::class_metrics, FeatureMeta, Forest, ForestSettings, Metrics, Outcome, Sampling,
    TrainOptions,
};
use ndarray::{Array2, Axis};
use rand::{RngExt, SeedableRng};
use rand_xoshiro::Xoshiro256PlusPlus;

mod support;
use support::seed;

/// Invented data (our own generator, no published source): five inputs uniform on
/// [0, 1]; class "b" with chance 0.8 when x1 + x2 > 1 and 0.2 otherwise, so no rule
/// errs on fewer than 20% of the rows. Inputs are rounded to 1/50 so a column holds at
/// most 51 values: bins are then exact whatever the rows' multiplicities.
fn noisy_halves(n: usize, seed: u64) -> (Array2<f64>, Vec<u32>) {
    let mut rng = Xoshiro256PlusPlus::seed_from_u64(seed);
    let mut x = Array2::zeros((n, 5));
    let mut y = Vec::with_capacity(n);
    for mut row in x.rows_mut() {
        row.iter_mut()
            .for_each(|v| *v = (rng.random::<f64>() * 50.0).round() / 50.0);
        let p = if row[0] + row[1] > 1.0 { 0.8 } else { 0.2 };
        y.push(u32::from(rng.random_bool(p)));
    }
    (x, y)
}

fn meta() -> Vec<FeatureMeta> {
    (1..=5)
        .map(|j| FeatureMeta::numeric(format!("x{j}")))
        .collect()
}

fn classes(codes: Vec<u32>) -> Outcome {
    Outcome::Classes {
        codes,
        labels: vec!["a".into(), "b".into()],
    }
}

/// Each row of `x` and `y` repeated `times[i]` times, in row order; with each copy's
/// row of origin.
fn repeated(x: &Array2<f64>, y: &[u32], times: &[usize]) -> (Array2<f64>, Vec<u32>, Vec<u32>) {
    let origin: Vec<u32> = (0..y.len())
        .flat_map(|i| std::iter::repeat_n(i as u32, times[i]))
        .collect();
    let idx: Vec<usize> = origin.iter().map(|&i| i as usize).collect();
    let ys = idx.iter().map(|&i| y[i]).collect();
    (x.select(Axis(0), &idx), ys, origin)
}

fn options<'a>(weights: Option<&'a [f64]>, groups: Option<&'a [u32]>) -> TrainOptions<'a> {
    TrainOptions {
        case_weights: weights,
        groups,
        ..TrainOptions::default()
    }
}

#[test]
fn weights_all_one_give_todays_model_byte_for_byte() {
    let two = synth::twonorm(300, seed(11));
    let fried = synth::friedman1(300, seed(12));
    let sampling = [
        (Sampling::Bootstrap, false),
        (Sampling::Bootstrap, true),
        (Sampling::Subsample(0.6), false),
        (Sampling::Whole, false),
    ];
    for d in [&two, &fried] {
        let ones = vec![1.0; d.x.nrows()];
        for &(sampling, balanced) in &sampling {
            if balanced && !d.outcome.is_classes() {
                continue;
            }
            let s = ForestSettings {
                trees: 20,
                sampling,
                balanced,
                seed: seed(5),
                ..Default::default()
            };
            let plain = Forest::train(d.x.view(), &d.meta, &d.outcome, &s, &options(None, None))
                .expect("trains");
            let weighted = Forest::train(
                d.x.view(),
                &d.meta,
                &d.outcome,
                &s,
                &options(Some(&ones), None),
            )
            .expect("trains");
            assert_eq!(
                plain.forest.to_bytes().expect("bytes"),
                weighted.forest.to_bytes().expect("bytes"),
                "{sampling:?} balanced {balanced}"
            );
            assert!(weighted.forest.card().weights.is_none());
        }
    }
}

/// Test figures of a forest: error, Brier score and mean probability of class "b".
fn test_figures(f: &Forest, x: &Array2<f64>, y: &[u32]) -> [f64; 3] {
    let p = f.predict(x.view()).expect("predicts");
    let m = class_metrics(y, p.view()).expect("measures");
    [m.error, m.brier, p.column(1).mean().expect("rows")]
}

#[test]
fn whole_number_weights_grow_the_forest_of_the_rows_repeated() {
    // A row of weight w stands for w identical rows: each tree draws sum(w) cases with
    // chances w_i / sum(w), so the draws per row of origin are multinomial(sum(w),
    // w / sum(w)), exactly as the bootstrap of the repeated rows aggregated by origin;
    // identical rows always fall on the same side of a split and bins are exact (at
    // most 51 values per input), so the two forests are equal in distribution and
    // every test figure has the same expectation. Weights favour class "b" (1 + 2 for
    // "b" + a coin), so ignoring them moves the mean probability of "b" far, which
    // the last check shows the test would see.
    //
    // Tolerance: over S = 8 seeds the differences d_s (weighted minus repeated, on
    // the same training and test rows) are independent with mean 0; their mean is
    // within 4 standard errors sd(d) / sqrt(S) of 0 unless chance (t with 7 degrees
    // of freedom: P(|t| > 4) = 0.005 per figure).
    let runs = 8;
    let mut diffs = vec![Vec::new(); 3];
    let mut ignored = Vec::new();
    for r in 0..runs {
        let (x, y) = noisy_halves(200, seed(100 + r));
        let (xt, yt) = noisy_halves(4000, seed(200 + r));
        let mut coin = Xoshiro256PlusPlus::seed_from_u64(seed(300 + r));
        let times: Vec<usize> = y
            .iter()
            .map(|&c| 1 + 2 * c as usize + usize::from(coin.random_bool(0.5)))
            .collect();
        let w: Vec<f64> = times.iter().map(|&t| t as f64).collect();
        let (xr, yr, _) = repeated(&x, &y, &times);
        // Independent forest seeds: with one seed the two forests would draw the same
        // cases (a draw maps to the same row of origin either way) and agree exactly,
        // which says less than agreement over independent draws.
        let train = |x: &Array2<f64>, y: &[u32], w: Option<&[f64]>, base: u64| {
            let s = ForestSettings {
                trees: 60,
                seed: seed(base + r),
                ..Default::default()
            };
            Forest::train(
                x.view(),
                &meta(),
                &classes(y.to_vec()),
                &s,
                &options(w, None),
            )
            .expect("trains")
            .forest
        };
        let a = test_figures(&train(&x, &y, Some(&w), 400), &xt, &yt);
        let b = test_figures(&train(&xr, &yr, None, 450), &xt, &yt);
        let plain = test_figures(&train(&x, &y, None, 400), &xt, &yt);
        for k in 0..3 {
            diffs[k].push(a[k] - b[k]);
        }
        ignored.push(plain[2] - b[2]);
        println!("run {r}: weighted {a:.4?}, repeated {b:.4?}, unweighted {plain:.4?}");
    }
    let mean_sd = |d: &[f64]| {
        let m = d.iter().sum::<f64>() / d.len() as f64;
        let v = d.iter().map(|x| (x - m) * (x - m)).sum::<f64>() / (d.len() - 1) as f64;
        (m, v.sqrt())
    };
    let se = |sd: f64| sd / (runs as f64).sqrt();
    for (k, name) in ["error", "Brier", "mean p(b)"].iter().enumerate() {
        let (m, sd) = mean_sd(&diffs[k]);
        println!(
            "{name}: mean difference {m:.5}, standard error {:.5}",
            se(sd)
        );
        assert!(sd > 0.0, "{name}: independent forests cannot agree exactly");
        assert!(m.abs() <= 4.0 * se(sd), "{name}: {m} vs {}", se(sd));
    }
    // The same check would fail for a forest that ignored the weights.
    let (m, sd) = mean_sd(&ignored);
    let (_, sd_w) = mean_sd(&diffs[2]);
    println!("unweighted minus repeated mean p(b): {m:.4}");
    assert!(m.abs() > 4.0 * se(sd.max(sd_w)), "{m} vs {}", se(sd));
}

/// Out-of-bag error of a trained forest.
fn oob_error(f: &Forest) -> f64 {
    match f.oob().metrics.as_ref().expect("rows out of bag") {
        Metrics::Classes(m) => m.error,
        Metrics::Values(_) => unreachable!("a class outcome"),
    }
}

#[test]
fn drawing_whole_groups_keeps_out_of_bag_error_honest_on_repeated_rows() {
    // 300 distinct rows, each present 5 times. Drawing rows, a copy left out of a tree
    // almost always has another copy in it (each of 4 copies is out with chance about
    // e^-1 = 0.37, all four with 0.37^4 = 0.02), so the out-of-bag error is near the
    // training error: optimistic. Drawing whole groups (the row of origin), a row is
    // judged only by trees that saw none of its copies, as a new row would be.
    //
    // Tolerance: the out-of-bag error is a mean over 300 independent rows of origin
    // (copies share their prediction), standard error sqrt(e (1 - e) / 300), about
    // 0.026 at e = 0.3; the test error over 5000 fresh rows has sqrt(t (1 - t) / 5000),
    // about 0.006. Their difference is within 3.5 combined standard errors unless
    // chance (two-sided normal: 0.0005); the plain error must lie below the test
    // error by more than that.
    for r in 0..3 {
        let (x, y) = noisy_halves(300, seed(500 + r));
        let (xr, yr, origin) = repeated(&x, &y, &[5; 300]);
        let (xt, yt) = noisy_halves(5000, seed(600 + r));
        let s = ForestSettings {
            trees: 150,
            seed: seed(700 + r),
            ..Default::default()
        };
        let outcome = classes(yr);
        let train = |groups: Option<&[u32]>| {
            Forest::train(xr.view(), &meta(), &outcome, &s, &options(None, groups))
                .expect("trains")
                .forest
        };
        let plain = train(None);
        let grouped = train(Some(&origin));
        let test = test_figures(&grouped, &xt, &yt)[0];
        let test_plain = test_figures(&plain, &xt, &yt)[0];
        let (e_plain, e_grouped) = (oob_error(&plain), oob_error(&grouped));
        let se = |e: f64, n: f64| e * (1.0 - e) / n;
        let tol = |e: f64, t: f64| 3.5 * (se(e, 300.0) + se(t, 5000.0)).sqrt();
        println!(
            "run {r}: out-of-bag plain {e_plain:.4} (test {test_plain:.4}), grouped \
             {e_grouped:.4} (test {test:.4}), tolerance {:.4}",
            tol(e_grouped, test)
        );
        assert!(
            e_plain < test_plain - tol(e_plain, test_plain),
            "plain out-of-bag error {e_plain} is not clearly below the test error {test_plain}"
        );
        assert!(
            (e_grouped - test).abs() < tol(e_grouped, test),
            "grouped out-of-bag error {e_grouped} vs test error {test}"
        );
        let g = grouped.card().groups.as_ref().expect("groups recorded");
        assert_eq!((g.groups, g.smallest, g.largest), (300, 5, 5));
    }
}

#[test]
fn zero_weight_rows_are_judged_by_every_tree_and_count_nothing() {
    let (x, y) = noisy_halves(200, seed(800));
    let mut w = vec![1.0; 200];
    (0..200).step_by(4).for_each(|i| w[i] = 0.0);
    let s = ForestSettings {
        trees: 30,
        seed: seed(801),
        ..Default::default()
    };
    let outcome = classes(y.clone());
    let t =
        Forest::train(x.view(), &meta(), &outcome, &s, &options(Some(&w), None)).expect("trains");
    // Never drawn, so out of bag for every tree.
    assert!((0..200).step_by(4).all(|i| t.oob.trees_out[i] == 30));
    let rec = t.forest.card().weights.as_ref().expect("weights recorded");
    assert_eq!((rec.zero_rows, rec.total), (50, 150.0));
    // The stored out-of-bag measures are those of the per-row predictions weighed by
    // the weights: the same as measuring only the rows of weight 1.
    let keep: Vec<usize> = (0..200).filter(|i| i % 4 != 0).collect();
    let sub_codes: Vec<u32> = keep.iter().map(|&i| y[i]).collect();
    let sub = class_metrics(&sub_codes, t.oob.predictions.select(Axis(0), &keep).view())
        .expect("measures");
    let Some(Metrics::Classes(m)) = &t.forest.oob().metrics else {
        panic!("class measures expected")
    };
    assert!((m.error - sub.error).abs() < 1e-12);
    assert!((m.brier - sub.brier).abs() < 1e-12);
    assert_eq!(m.rows, 200);
    let table = m.weighted.as_ref().expect("weighted table");
    assert_eq!(table.total, 150.0);
    // Negative weights are refused, naming the row.
    w[7] = -1.0;
    let e = Forest::train(x.view(), &meta(), &outcome, &s, &options(Some(&w), None))
        .expect_err("refused");
    assert!(e.message().contains("row 8"), "{}", e.message());
}
