//! Checks of per-row contributions (exact Shapley values of the forest, Lundberg et
//! al. 2020, "From local explanations to global understanding with explainable AI for
//! trees", Nature Machine Intelligence 2:56-67) through the public API: the Shapley
//! axioms of symmetry and the dummy player (Shapley 1953, "A value for n-person
//! games") with hand-worked values on constructed data, and the contribution ranking
//! on Friedman #1, whose noise inputs must get next to nothing. Additivity and the
//! all-subset reference sit beside the code (`contributions/tests.rs`). Seeds move
//! with `COPSE_TEST_SEED_OFFSET` (`support::seed`).
use copse_forest::synth;
use copse_forest::{
    FeatureMeta, FeaturesPerSplit, Forest, ForestSettings, Outcome, Sampling, TrainOptions,
    TreeRules,
};
use ndarray::{array, Array2};
use rand::{RngExt, SeedableRng};
use rand_xoshiro::Xoshiro256PlusPlus;

mod support;
use support::seed;

fn options() -> TrainOptions<'static> {
    TrainOptions {
        oob_importance: false,
        ..TrainOptions::default()
    }
}

/// 100 rows of a constructed "and" problem: x1 and x2 each 0.25 or 0.75 in equal
/// numbers in every combination, the class 1 exactly when both are 0.75; x3 is
/// uniform noise that no tree needs (two splits already make every leaf pure).
fn and_forest() -> Forest {
    let mut rng = Xoshiro256PlusPlus::seed_from_u64(seed(41));
    let mut x = Array2::zeros((100, 3));
    let mut codes = Vec::new();
    for r in 0..100 {
        let (a, b) = (r % 2 == 1, (r / 2) % 2 == 1);
        x[[r, 0]] = if a { 0.75 } else { 0.25 };
        x[[r, 1]] = if b { 0.75 } else { 0.25 };
        x[[r, 2]] = rng.random::<f64>();
        codes.push(u32::from(a && b));
    }
    let meta = ["x1", "x2", "x3"].map(FeatureMeta::numeric).to_vec();
    let outcome = Outcome::Classes {
        codes,
        labels: vec!["no".into(), "yes".into()],
    };
    // Whole data and every input at every split: each tree is the same two-level tree.
    let settings = ForestSettings {
        trees: 3,
        sampling: Sampling::Whole,
        features_per_split: FeaturesPerSplit::Every,
        seed: seed(42),
        ..Default::default()
    };
    Forest::train(x.view(), &meta, &outcome, &settings, &options())
        .expect("fixed data")
        .forest
}

#[test]
fn symmetric_inputs_share_equally_and_a_dummy_gets_nothing() {
    let forest = and_forest();
    let rows = array![
        [0.75, 0.75, 0.3],
        [0.25, 0.25, 0.9],
        [0.75, 0.25, 0.5],
        [0.25, 0.75, 0.1]
    ];
    let c = forest.contributions(rows.view()).expect("fixed data");
    // Class "yes" (output 1). By hand from v(S) = E[f | x_S] with the four cells equally
    // covered: v({}) = 1/4; for x1 = x2 = 0.75, v({1}) = v({2}) = 1/2 and v({1,2}) = 1,
    // so each input gets (1/4 + 1/2) / 2 = 0.375; for both 0.25, v({1}) = v({2}) =
    // v({1,2}) = 0, each -0.125; for 0.75 and 0.25, the high input gets ((1/2 - 1/4) +
    // 0) / 2 = 0.125 and the low one ((0 - 1/4) + (0 - 1/2)) / 2 = -0.375.
    assert!((c.base[1] - 0.25).abs() < 1e-12, "base {}", c.base[1]);
    let want = [
        [0.375, 0.375],
        [-0.125, -0.125],
        [0.125, -0.375],
        [-0.375, 0.125],
    ];
    for (r, w) in want.iter().enumerate() {
        for (j, &v) in w.iter().enumerate() {
            let got = c.values[[r, j, 1]];
            assert!(
                (got - v).abs() < 1e-12,
                "row {r} x{}: {got} against {v}",
                j + 1
            );
            // Two classes: the first class moves by exactly the opposite.
            assert!((c.values[[r, j, 0]] + got).abs() < 1e-12);
        }
        // Symmetry: swapping x1 and x2 in the row swaps their contributions.
        assert_eq!(c.values[[r, 2, 1]], 0.0, "the dummy x3 on row {r}");
        assert_eq!(c.values[[r, 2, 0]], 0.0, "the dummy x3 on row {r}");
    }
    assert_eq!(c.values[[2, 0, 1]], c.values[[3, 1, 1]]);
    assert_eq!(c.values[[2, 1, 1]], c.values[[3, 0, 1]]);
}

#[test]
fn noise_inputs_of_friedman_one_get_next_to_nothing() {
    // Friedman #1 (Friedman 1991, "Multivariate adaptive regression splines", Annals of
    // Statistics 19:1-67): y = 10 sin(pi x1 x2) + 20 (x3 - 0.5)^2 + 10 x4 + 5 x5 + e,
    // e ~ N(0, 1); x6..x10 do not enter y.
    let train = synth::friedman1(1000, seed(43));
    let fresh = synth::friedman1(1000, seed(44));
    let settings = ForestSettings {
        trees: 100,
        seed: seed(45),
        tree: TreeRules {
            min_leaf: 5.0,
            ..Default::default()
        },
        ..Default::default()
    };
    let forest = Forest::train(
        train.x.view(),
        &train.meta,
        &train.outcome,
        &settings,
        &options(),
    )
    .expect("fixed data")
    .forest;
    let ranking = forest
        .contribution_ranking(fresh.x.view(), 500)
        .expect("fixed data");
    assert_eq!((ranking.rows, ranking.rows_given), (500, 1000));
    let m = &ranking.mean_abs;
    eprintln!("mean |contribution| per input: {m:.3?}");
    // The true model's mean absolute effect of x4 is 10 E|x4 - 1/2| = 2.5 and of x5
    // 5 E|x5 - 1/2| = 1.25 (x uniform on [0, 1]). A noise input moves a prediction only
    // through the training noise the leaves keep: a leaf of at least 5 rows averages
    // their noise to a standard deviation of at most 1 / sqrt(5) = 0.45, and averaging
    // 100 trees whose leaves overlap shrinks it further; the five noise inputs and the
    // five real ones split that among them. Half of 0.45 is a generous ceiling for any
    // one noise input (its mean absolute share), and below a fifth of x5's 1.25.
    for (j, &v) in m.iter().enumerate().skip(5) {
        assert!(
            v < 0.225,
            "noise input x{} has mean |contribution| {v}",
            j + 1
        );
    }
    // The real inputs stand clear of them: x1, x2 and x4 first three in some order,
    // and every one of x1..x5 above every noise input.
    let top3: Vec<usize> = ranking.order[..3].to_vec();
    for j in [0, 1, 3] {
        assert!(
            top3.contains(&j),
            "x{} not in the top three: {top3:?}",
            j + 1
        );
    }
    let noise_top = m[5..].iter().copied().fold(0.0, f64::max);
    for (j, &v) in m.iter().enumerate().take(5) {
        assert!(
            v > noise_top,
            "x{} ({v}) not above the noise ({noise_top})",
            j + 1
        );
    }
}
