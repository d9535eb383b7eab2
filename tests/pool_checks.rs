//! Forests trained on separate partitions of the rows and pooled ([`Forest::pool`]):
//! the pooled score is the tree-count weighted mean of the partitions' own scores,
//! when the partitions saw different category sets; the pooled model's held-out
//! accuracy is that of one run on all the rows within sampling error; and every way
//! models can fail to pool is refused with its own message.
//!
//! Data: Palmer penguins (Gorman, Williams & Fraser 2014, PLoS ONE 9(3):e90081; Horst,
//! Hill & Gorman 2020, palmerpenguins; tests/data/penguins.csv, sources in
//! tests/data/README.md): 344 birds, species from bill, flipper and mass measurements,
//! island and sex (categorical), year; `NA` as missing. Each partition is encoded as
//! its own file would be: its categories are those present in its rows, in natural
//! order, so the island Torgersen is absent from partitions that hold none of its
//! birds.
mod support;

use copse_forest::{ErrorKind, FeatureKind, FeatureMeta, Forest, ForestSettings, Outcome};
use copse_forest::{TrainOptions, TreeRules};
use ndarray::Array2;
use support::{read_data_set, seed, DataSet};

/// A partition as its own file reads: its rows, its own category dictionaries.
struct Part {
    x: Array2<f64>,
    meta: Vec<FeatureMeta>,
    outcome: Outcome,
}

/// SplitMix64, for shuffling rows into partitions.
fn next(state: &mut u64) -> u64 {
    *state = state.wrapping_add(0x9e37_79b9_7f4a_7c15);
    let mut z = *state;
    z = (z ^ (z >> 30)).wrapping_mul(0xbf58_476d_1ce4_e5b9);
    z = (z ^ (z >> 27)).wrapping_mul(0x94d0_49bb_1331_11eb);
    z ^ (z >> 31)
}

fn shuffled(mut rows: Vec<usize>, s: u64) -> Vec<usize> {
    let mut state = s;
    for i in (1..rows.len()).rev() {
        let j = (next(&mut state) % (i as u64 + 1)) as usize;
        rows.swap(i, j);
    }
    rows
}

fn levels(f: &FeatureMeta) -> &[String] {
    match &f.kind {
        FeatureKind::Categorical { levels } => levels,
        FeatureKind::Numeric => &[],
    }
}

/// Rows `rows` of `d` encoded with the categories present in them (in the full
/// dictionary's order, which is natural order for these labels); `target` numeric
/// gives a value outcome.
fn part(d: &DataSet, rows: &[usize], numeric_target: bool) -> Part {
    let mut meta = d.meta.clone();
    let mut x = Array2::from_shape_fn((rows.len(), d.meta.len()), |(i, j)| d.x[[rows[i], j]]);
    for (j, f) in d.meta.iter().enumerate() {
        let full = levels(f);
        if full.is_empty() {
            continue;
        }
        let present: Vec<usize> = (0..full.len())
            .filter(|&c| rows.iter().any(|&i| d.x[[i, j]] == c as f64))
            .collect();
        for v in x.column_mut(j) {
            if !v.is_nan() {
                *v = present
                    .iter()
                    .position(|&c| c as f64 == *v)
                    .expect("the step succeeds") as f64;
            }
        }
        meta[j] = FeatureMeta::categorical(
            f.name.clone(),
            present.iter().map(|&c| full[c].clone()).collect(),
        );
    }
    let cells = rows.iter().map(|&i| d.target[i].as_str());
    let outcome = if numeric_target {
        Outcome::Values(cells.map(|c| c.parse().unwrap_or(f64::NAN)).collect())
    } else {
        Outcome::from_labels(cells.map(|c| (c != "NA").then_some(c)))
    };
    Part { x, meta, outcome }
}

fn settings(trees: usize, s: u64) -> ForestSettings {
    ForestSettings {
        trees,
        seed: seed(s),
        ..Default::default()
    }
}

fn train(p: &Part, s: &ForestSettings) -> Forest {
    Forest::train(p.x.view(), &p.meta, &p.outcome, s, &TrainOptions::default())
        .expect("trains")
        .forest
}

/// Rows of `d` (full codes) read with `model`'s own dictionaries, as its row encoder
/// reads them: a category it never had is missing.
fn recode(d: &DataSet, rows: &[usize], model: &Forest) -> Array2<f64> {
    let mut x = Array2::from_shape_fn((rows.len(), d.meta.len()), |(i, j)| d.x[[rows[i], j]]);
    for (j, (full, own)) in d.meta.iter().zip(model.meta()).enumerate() {
        let (full, own) = (levels(full), levels(own));
        if full.is_empty() {
            continue;
        }
        for v in x.column_mut(j) {
            if !v.is_nan() {
                let label = &full[*v as usize];
                *v = own
                    .iter()
                    .position(|l| l == label)
                    .map_or(f64::NAN, |c| c as f64);
            }
        }
    }
    x
}

/// Three partitions: every Torgersen bird and a third of the others in the first,
/// the rest of the others split between the second and third (no Torgersen there).
fn torgersen_split(d: &DataSet, s: u64) -> Vec<Vec<usize>> {
    let island = d
        .meta
        .iter()
        .position(|f| f.name == "island")
        .expect("the step succeeds");
    let torgersen = levels(&d.meta[island])
        .iter()
        .position(|l| l == "Torgersen")
        .expect("the step succeeds");
    let (mut first, others): (Vec<usize>, Vec<usize>) =
        (0..d.x.nrows()).partition(|&i| d.x[[i, island]] == torgersen as f64);
    let others = shuffled(others, s);
    let third = others.len() / 3;
    first.extend_from_slice(&others[..third]);
    let rest = &others[third..];
    let half = rest.len() / 2;
    vec![first, rest[..half].to_vec(), rest[half..].to_vec()]
}

/// The pooled model's score of every row equals the tree-count weighted mean of the
/// partitions' own scores (each reading the row in its own codes). Both sides are
/// sums of the same leaf values divided by tree counts, added in another order: each
/// score is a mean of at most 150 numbers of size at most 6,300 (grams) or 1
/// (probabilities), so the two agree to within 150 units in the last place of the
/// largest, below 1e-9 relative; 1e-9 of the scale is asked for.
fn pooled_is_weighted_mean(target: &str, numeric: bool) {
    let d = read_data_set("penguins.csv", target);
    let split = torgersen_split(&d, seed(11));
    let trees = [30, 50, 70];
    let models: Vec<Forest> = split
        .iter()
        .zip(trees)
        .enumerate()
        .map(|(k, (rows, t))| train(&part(&d, rows, numeric), &settings(t, 21 + k as u64)))
        .collect();
    let island = d
        .meta
        .iter()
        .position(|f| f.name == "island")
        .expect("the step succeeds");
    assert!(levels(&models[0].meta()[island]).contains(&"Torgersen".to_string()));
    assert!(!levels(&models[1].meta()[island]).contains(&"Torgersen".to_string()));
    let named: Vec<(&str, &Forest)> = ["a.csv", "b.csv", "c.csv"]
        .into_iter()
        .zip(&models)
        .collect();
    let pooled = Forest::pool(&named).expect("pools");
    // Through the model file, as the pooled model travels.
    let pooled = Forest::from_bytes(&pooled.to_bytes().expect("the step succeeds"), "pooled")
        .expect("the step succeeds");
    // The union of the partitions' dictionaries is the whole file's.
    assert_eq!(pooled.meta(), d.meta.as_slice());
    assert_eq!(pooled.trees().len(), 150);
    let all: Vec<usize> = (0..d.x.nrows()).collect();
    let got = pooled.predict(d.x.view()).expect("the step succeeds");
    let mut want = Array2::<f64>::zeros(got.dim());
    for (m, t) in models.iter().zip(trees) {
        want.scaled_add(
            t as f64 / 150.0,
            &m.predict(recode(&d, &all, m).view())
                .expect("the step succeeds"),
        );
    }
    let scale = want.iter().fold(1.0f64, |a, v| a.max(v.abs()));
    let worst = got
        .iter()
        .zip(&want)
        .map(|(a, b)| (a - b).abs())
        .fold(0.0, f64::max);
    println!("{target}: largest difference {worst:e} on a scale of {scale}");
    assert!(worst <= 1e-9 * scale, "{worst}");
    // Every training row (a row with a known outcome) is recognised as one, each in
    // its own partition's codes.
    let labelled: Vec<usize> = all
        .iter()
        .copied()
        .filter(|&i| d.target[i] != "NA")
        .collect();
    let x = Array2::from_shape_fn((labelled.len(), d.meta.len()), |(i, j)| {
        d.x[[labelled[i], j]]
    });
    assert_eq!(pooled.training_row_matches(x.view()), labelled.len());
    let record = pooled
        .pool_record()
        .expect("a pooled model keeps its partitions");
    assert_eq!(record.members.len(), 3);
    assert!(
        pooled.oob().metrics.is_none(),
        "no pooled out-of-bag figure"
    );
    for (m, k) in record.members.iter().zip(&models) {
        assert_eq!(&m.oob, k.oob());
        assert_eq!(m.trees, k.trees().len());
    }
}

#[test]
fn pooled_class_scores_are_the_tree_weighted_mean() {
    pooled_is_weighted_mean("species", false);
}

#[test]
fn pooled_values_are_the_tree_weighted_mean() {
    pooled_is_weighted_mean("body_mass_g", true);
}

/// Held-out accuracy over 4-fold cross-validation (every bird held out once): one
/// run of 150 trees on the training folds against three forests of 50 trees, each on
/// a random third of them, pooled. The two accuracies are on the same 344 rows; the
/// standard error of each is sqrt(p(1 - p)/344) (binomial), and that of their
/// difference at most sqrt(2) times it (the two are positively correlated); the
/// check allows 3 of those, with p(1 - p) at least 0.99 x 0.01 so that a near-perfect
/// accuracy keeps a tolerance of a few rows.
#[test]
fn pooled_held_out_accuracy_matches_one_run() {
    let d = read_data_set("penguins.csv", "species");
    let n = d.x.nrows();
    let order = shuffled((0..n).collect(), seed(5));
    let (mut right_one, mut right_pool) = (0usize, 0usize);
    for fold in 0..4 {
        let held: Vec<usize> = order.iter().copied().skip(fold).step_by(4).collect();
        let kept: Vec<usize> = order
            .iter()
            .copied()
            .filter(|i| !held.contains(i))
            .collect();
        let one = train(&part(&d, &kept, false), &settings(150, 40 + fold as u64));
        let kept = shuffled(kept, seed(60 + fold as u64));
        let third = kept.len().div_ceil(3);
        let models: Vec<Forest> = kept
            .chunks(third)
            .enumerate()
            .map(|(k, rows)| {
                train(
                    &part(&d, rows, false),
                    &settings(50, 70 + 3 * fold as u64 + k as u64),
                )
            })
            .collect();
        let named: Vec<(&str, &Forest)> = models.iter().map(|m| ("part", m)).collect();
        let pooled = Forest::pool(&named).expect("pools");
        for (model, right) in [(&one, &mut right_one), (&pooled, &mut right_pool)] {
            let p = model
                .predict(recode(&d, &held, model).view())
                .expect("the step succeeds");
            for (row, &i) in p.rows().into_iter().zip(&held) {
                let best = (0..p.ncols()).fold(0, |b, c| if row[c] > row[b] { c } else { b });
                *right += usize::from(model.classes()[best] == d.target[i]);
            }
        }
    }
    let (a1, a2) = (right_one as f64 / n as f64, right_pool as f64 / n as f64);
    let spread = (a1 * (1.0 - a1)).max(0.99 * 0.01);
    let tol = 3.0 * (2.0 * spread / n as f64).sqrt();
    println!("held-out accuracy: one run {a1:.4}, pooled {a2:.4}, tolerance {tol:.4}");
    assert!((a1 - a2).abs() <= tol, "{a1} {a2} {tol}");
}

fn refused(models: &[(&str, &Forest)], words: &str) {
    match Forest::pool(models) {
        Ok(_) => panic!("pooled, but should be refused for {words}"),
        Err(e) => {
            assert_eq!(e.kind(), ErrorKind::PoolMismatch, "{}", e.message());
            assert!(
                e.message().contains(words),
                "'{words}' not in: {}",
                e.message()
            );
        }
    }
}

/// Each mismatch is refused, naming what differs.
#[test]
fn models_that_do_not_pool_are_refused() {
    let d = read_data_set("penguins.csv", "species");
    let split = torgersen_split(&d, seed(3));
    let (pa, pb) = (part(&d, &split[0], false), part(&d, &split[1], false));
    let s = settings(5, 1);
    let (a, b) = (train(&pa, &s), train(&pb, &s));
    Forest::pool(&[("a", &a), ("b", &b)]).expect("these pool");
    refused(&[("a", &a)], "two or more");
    refused(&[("a", &a), ("a again", &a)], "same rows");
    let b2 = train(&pb, &settings(7, 2));
    refused(&[("b", &b), ("b, other seed", &b2)], "same rows");
    // Another task: body mass as the outcome.
    let dm = read_data_set("penguins.csv", "body_mass_g");
    let mass = train(&part(&dm, &split[1], true), &s);
    refused(&[("a", &a), ("mass", &mass)], "predicts");
    // Another outcome column (same classes, the card names another).
    let mut other = b.clone();
    let mut card = other.card().clone();
    card.target = "kind".into();
    other.set_card(card).expect("the step succeeds");
    refused(&[("a", &a), ("other", &other)], "models 'kind'");
    // Another class list: a partition without Chinstrap.
    let no_chinstrap: Vec<usize> = split[1]
        .iter()
        .copied()
        .filter(|&i| d.target[i] != "Chinstrap")
        .collect();
    let c = train(&part(&d, &no_chinstrap, false), &s);
    refused(&[("a", &a), ("c", &c)], "classes");
    // Renamed, reordered, retyped or fewer inputs.
    let mut renamed = part(&d, &split[1], false);
    renamed.meta[0].name = "place".into();
    refused(
        &[("a", &a), ("r", &train(&renamed, &s))],
        "input 1 is 'place'",
    );
    let mut swapped = part(&d, &split[1], false);
    swapped.meta.swap(1, 2);
    let cols = swapped.x.clone();
    swapped.x.column_mut(1).assign(&cols.column(2));
    swapped.x.column_mut(2).assign(&cols.column(1));
    refused(
        &[("a", &a), ("s", &train(&swapped, &s))],
        "in the same order",
    );
    let mut retyped = part(&d, &split[1], false);
    let year = retyped
        .meta
        .iter()
        .position(|f| f.name == "year")
        .expect("the step succeeds");
    let years: Vec<String> = ["2007", "2008", "2009"].map(String::from).to_vec();
    for v in retyped.x.column_mut(year) {
        *v -= 2007.0;
    }
    retyped.meta[year] = FeatureMeta::categorical("year", years);
    refused(
        &[("a", &a), ("t", &train(&retyped, &s))],
        "'year' is categorical",
    );
    let mut fewer = part(&d, &split[1], false);
    fewer.meta.pop();
    let width = fewer.meta.len();
    fewer.x = Array2::from_shape_fn((fewer.x.nrows(), width), |(i, j)| fewer.x[[i, j]]);
    refused(&[("a", &a), ("f", &train(&fewer, &s))], "inputs");
    // Other settings: a larger smallest leaf.
    let leafy = ForestSettings {
        tree: TreeRules {
            min_leaf: 5.0,
            ..TreeRules::default()
        },
        ..s.clone()
    };
    refused(&[("a", &a), ("l", &train(&pb, &leafy))], "the tree rules");
    // Other missing tokens.
    let mut tokens = b.clone();
    let mut card = tokens.card().clone();
    card.missing_tokens = vec!["?".into()];
    tokens.set_card(card).expect("the step succeeds");
    refused(&[("a", &a), ("m", &tokens)], "missing tokens");
    // What a pooled model cannot keep or average.
    let balanced = ForestSettings {
        balanced: true,
        ..s.clone()
    };
    refused(&[("a", &a), ("bal", &train(&pb, &balanced))], "--balanced");
    let kept = Forest::train(
        pb.x.view(),
        &pb.meta,
        &pb.outcome,
        &s,
        &TrainOptions {
            keep_draws: true,
            ..TrainOptions::default()
        },
    )
    .expect("the step succeeds")
    .forest;
    refused(&[("a", &a), ("k", &kept)], "--keep-draws");
    let pooled = Forest::pool(&[("a", &a), ("b", &b)]).expect("the step succeeds");
    let c3 = train(&part(&d, &split[2], false), &s);
    refused(&[("p", &pooled), ("c", &c3)], "itself a pooled model");
}
