//! Checks of the outcome quantiles and ranges of quantile regression forests
//! (Meinshausen 2006, "Quantile regression forests", JMLR 7:983-999): the kept leaf
//! rows reproduce every leaf's mean; the engine's quantiles equal a slow computation
//! of the paper's weights from the draw counts; held-out and out-of-bag coverage of
//! 90% ranges on Friedman #1 and on the Palmer penguins' body masses; ranges that
//! widen where the noise is larger. Each
//! statistical tolerance is derived in a comment; figures are printed (run with
//! `--nocapture`). Seeds move with `COPSE_TEST_SEED_OFFSET` (`support::seed`).
use copse_forest::intervals::weighted_quantiles;
use copse_forest::synth::{self, Synthetic};
use copse_forest::{
    ErrorKind, FeatureMeta, FeaturesPerSplit, Forest, ForestSettings, Outcome, TrainOptions,
    TreeRules,
};
use ndarray::{Array2, ArrayView2, Axis};
use rand::{RngExt, SeedableRng};
use rand_xoshiro::Xoshiro256PlusPlus;

mod support;
use support::seed;

/// Training options keeping the leaf rows, without out-of-bag importance.
fn keeping() -> TrainOptions<'static> {
    TrainOptions {
        keep_leaf_rows: true,
        oob_importance: false,
        ..TrainOptions::default()
    }
}

/// Regression forest settings with leaves of at least 5 cases (the usual leaf size for
/// regression forests, and the one Meinshausen's experiments used: common practice).
fn settings(trees: usize, base: u64) -> ForestSettings {
    ForestSettings {
        trees,
        seed: seed(base),
        tree: TreeRules {
            min_leaf: 5.0,
            ..TreeRules::default()
        },
        ..ForestSettings::default()
    }
}

fn train(x: ArrayView2<'_, f64>, meta: &[FeatureMeta], y: &Outcome, s: &ForestSettings) -> Forest {
    Forest::train(x, meta, y, s, &keeping())
        .expect("training succeeds")
        .forest
}

fn values(o: &Outcome) -> &[f64] {
    match o {
        Outcome::Values(v) => v,
        Outcome::Classes { .. } => panic!("a numeric outcome"),
    }
}

/// Share of `y` inside the rows of `ranges` (low, high), and the mean width.
fn coverage(ranges: &Array2<f64>, y: &[f64]) -> (f64, f64) {
    let inside = ranges
        .rows()
        .into_iter()
        .zip(y)
        .filter(|(r, &v)| r[0] <= v && v <= r[1])
        .count();
    let width = ranges.rows().into_iter().map(|r| r[1] - r[0]).sum::<f64>();
    (inside as f64 / y.len() as f64, width / y.len() as f64)
}

#[test]
fn kept_leaf_rows_reproduce_every_leaf_mean() {
    // Each tree's leaf holds the mean outcome of the draws that reached it while
    // growing; the kept members (ranks into the sorted outcomes, with draw counts)
    // must give the same mean, so membership is the grower's, and every tree's draws
    // add up to the n bootstrap draws.
    let d = synth::friedman1(400, seed(3));
    let opts = TrainOptions {
        keep_draws: true,
        ..keeping()
    };
    let f = Forest::train(d.x.view(), &d.meta, &d.outcome, &settings(20, 4), &opts)
        .expect("training succeeds")
        .forest;
    let rows = f.leaf_rows().expect("kept");
    let sorted = rows.outcomes();
    assert_eq!(sorted.len(), 400);
    assert!(sorted.windows(2).all(|w| w[0] <= w[1]));
    // Under the bootstrap about 63.2% of the rows are drawn by a tree (common
    // practice): 20 trees of 400 rows hold about 5,057 members, sd about 43.
    let members = rows.members() as f64;
    assert!((members - 5057.0).abs() < 300.0, "{members}");
    let draws = f.draws().expect("kept");
    let y = values(&d.outcome);
    let x = d.x.view();
    for (t, tree) in f.trees().iter().enumerate() {
        // The members again, from the draw counts and a descent of every row.
        let mut sum = vec![0.0; tree.nodes().len()];
        let mut cnt = vec![0.0; tree.nodes().len()];
        for (i, &yi) in y.iter().enumerate() {
            let c = f64::from(draws.count(i, t));
            let leaf = tree.leaf_index(x.row(i).as_slice().expect("rows are contiguous"));
            sum[leaf] += c * yi;
            cnt[leaf] += c;
        }
        assert_eq!(cnt.iter().sum::<f64>(), 400.0);
        for leaf in tree.leaves() {
            let mean = sum[leaf] / cnt[leaf];
            let stored = tree.leaf_value(leaf)[0];
            assert!(
                (mean - stored).abs() < 1e-9 * (1.0 + stored.abs()),
                "tree {t} leaf {leaf}"
            );
        }
    }
    // The model file carries the leaf rows.
    let back = Forest::from_bytes(&f.to_bytes().expect("bytes"), "memory").expect("reads");
    assert_eq!(back, f);
}

#[test]
fn quantiles_equal_a_direct_computation_of_the_weights() {
    // The paper's weights computed directly: w_i(x) = (1/k) sum_t c_ti [leaf_t(x_i) =
    // leaf_t(x)] / sum_j c_tj [leaf_t(x_j) = leaf_t(x)], from the draw counts and a
    // descent of every training row, then the weighted quantile of the outcomes.
    let d = synth::friedman1(300, seed(7));
    let opts = TrainOptions {
        keep_draws: true,
        ..keeping()
    };
    let f = Forest::train(d.x.view(), &d.meta, &d.outcome, &settings(30, 8), &opts)
        .expect("training succeeds")
        .forest;
    let draws = f.draws().expect("kept");
    let y = values(&d.outcome);
    let fresh = synth::friedman1(40, seed(9));
    let levels = [0.05, 0.25, 0.5, 0.75, 0.95, 0.0, 1.0];
    let engine = f
        .outcome_quantiles(fresh.x.view(), &levels)
        .expect("quantiles");
    let leaf_of = |t: usize, row: ndarray::ArrayView1<'_, f64>| {
        f.trees()[t].leaf_index(row.as_slice().expect("contiguous"))
    };
    for (r, row) in fresh.x.rows().into_iter().enumerate() {
        let mut w = vec![0.0; y.len()];
        for t in 0..f.trees().len() {
            let leaf = leaf_of(t, row);
            let members: Vec<usize> = (0..y.len())
                .filter(|&i| leaf_of(t, d.x.row(i)) == leaf)
                .collect();
            let total: f64 = members.iter().map(|&i| f64::from(draws.count(i, t))).sum();
            for i in members {
                w[i] += f64::from(draws.count(i, t)) / total / f.trees().len() as f64;
            }
        }
        let want = weighted_quantiles(y, &w, &levels).expect("quantiles");
        assert_eq!(engine.row(r).to_vec(), want, "row {r}");
        // The weighted mean of the distribution is the forest's prediction.
        let mean: f64 = w.iter().zip(y).map(|(w, y)| w * y).sum();
        let pred = f
            .predict(fresh.x.select(Axis(0), &[r]).view())
            .expect("scores")[[0, 0]];
        assert!((mean - pred).abs() < 1e-9 * (1.0 + pred.abs()), "row {r}");
    }
    // The same for any number of threads, and for rows one at a time.
    for threads in [1, 3] {
        let again = rayon::ThreadPoolBuilder::new()
            .num_threads(threads)
            .build()
            .expect("pool")
            .install(|| f.outcome_quantiles(fresh.x.view(), &levels))
            .expect("quantiles");
        assert_eq!(again, engine);
    }
    let one = f
        .outcome_quantiles(fresh.x.select(Axis(0), &[5]).view(), &levels)
        .expect("quantiles");
    assert_eq!(one.row(0), engine.row(5));
}

#[test]
fn friedman_held_out_and_out_of_bag_ranges_cover_about_90_percent() {
    // Friedman #1 (Friedman 1991, Annals of Statistics 19:1-67): y = 10 sin(pi x1 x2)
    // + 20 (x3 - 0.5)^2 + 10 x4 + 5 x5 + N(0, 1). Meinshausen (2006, section 5) reports
    // quantile regression forests' 90% ranges covering close to 90% of held-out
    // outcomes. With 2,000 held-out rows the share of a true 0.90 has a sampling
    // sd of sqrt(0.9 * 0.1 / 2000) = 0.0067, and the band 0.85..0.95 leaves the
    // method's own bias the rest. The ranges lean wide: a leaf mixes training rows
    // whose means differ, so the weighted outcomes spread more than the noise does.
    // With a third of the inputs tried per split, half of Friedman #1's inputs being
    // noise, leaves are coarse and the share inside came out 0.96 to 0.98 (measured
    // over four seeds, 1,000 training rows, leaves of 1 or 5); trying every input
    // (bagged trees) and leaves of one row, copse's default, it came out 0.927 to
    // 0.932 held out and 0.919 to 0.940 out of bag (five seeds), so this check uses
    // those settings.
    let train_d = synth::friedman1(1000, seed(21));
    let test = synth::friedman1(2000, seed(22));
    let s = ForestSettings {
        features_per_split: FeaturesPerSplit::Every,
        tree: TreeRules::default(),
        ..settings(300, 23)
    };
    let f = train(train_d.x.view(), &train_d.meta, &train_d.outcome, &s);
    let ranges = f.outcome_intervals(test.x.view(), 0.9).expect("ranges");
    let (share, width) = coverage(&ranges, values(&test.outcome));
    let oob = f.leaf_rows().and_then(|r| r.oob_check()).expect("checked");
    println!(
        "Friedman #1: held-out share inside {share:.3} (mean width {width:.2}); out-of-bag \
         {:.3} of {} (mean width {:.2})",
        oob.share_inside(),
        oob.rows,
        oob.mean_width
    );
    assert!((0.85..=0.95).contains(&share), "held-out share {share}");
    // Out-of-bag: 1,000 rows, sd 0.0095; the same band is over 5 sd.
    assert!(
        (0.85..=0.95).contains(&oob.share_inside()),
        "oob {}",
        oob.share_inside()
    );
    assert_eq!(oob.level, 0.9);
    assert!(oob.rows >= 990, "rows judged {}", oob.rows);
    // Widths: a 90% range of the noise alone is 2 * 1.645 = 3.29 wide; the forest
    // adds its own error (out-of-bag MSE near 4 on 1,000 rows), so ranges must be
    // wider than the noise's and narrower than the outcome's own 90% range (about
    // 16: sd 4.98, computed from the generating formula).
    assert!(width > 3.29 && width < 16.0, "width {width}");
}

/// The Palmer penguins with a known body mass: inputs (every other column) and the
/// mass in grams.
fn penguins() -> (Array2<f64>, Vec<FeatureMeta>, Vec<f64>) {
    let d = support::read_data_set("penguins.csv", "body_mass_g");
    let keep: Vec<usize> = (0..d.target.len())
        .filter(|&i| d.target[i] != "NA")
        .collect();
    let y = keep
        .iter()
        .map(|&i| d.target[i].parse().expect("a mass in grams"))
        .collect();
    (d.x.select(Axis(0), &keep), d.meta, y)
}

#[test]
fn penguin_body_mass_ranges_cover_about_90_percent_of_held_out_birds() {
    // Palmer penguins (Gorman, Williams & Fraser 2014, PLoS ONE 9(3):e90081), body
    // mass in grams from species, island, bill, flipper, sex and year. Five-fold
    // cross-validation holds out every one of the 342 birds once: the share of a true
    // 0.90 then has a sampling sd of about sqrt(0.09 / 342) = 0.016, so the band
    // 0.85..0.95 is about 3 sd either side.
    let (x, meta, y) = penguins();
    let n = y.len();
    let mut rng = Xoshiro256PlusPlus::seed_from_u64(seed(31));
    let mut order: Vec<usize> = (0..n).collect();
    for i in (1..n).rev() {
        order.swap(i, rng.random_range(0..=i));
    }
    let mut inside = 0;
    let mut width = 0.0;
    for fold in 0..5 {
        let (held, kept): (Vec<usize>, Vec<usize>) = order.iter().partition(|&&i| i % 5 == fold);
        let xt = x.select(Axis(0), &kept);
        let yt = Outcome::Values(kept.iter().map(|&i| y[i]).collect());
        let f = train(xt.view(), &meta, &yt, &settings(300, 32 + fold as u64));
        let r = f
            .outcome_intervals(x.select(Axis(0), &held).view(), 0.9)
            .expect("ranges");
        for (row, &i) in r.rows().into_iter().zip(&held) {
            inside += usize::from(row[0] <= y[i] && y[i] <= row[1]);
            width += row[1] - row[0];
        }
    }
    let share = inside as f64 / n as f64;
    let f = train(
        x.view(),
        &meta,
        &Outcome::Values(y.clone()),
        &settings(300, 37),
    );
    let oob = f.leaf_rows().and_then(|r| r.oob_check()).expect("checked");
    println!(
        "penguins: held-out share inside {share:.3} (mean width {:.0} g); out-of-bag {:.3} \
         (mean width {:.0} g)",
        width / n as f64,
        oob.share_inside(),
        oob.mean_width
    );
    assert!((0.85..=0.95).contains(&share), "held-out share {share}");
    assert!(
        (0.85..=0.95).contains(&oob.share_inside()),
        "oob {}",
        oob.share_inside()
    );
}

/// Our own heteroscedastic problem: x uniform on the unit cube in 3 dimensions,
/// y = 4 x2 + 2 x1 e with e ~ N(0, 1): the noise sd is 2 x1, proportional to x1; x3
/// has no effect.
fn spread_with_x1(n: usize, seed: u64) -> Synthetic {
    let mut rng = Xoshiro256PlusPlus::seed_from_u64(seed);
    let normal = rand_distr::StandardNormal;
    let x = Array2::from_shape_fn((n, 3), |_| rng.random::<f64>());
    let y = x
        .rows()
        .into_iter()
        .map(|r| 4.0 * r[1] + 2.0 * r[0] * rng.sample::<f64, _>(normal))
        .collect();
    Synthetic {
        x,
        outcome: Outcome::Values(y),
        meta: (1..=3)
            .map(|j| FeatureMeta::numeric(format!("x{j}")))
            .collect(),
    }
}

#[test]
fn ranges_widen_where_the_noise_is_larger() {
    // Noise sd 2 x1: over x1 in [0.1, 0.3] its mean is 0.4, over [0.7, 0.9] it is 1.6.
    // A 90% range of a normal is 2 * 1.645 sd wide, so the mean widths of exact ranges
    // stand in the ratio 1.6 / 0.4 = 4 (1.316 and 5.264). The trees split where the
    // mean changes, and x1 changes only the spread, so leaves span much of x1 and each
    // region's ranges lean toward the other's: the ratio comes out below 4 (2.85 to
    // 2.94 measured over three seeds). We ask for more than half of the known ratio on
    // a log scale (above sqrt(4) = 2) and no more than 10% above it; each region's
    // mean width, over about 1,500 held-out rows, has a sampling sd below 2%, far
    // inside that.
    let d = spread_with_x1(3000, seed(41));
    let f = train(d.x.view(), &d.meta, &d.outcome, &settings(300, 42));
    let test = spread_with_x1(7500, seed(43));
    let ranges = f.outcome_intervals(test.x.view(), 0.9).expect("ranges");
    let y = values(&test.outcome);
    let region = |lo: f64, hi: f64| -> (f64, f64, usize) {
        let rows: Vec<usize> = (0..y.len())
            .filter(|&i| (lo..hi).contains(&test.x[[i, 0]]))
            .collect();
        let r = ranges.select(Axis(0), &rows);
        let ys: Vec<f64> = rows.iter().map(|&i| y[i]).collect();
        let (share, width) = coverage(&r, &ys);
        (share, width, rows.len())
    };
    let (quiet_share, quiet, nq) = region(0.1, 0.3);
    let (noisy_share, noisy, nn) = region(0.7, 0.9);
    println!(
        "noise sd 2 x1: x1 in [0.1, 0.3]: width {quiet:.3} (exact 1.316), share inside \
         {quiet_share:.3} of {nq}; x1 in [0.7, 0.9]: width {noisy:.3} (exact 5.264), share \
         {noisy_share:.3} of {nn}; ratio {:.2} (exact 4)",
        noisy / quiet
    );
    assert!(
        (2.0..=4.4).contains(&(noisy / quiet)),
        "ratio {}",
        noisy / quiet
    );
    // Each region's own share inside: for the same reason the quiet region's lean
    // above 0.9 and the noisy region's below (0.82 to 0.86 measured); 1,500 rows give
    // a sampling sd of 0.008, so a share outside 0.75..0.99 means the ranges do not
    // follow the noise at all.
    for share in [quiet_share, noisy_share] {
        assert!((0.75..=0.99).contains(&share), "share {share}");
    }
}

#[test]
fn quantiles_are_refused_without_leaf_rows_or_for_classes() {
    let d = synth::friedman1(100, 1);
    let plain = TrainOptions {
        oob_importance: false,
        ..TrainOptions::default()
    };
    let f = Forest::train(d.x.view(), &d.meta, &d.outcome, &settings(5, 1), &plain)
        .expect("trains")
        .forest;
    let e = f
        .outcome_intervals(d.x.view(), 0.9)
        .expect_err("no leaf rows");
    assert_eq!(e.kind(), ErrorKind::InvalidSetting);
    assert!(e.message().contains("keep_leaf_rows"), "{}", e.message());
    let c = synth::twonorm(100, 1);
    let e = Forest::train(c.x.view(), &c.meta, &c.outcome, &settings(5, 1), &keeping())
        .expect_err("classes");
    assert_eq!(e.kind(), ErrorKind::InvalidSetting);
    let f = train(d.x.view(), &d.meta, &d.outcome, &settings(5, 1));
    for bad in [0.0, 1.0, -0.5, f64::NAN] {
        assert!(f.outcome_intervals(d.x.view(), bad).is_err(), "{bad}");
    }
    assert!(f.outcome_quantiles(d.x.view(), &[1.2]).is_err());
}
