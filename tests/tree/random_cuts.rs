//! Randomized cut points (`CutChoice::Random`; Geurts, Ernst & Wehenkel 2006, "Extremely
//! randomized trees", Machine Learning 63:3-42): where the drawn cuts fall, that trees
//! grow until their leaves are pure as in the paper, categorical subsets, and
//! determinism by seed. The default search is checked everywhere else.
use crate::support::seed as test_seed;
use copse_tree::{BinnedData, CutChoice, FeatureMeta, Grower, OutcomeView, TreeSettings};
use ndarray::Array2;
use rand::{RngExt, SeedableRng};
use rand_xoshiro::Xoshiro256PlusPlus;

fn random_cuts() -> TreeSettings {
    TreeSettings {
        cuts: CutChoice::Random,
        ..TreeSettings::default()
    }
}

/// Rows of `p` numeric inputs uniform on (0, 1), all distinct with probability one.
fn uniform_rows(n: usize, p: usize, seed: u64) -> (Array2<f64>, Vec<FeatureMeta>) {
    let mut rng = Xoshiro256PlusPlus::seed_from_u64(seed);
    let x = Array2::from_shape_fn((n, p), |_| rng.random::<f64>());
    let meta = (0..p)
        .map(|j| FeatureMeta::numeric(format!("x{j}")))
        .collect();
    (x, meta)
}

/// The paper grows each tree until its leaves are pure (or too small to split); with
/// one case per leaf allowed and no two rows sharing their inputs, every training row
/// is predicted exactly: its class with share 1 (two and three classes, the two
/// engines), its own value (regression). Drawn cuts that leave the class shares
/// unchanged still split, so no node stops impure.
#[test]
fn random_cut_trees_grow_until_their_leaves_are_pure() {
    let (x, meta) = uniform_rows(300, 5, test_seed(1));
    let data = BinnedData::new(x.view(), &meta, 65536).expect("bins");
    let mut rng = Xoshiro256PlusPlus::seed_from_u64(test_seed(2));
    for k in [2u32, 3] {
        let y: Vec<u32> = (0..300).map(|_| rng.random_range(0..k)).collect();
        let target = OutcomeView::classes(&y, k as usize).expect("target");
        for fps in [None, Some(1), Some(3)] {
            let settings = TreeSettings {
                features_per_split: fps,
                ..random_cuts()
            };
            let tree = Grower::new(settings)
                .grow(&data, &target, &[1.0; 300], 9)
                .expect("grows");
            for (i, row) in x.rows().into_iter().enumerate() {
                let p = tree.predict_row(row.as_slice().expect("row"));
                assert_eq!(p[y[i] as usize], 1.0, "{k} classes, {fps:?}, row {i}");
            }
        }
    }
    let v: Vec<f64> = (0..300).map(|_| rng.random::<f64>()).collect();
    let target = OutcomeView::values(&v).expect("target");
    let tree = Grower::new(random_cuts())
        .grow(&data, &target, &[1.0; 300], 9)
        .expect("grows");
    for (i, row) in x.rows().into_iter().enumerate() {
        assert_eq!(tree.predict_row(row.as_slice().expect("row"))[0], v[i]);
    }
}

/// The root's cut on one input with values 0, 1, ..., 100 is drawn uniformly over the
/// range: over 4,000 seeds about a quarter of the thresholds lie below 25 and the
/// mean is near 50. Standard errors: sqrt(0.25 * 0.75 / 4000) = 0.007 for the share,
/// 29 / sqrt(4000) = 0.46 for the mean (a uniform on 0..100 has sd 100 / sqrt(12));
/// tolerances are five of them.
#[test]
fn the_root_cut_is_uniform_over_the_range() {
    let n = 101;
    let x = Array2::from_shape_fn((n, 1), |(i, _)| i as f64);
    let meta = vec![FeatureMeta::numeric("x")];
    let data = BinnedData::new(x.view(), &meta, 256).expect("bins");
    // An outcome unrelated to the cut, so the best cut would always be the same.
    let y: Vec<u32> = (0..n).map(|i| u32::from(i >= 50)).collect();
    let target = OutcomeView::classes(&y, 2).expect("target");
    let settings = TreeSettings {
        max_depth: Some(1),
        ..random_cuts()
    };
    let mut grower = Grower::new(settings);
    let seeds = 4000;
    let (mut below, mut sum) = (0usize, 0.0);
    for seed in 0..seeds {
        let tree = grower
            .grow(&data, &target, &[1.0; 101], test_seed(seed))
            .expect("grows");
        let t = tree.nodes()[0].threshold().expect("a numeric split");
        assert!((0.5..=99.5).contains(&t), "{t}");
        // The stored threshold is the midpoint between neighbouring values.
        assert_eq!(t.fract(), 0.5, "{t}");
        below += usize::from(t < 25.0);
        sum += t;
    }
    let share = below as f64 / seeds as f64;
    let mean = sum / seeds as f64;
    assert!((share - 0.25).abs() < 0.035, "{share}");
    assert!((mean - 50.0).abs() < 2.3, "{mean}");
}

/// A categorical input's cut is a random non-trivial subset of the categories present
/// in the node: over seeds, several different subsets come up at the root, and each
/// leaves at least one present category on each side.
#[test]
fn categorical_cuts_are_random_non_trivial_subsets() {
    let n = 80;
    let x = Array2::from_shape_fn((n, 1), |(i, _)| (i % 4) as f64);
    let levels = ["a", "b", "c", "d"].map(String::from).to_vec();
    let meta = vec![FeatureMeta::categorical("kind", levels)];
    let data = BinnedData::new(x.view(), &meta, 256).expect("bins");
    let y: Vec<u32> = (0..n).map(|i| u32::from(i % 4 == 0)).collect();
    let target = OutcomeView::classes(&y, 2).expect("target");
    let settings = TreeSettings {
        max_depth: Some(1),
        ..random_cuts()
    };
    let mut grower = Grower::new(settings);
    let mut subsets = std::collections::BTreeSet::new();
    for seed in 0..200 {
        let tree = grower
            .grow(&data, &target, &[1.0; 80], test_seed(seed))
            .expect("grows");
        let root = tree.nodes()[0];
        assert!(root.is_categorical());
        let left = tree.left_categories(&root);
        assert!(!left.is_empty() && left.len() < 4, "{left:?}");
        // A subset and its complement are the same split.
        let key = if left.contains(&0) {
            left
        } else {
            (0..4).filter(|c| !left.contains(c)).collect()
        };
        subsets.insert(key);
    }
    // Seven splits of four categories; 200 draws miss one with chance below 1e-10.
    assert_eq!(subsets.len(), 7, "{subsets:?}");
}

/// The same seed grows the same tree; another seed, another tree; the best-cut tree
/// does not depend on the seed when every input is tried.
#[test]
fn random_cut_trees_follow_their_seed() {
    let (x, meta) = uniform_rows(200, 4, 3);
    let data = BinnedData::new(x.view(), &meta, 256).expect("bins");
    let y: Vec<u32> = x
        .rows()
        .into_iter()
        .map(|r| u32::from(r[0] + r[1] > 1.0))
        .collect();
    let target = OutcomeView::classes(&y, 2).expect("target");
    let w = [1.0; 200];
    let mut g = Grower::new(random_cuts());
    let a = g.grow(&data, &target, &w, 1).expect("grows");
    assert_eq!(a, g.grow(&data, &target, &w, 1).expect("grows"));
    assert_ne!(a, g.grow(&data, &target, &w, 2).expect("grows"));
    let mut best = Grower::new(TreeSettings::default());
    assert_eq!(
        best.grow(&data, &target, &w, 1).expect("grows"),
        best.grow(&data, &target, &w, 2).expect("grows")
    );
}
