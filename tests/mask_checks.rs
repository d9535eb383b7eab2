//! Scoring by leaf masks (`copse_forest::leaf_masks`, after Lucchese et al. 2015,
//! "QuickScorer", SIGIR) against the node walk: every tree's leaf and every prediction
//! the same to the bit, on the invented demo register (the project's own demo data),
//! the Palmer penguins (categories and missing values; Gorman, Williams & Fraser 2014),
//! Fisher's iris (three classes), twonorm (Breiman 1996) and Friedman #1 (regression),
//! and on rows with unseen, malformed and missing values.
use copse_forest::leaf_masks::LeafMasks;
use copse_forest::synth;
use copse_forest::{FeatureMeta, Forest, ForestSettings, Outcome, TrainOptions, TreeRules};
use ndarray::{Array2, Axis};
use rand::{RngExt, SeedableRng};
use rand_xoshiro::Xoshiro256PlusPlus;

mod support;
use support::seed;

fn train(x: &Array2<f64>, meta: &[FeatureMeta], y: &Outcome, trees: usize, base: u64) -> Forest {
    let settings = ForestSettings {
        trees,
        seed: seed(base),
        tree: TreeRules {
            min_leaf: 1.0,
            ..TreeRules::default()
        },
        ..ForestSettings::default()
    };
    let options = TrainOptions {
        oob_importance: false,
        ..TrainOptions::default()
    };
    Forest::train(x.view(), meta, y, &settings, &options)
        .expect("training succeeds")
        .forest
}

/// Checks the layout against the walk on `x`, bare and with snapshots of the bit
/// vectors every few masks: each tree's leaf row by row, and the forest's predictions
/// bit for bit.
fn same_as_walk(forest: &Forest, x: &Array2<f64>, what: &str) {
    let bare = LeafMasks::new(forest).expect("the layout holds the model");
    let mut layouts = vec![bare.clone()];
    for spacing in [1, 7, 200] {
        let mut m = bare.clone();
        m.keep_snapshots(spacing, 1 << 30);
        if spacing == 1 {
            assert!(m.snapshot_bytes() > 0, "{what}: snapshots every mask");
        }
        layouts.push(m);
    }
    let (n, p) = x.dim();
    let flat: Vec<f64> = x.iter().copied().collect();
    let walk = forest.predict(x.view()).expect("walk");
    for masks in &layouts {
        let mut state = vec![0u64; masks.n_words()];
        let mut leaves = vec![u32::MAX; forest.trees().len() * n];
        masks.leaf_indices(&flat, p, n, &mut state, &mut leaves);
        for (t, tree) in forest.trees().iter().enumerate() {
            for r in 0..n {
                let want = tree.leaf_index(&flat[r * p..(r + 1) * p]) as u32;
                assert_eq!(leaves[t * n + r], want, "{what}: tree {t}, row {r}");
            }
        }
        let by_masks = forest.predict_by_masks(masks, x.view()).expect("masks");
        assert_eq!(walk.dim(), by_masks.dim());
        for (a, b) in walk.iter().zip(by_masks.iter()) {
            assert_eq!(a.to_bits(), b.to_bits(), "{what}: {a} against {b}");
        }
    }
}

/// `x` with some values replaced: missing values everywhere, and in category columns
/// codes the model never saw, negative, fractional and infinite ones.
fn spoiled(x: &Array2<f64>, meta: &[FeatureMeta], base: u64) -> Array2<f64> {
    let mut rng = Xoshiro256PlusPlus::seed_from_u64(seed(base));
    let mut y = x.clone();
    let odd = [
        f64::NAN,
        -1.0,
        0.5,
        1e9,
        f64::INFINITY,
        -0.0,
        63.0,
        64.0,
        65.0,
    ];
    for mut row in y.rows_mut() {
        for (j, v) in row.iter_mut().enumerate() {
            if rng.random_bool(0.1) {
                *v = if meta[j].is_categorical() {
                    odd[rng.random_range(0..odd.len())]
                } else {
                    f64::NAN
                };
            }
        }
    }
    y
}

/// The first `n` rows of `x`.
fn first(x: &Array2<f64>, n: usize) -> Array2<f64> {
    x.select(Axis(0), &(0..n).collect::<Vec<_>>())
}

#[test]
fn demo_register_gives_the_walks_leaves_and_predictions() {
    // The invented water-main register of `copse demo`, its model as the demo grows it
    // (500 trees, min leaf 1); the identifier column is left out.
    let d = support::read_data_set("../../demo-data/water_mains.csv", "failed_within_year");
    let x = d.x.select(Axis(1), &(1..d.x.ncols()).collect::<Vec<_>>());
    let meta = d.meta[1..].to_vec();
    assert!(meta.iter().any(FeatureMeta::is_categorical));
    assert!(
        x.iter().any(|v| v.is_nan()),
        "install years are missing for some mains"
    );
    let y = Outcome::from_labels(d.target.iter().map(Some));
    let forest = train(&x, &meta, &y, 500, 1);
    same_as_walk(&forest, &first(&x, 600), "demo training rows");
    same_as_walk(&forest, &spoiled(&first(&x, 300), &meta, 2), "demo spoiled");
    // The layout `copse score` chooses for this model (8 inputs, about 3 words of bit
    // vector a tree), with its snapshots: the walk's predictions to the bit.
    let chosen = LeafMasks::for_scoring(&forest).expect("the demo's model takes the layout");
    assert!(chosen.snapshot_bytes() > 0);
    let rows = spoiled(&first(&x, 300), &meta, 3);
    let by_masks = forest
        .predict_by_masks(&chosen, rows.view())
        .expect("masks");
    let walk = forest.predict(rows.view()).expect("walk");
    assert!(by_masks
        .iter()
        .zip(walk.iter())
        .all(|(a, b)| a.to_bits() == b.to_bits()));
}

#[test]
fn penguins_classes_and_masses_give_the_walks_predictions() {
    // Palmer penguins (Gorman, Williams & Fraser 2014, PLoS ONE 9(3):e90081): island
    // and sex are categories, two birds have no measurements and eleven no sex.
    let d = support::read_data_set("penguins.csv", "species");
    let y = Outcome::from_labels(d.target.iter().map(Some));
    let forest = train(&d.x, &d.meta, &y, 60, 3);
    assert_eq!(forest.n_outputs(), 3);
    same_as_walk(&forest, &d.x, "penguin species");
    same_as_walk(
        &forest,
        &spoiled(&d.x, &d.meta, 4),
        "penguin species, spoiled",
    );
    let m = support::read_data_set("penguins.csv", "body_mass_g");
    let keep: Vec<usize> = (0..m.target.len())
        .filter(|&i| m.target[i] != "NA")
        .collect();
    let x = m.x.select(Axis(0), &keep);
    let mass = Outcome::Values(
        keep.iter()
            .map(|&i| m.target[i].parse().expect("grams"))
            .collect(),
    );
    let forest = train(&x, &m.meta, &mass, 60, 5);
    same_as_walk(&forest, &x, "penguin mass");
    same_as_walk(&forest, &spoiled(&x, &m.meta, 6), "penguin mass, spoiled");
}

#[test]
fn iris_twonorm_and_friedman_give_the_walks_predictions() {
    // Fisher's iris (1936), three classes; twonorm (Breiman 1996), two classes of 20
    // numeric inputs; Friedman #1 (1991), regression on 10 inputs.
    let d = support::read_data_set("iris.csv", "species");
    let y = Outcome::from_labels(d.target.iter().map(Some));
    let forest = train(&d.x, &d.meta, &y, 50, 7);
    same_as_walk(&forest, &d.x, "iris");
    same_as_walk(&forest, &spoiled(&d.x, &d.meta, 8), "iris, spoiled");
    let tw = synth::twonorm(800, seed(9));
    let forest = train(&tw.x, &tw.meta, &tw.outcome, 40, 10);
    let fresh = synth::twonorm(300, seed(11));
    same_as_walk(&forest, &fresh.x, "twonorm");
    // Deeper trees on 20 inputs: each row would AND 20 snapshots of some 5 words a
    // tree, more than the walk's visits cost, so `copse score` keeps the walk.
    let big = synth::twonorm(3000, seed(16));
    let deep = train(&big.x, &big.meta, &big.outcome, 20, 17);
    assert!(LeafMasks::for_scoring(&deep).is_none());
    let fr = synth::friedman1(800, seed(12));
    let forest = train(&fr.x, &fr.meta, &fr.outcome, 40, 13);
    let fresh = synth::friedman1(300, seed(14));
    same_as_walk(&forest, &fresh.x, "friedman #1");
    same_as_walk(
        &forest,
        &spoiled(&fresh.x, &fr.meta, 15),
        "friedman #1, spoiled",
    );
}
