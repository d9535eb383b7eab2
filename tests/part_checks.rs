//! Parts of a forest grown apart and merged: the merged model file is the file of one
//! run with all the trees, byte for byte (trees, out-of-bag summary, error curve,
//! importance, draw counts), for two and three parts, classes and values, a model grown
//! from fewer trees; and every way parts can fail to make one forest is refused with
//! its own message. The data are the published synthetic problems of `synth`; the
//! promise checked is the engine's own (each tree's draws come only from the seed and
//! its index), so no outside value is involved.
use copse_forest::synth::{self, Synthetic};
use copse_forest::{
    CutChoice, ErrorKind, Forest, ForestPart, ForestSettings, Sampling, TrainOptions, TreeRules,
};
use std::ops::Range;

fn part(d: &Synthetic, s: &ForestSettings, r: Range<usize>, o: &TrainOptions<'_>) -> ForestPart {
    Forest::train_part(d.x.view(), &d.meta, &d.outcome, s, r, o).expect("part trains")
}

fn merged(d: &Synthetic, parts: &[ForestPart]) -> copse_forest::Result<Vec<u8>> {
    Forest::merge_parts(parts, d.x.view(), &d.meta, &d.outcome, None)?
        .forest
        .to_bytes()
}

fn whole(d: &Synthetic, s: &ForestSettings, o: &TrainOptions<'_>) -> Vec<u8> {
    Forest::train(d.x.view(), &d.meta, &d.outcome, s, o)
        .expect("trains")
        .forest
        .to_bytes()
        .expect("encodes")
}

/// Every tenth cell missing, so the out-of-bag pass meets missing values too.
fn with_gaps(mut d: Synthetic) -> Synthetic {
    let mut i = 0usize;
    d.x.mapv_inplace(|v| {
        i += 1;
        if i % 10 == 3 {
            f64::NAN
        } else {
            v
        }
    });
    d
}

/// Splits `0..n` at `cuts`, merges the parts given in reverse order (order must not
/// matter) and compares with one run.
fn same_bytes(d: &Synthetic, s: &ForestSettings, o: &TrainOptions<'_>, cuts: &[usize]) {
    let mut edges = vec![0];
    edges.extend_from_slice(cuts);
    edges.push(s.trees);
    let mut parts: Vec<ForestPart> = edges
        .windows(2)
        .map(|w| part(d, s, w[0]..w[1], o))
        .collect();
    parts.reverse();
    // Through the part file's bytes, as parts travel between machines.
    let parts: Vec<ForestPart> = parts
        .iter()
        .map(|p| {
            ForestPart::from_bytes(&p.to_bytes().expect("part encodes"), p.name())
                .expect("part decodes")
        })
        .collect();
    let m = merged(d, &parts).expect("parts merge");
    assert!(
        m == whole(d, s, o),
        "merged bytes differ from one run ({cuts:?})"
    );
}

#[test]
fn two_and_three_parts_of_a_class_forest_give_the_same_bytes() {
    let d = with_gaps(synth::waveform21(300, 11));
    let s = ForestSettings {
        trees: 24,
        seed: 5,
        ..Default::default()
    };
    let o = TrainOptions::default();
    same_bytes(&d, &s, &o, &[10]);
    same_bytes(&d, &s, &o, &[7, 15]);
}

#[test]
fn two_and_three_parts_of_a_value_forest_give_the_same_bytes() {
    let d = with_gaps(synth::friedman1(250, 12));
    let s = ForestSettings {
        trees: 21,
        seed: 8,
        ..Default::default()
    };
    let o = TrainOptions::default();
    same_bytes(&d, &s, &o, &[13]);
    same_bytes(&d, &s, &o, &[1, 20]);
}

#[test]
fn parts_keeping_draw_counts_give_the_same_bytes() {
    let o = TrainOptions {
        keep_draws: true,
        ..TrainOptions::default()
    };
    let d = synth::twonorm(150, 13);
    let s = ForestSettings {
        trees: 30,
        seed: 2,
        ..Default::default()
    };
    same_bytes(&d, &s, &o, &[12]);
    same_bytes(&d, &s, &o, &[5, 6]);
    let d = synth::friedman1(120, 14);
    same_bytes(&d, &s, &o, &[29]);
}

#[test]
fn balanced_and_subsampled_parts_give_the_same_bytes() {
    // A balanced model's class-share shift is fitted on all trees' out-of-bag
    // probabilities, so it too must be computed at the merge.
    let d = synth::threenorm(200, 15);
    let s = ForestSettings {
        trees: 16,
        seed: 3,
        balanced: true,
        ..Default::default()
    };
    same_bytes(&d, &s, &TrainOptions::default(), &[9]);
    let s = ForestSettings {
        trees: 16,
        sampling: Sampling::Subsample(0.5),
        ..Default::default()
    };
    same_bytes(&d, &s, &TrainOptions::default(), &[4, 8]);
}

#[test]
fn a_model_grown_to_more_trees_is_the_model_of_all_trees_at_once() {
    let d = synth::waveform21(200, 16);
    let o = TrainOptions {
        keep_draws: true,
        ..TrainOptions::default()
    };
    let small = ForestSettings {
        trees: 10,
        seed: 4,
        ..Default::default()
    };
    let model = Forest::train(d.x.view(), &d.meta, &d.outcome, &small, &o)
        .expect("trains")
        .forest;
    let large = ForestSettings {
        trees: 25,
        ..small.clone()
    };
    let more = part(&d, &large, 10..25, &o);
    let grown = merged(&d, &[ForestPart::from_model(model, "small.copse"), more]).expect("merges");
    assert!(grown == whole(&d, &large, &o));
}

fn refusal(d: &Synthetic, parts: &[ForestPart]) -> (ErrorKind, String) {
    let e = Forest::merge_parts(parts, d.x.view(), &d.meta, &d.outcome, None)
        .expect_err("merge is refused");
    (e.kind(), e.message().to_string())
}

#[test]
fn parts_of_different_forests_or_ranges_are_refused_each_with_its_reason() {
    let d = synth::twonorm(120, 17);
    let o = TrainOptions::default();
    let s = ForestSettings {
        trees: 12,
        seed: 6,
        ..Default::default()
    };
    let a = part(&d, &s, 0..6, &o);
    let b = part(&d, &s, 6..12, &o);
    let expect = |parts: &[ForestPart], kind: ErrorKind, words: &str| {
        let (k, m) = refusal(&d, parts);
        assert_eq!(k, kind, "{m}");
        assert!(m.contains(words), "'{words}' not in: {m}");
    };
    // Seed, settings, the planned number of trees.
    let other_seed = part(
        &d,
        &ForestSettings {
            seed: 7,
            ..s.clone()
        },
        6..12,
        &o,
    );
    expect(
        &[a.clone(), other_seed],
        ErrorKind::PartsDisagree,
        "the seed (--seed) is 7",
    );
    let other_bins = part(
        &d,
        &ForestSettings {
            bins: 31,
            ..s.clone()
        },
        6..12,
        &o,
    );
    expect(
        &[a.clone(), other_bins],
        ErrorKind::PartsDisagree,
        "value bins",
    );
    let other_total = part(
        &d,
        &ForestSettings {
            trees: 20,
            ..s.clone()
        },
        6..12,
        &o,
    );
    expect(
        &[a.clone(), other_total],
        ErrorKind::PartsDisagree,
        "forest of 20 trees",
    );
    // Different data: other rows, and the same rows in another order.
    let e = synth::twonorm(120, 18);
    let elsewhere = part(&e, &s, 6..12, &o);
    expect(
        &[a.clone(), elsewhere],
        ErrorKind::PartsDisagree,
        "different data",
    );
    let mut shuffled = d.clone();
    shuffled.x.swap([0, 0], [1, 0]);
    shuffled.x.swap([0, 1], [1, 1]);
    let moved = part(&shuffled, &s, 6..12, &o);
    expect(&[a.clone(), moved], ErrorKind::PartsDisagree, "rows differ");
    // What the model keeps.
    let drawn = part(
        &d,
        &s,
        6..12,
        &TrainOptions {
            keep_draws: true,
            ..o
        },
    );
    expect(
        &[a.clone(), drawn],
        ErrorKind::PartsDisagree,
        "--keep-draws",
    );
    // Ranges: a gap at the start, in the middle, at the end, and an overlap.
    expect(
        std::slice::from_ref(&b),
        ErrorKind::PartsDisagree,
        "no part holds trees 0..6",
    );
    expect(
        std::slice::from_ref(&a),
        ErrorKind::PartsDisagree,
        "no part holds trees 6..12",
    );
    let c = part(&d, &s, 8..12, &o);
    expect(&[a.clone(), c], ErrorKind::PartsDisagree, "trees 6..8");
    let overlapping = part(&d, &s, 4..12, &o);
    expect(
        &[a.clone(), overlapping],
        ErrorKind::PartsDisagree,
        "overlaps",
    );
    // The merge's data is not the parts' data.
    let (k, m) = {
        let err = Forest::merge_parts(
            &[a.clone(), b.clone()],
            e.x.view(),
            &e.meta,
            &e.outcome,
            None,
        )
        .expect_err("other data refused");
        (err.kind(), err.message().to_string())
    };
    assert_eq!(k, ErrorKind::DataMismatch, "{m}");
    // And the right parts merge.
    assert!(merged(&d, &[b, a]).is_ok());
}

#[test]
fn a_damaged_or_foreign_part_file_is_refused() {
    let d = synth::twonorm(60, 19);
    let s = ForestSettings {
        trees: 4,
        ..Default::default()
    };
    let p = part(&d, &s, 0..2, &TrainOptions::default());
    let mut bytes = p.to_bytes().expect("encodes");
    let last = bytes.len() - 10;
    bytes[last] ^= 1;
    let e = ForestPart::from_bytes(&bytes, "p.part").expect_err("damage found");
    assert_eq!(e.kind(), ErrorKind::Damaged, "{}", e.message());
    let model = Forest::train(
        d.x.view(),
        &d.meta,
        &d.outcome,
        &s,
        &TrainOptions::default(),
    )
    .expect("trains")
    .forest;
    let e = ForestPart::from_bytes(&model.to_bytes().expect("encodes"), "m.copse")
        .expect_err("a model is not a part file");
    assert_eq!(e.kind(), ErrorKind::NotAModel);
    assert!(
        e.message().contains("not a copse part file"),
        "{}",
        e.message()
    );
    let e = Forest::train_part(
        d.x.view(),
        &d.meta,
        &d.outcome,
        &s,
        2..5,
        &TrainOptions::default(),
    )
    .expect_err("range past the forest");
    assert_eq!(e.kind(), ErrorKind::InvalidSetting);
}

/// Case weights 1 to 3 by row (whole counts), and a row group per block of 5 rows.
fn weights_and_groups(n: usize) -> (Vec<f64>, Vec<u32>) {
    let w = (0..n).map(|i| (i % 3 + 1) as f64).collect();
    let g = (0..n).map(|i| (i / 5) as u32).collect();
    (w, g)
}

#[test]
fn parts_with_case_weights_row_groups_leaf_rows_or_random_cuts_give_the_same_bytes() {
    let d = with_gaps(synth::friedman1(180, 21));
    let (w, g) = weights_and_groups(180);
    let s = ForestSettings {
        trees: 18,
        seed: 12,
        ..Default::default()
    };
    let weighted = TrainOptions {
        case_weights: Some(&w),
        ..TrainOptions::default()
    };
    same_bytes(&d, &s, &weighted, &[7]);
    let grouped = TrainOptions {
        groups: Some(&g),
        ..TrainOptions::default()
    };
    same_bytes(&d, &s, &grouped, &[5, 11]);
    let both = TrainOptions {
        case_weights: Some(&w),
        groups: Some(&g),
        ..TrainOptions::default()
    };
    same_bytes(&d, &s, &both, &[9]);
    // Leaf rows are collected again at the merge from each tree's redrawn sample.
    let leaf_rows = TrainOptions {
        keep_leaf_rows: true,
        ..TrainOptions::default()
    };
    same_bytes(&d, &s, &leaf_rows, &[4, 13]);
    let random = ForestSettings {
        tree: TreeRules {
            cuts: CutChoice::Random,
            ..TreeRules::default()
        },
        ..s.clone()
    };
    same_bytes(&d, &random, &TrainOptions::default(), &[10]);
    let c = synth::twonorm(150, 22);
    let (w, g) = weights_and_groups(150);
    let both = TrainOptions {
        case_weights: Some(&w),
        groups: Some(&g),
        ..TrainOptions::default()
    };
    same_bytes(&c, &random, &both, &[3, 6]);
}

#[test]
fn parts_of_other_weights_groups_cuts_or_leaf_rows_are_refused() {
    let d = synth::friedman1(100, 23);
    let (w, g) = weights_and_groups(100);
    let s = ForestSettings {
        trees: 10,
        seed: 4,
        ..Default::default()
    };
    let o = TrainOptions::default();
    let expect = |parts: &[ForestPart], words: &str| {
        let (k, m) = refusal(&d, parts);
        assert_eq!(k, ErrorKind::PartsDisagree, "{m}");
        assert!(m.contains(words), "'{words}' not in: {m}");
    };
    let weighted = TrainOptions {
        case_weights: Some(&w),
        ..o
    };
    let a = part(&d, &s, 0..5, &weighted);
    // The same total weight spread otherwise: only the weights themselves tell.
    let mut swapped = w.clone();
    swapped.swap(0, 1);
    let other = TrainOptions {
        case_weights: Some(&swapped),
        ..o
    };
    expect(&[a.clone(), part(&d, &s, 5..10, &other)], "case weights");
    let grouped = TrainOptions {
        groups: Some(&g),
        ..weighted
    };
    expect(
        &[a.clone(), part(&d, &s, 5..10, &grouped)],
        "different data",
    );
    let random = ForestSettings {
        tree: TreeRules {
            cuts: CutChoice::Random,
            ..TreeRules::default()
        },
        ..s.clone()
    };
    expect(
        &[a.clone(), part(&d, &random, 5..10, &weighted)],
        "the cut points (--cuts) is random",
    );
    let plain = part(&d, &s, 0..5, &o);
    let ranged = TrainOptions {
        keep_leaf_rows: true,
        ..o
    };
    expect(&[plain, part(&d, &s, 5..10, &ranged)], "--keep-leaf-rows");
    // A weighted model file alone cannot be grown: it does not keep its weights.
    let small = ForestSettings {
        trees: 5,
        ..s.clone()
    };
    let model = Forest::train(d.x.view(), &d.meta, &d.outcome, &small, &weighted)
        .expect("trains")
        .forest;
    expect(
        &[ForestPart::from_model(model.clone(), "w.copse")],
        "a model file does not keep",
    );
    // With a part that carries them, it grows to the model of all trees at once.
    let grown = merged(
        &d,
        &[
            ForestPart::from_model(model, "w.copse"),
            part(&d, &s, 5..10, &weighted),
        ],
    )
    .expect("merges");
    assert!(grown == whole(&d, &s, &weighted));
}
