//! Checks of the forest engine against published results, facts about the estimates,
//! and open data sets. Each check names its source beside it; values recalled from
//! memory carry wider tolerances, and every statistical tolerance is derived from
//! sampling error in a comment. Figures are printed (run with `--nocapture`). This file
//! holds the helpers the modules share; each module is one concern.
use copse_forest::synth::Synthetic;
use copse_forest::{
    predicted_class, FeaturesPerSplit, Forest, ForestSettings, Outcome, Sampling, TrainOptions,
    Trained,
};
use ndarray::Array2;

mod bad_input;
mod determinism;
mod importance;
mod oob;
mod open_data;
mod published;
mod stability;
#[path = "../support/mod.rs"]
mod support;
use support::seed;

/// Forest settings; `base` is moved by the test seed offset (`support::seed`).
fn settings(trees: usize, k: FeaturesPerSplit, base: u64) -> ForestSettings {
    ForestSettings {
        trees,
        features_per_split: k,
        seed: seed(base),
        ..Default::default()
    }
}

/// `settings` with the default inputs per split (for [`train_importance`]).
fn importance_settings(trees: usize, seed: u64) -> ForestSettings {
    settings(trees, FeaturesPerSplit::Default, seed)
}

/// Trains without out-of-bag importance.
fn train(d: &Synthetic, s: &ForestSettings) -> Trained {
    let options = TrainOptions {
        oob_importance: false,
        ..TrainOptions::default()
    };
    Forest::train(d.x.view(), &d.meta, &d.outcome, s, &options).expect("training succeeds")
}

/// Trains with out-of-bag importance measured.
fn train_importance(d: &Synthetic, s: &ForestSettings) -> Trained {
    Forest::train(d.x.view(), &d.meta, &d.outcome, s, &TrainOptions::default())
        .expect("training succeeds")
}

fn codes(o: &Outcome) -> &[u32] {
    match o {
        Outcome::Classes { codes, .. } => codes,
        Outcome::Values(_) => panic!("class outcome expected"),
    }
}

/// Predicted class of every row.
fn classify(f: &Forest, x: &Array2<f64>) -> Vec<usize> {
    let p = f.predict(x.view()).expect("prediction succeeds");
    p.rows()
        .into_iter()
        .map(|r| predicted_class(&r.to_vec()))
        .collect()
}

/// Misclassification rate of `f` on a labelled set.
fn test_error(f: &Forest, d: &Synthetic) -> f64 {
    let hat = classify(f, &d.x);
    let y = codes(&d.outcome);
    hat.iter()
        .zip(y)
        .filter(|(h, &c)| **h != c as usize)
        .count() as f64
        / y.len() as f64
}

fn oob_error(t: &Trained) -> f64 {
    t.forest
        .oob()
        .metrics
        .as_ref()
        .expect("some rows were out of bag")
        .error()
}

/// One CART-style tree grown on every case with every input (a "forest" of one tree
/// with no resampling and no input sampling is exactly that).
fn single_tree(d: &Synthetic) -> Forest {
    let s = ForestSettings {
        trees: 1,
        features_per_split: FeaturesPerSplit::Every,
        sampling: Sampling::Whole,
        ..Default::default()
    };
    train(d, &s).forest
}
