//! Checks of the model file: every flipped bit and truncation caught, versions named,
//! hostile lengths refused, altered contents never panic.
use super::*;
use crate::Forest;
use serde::Deserialize;

#[derive(Debug, PartialEq, Serialize, Deserialize)]
struct Sample {
    name: String,
    values: Vec<f64>,
    labels: Vec<String>,
}

fn sample() -> Sample {
    Sample {
        name: "pipes".into(),
        values: vec![1.5, -2.0, 3.25],
        labels: vec!["cast_iron".into(), "pvc".into()],
    }
}

#[test]
fn round_trip() {
    let bytes = encode(&sample()).unwrap();
    let back: Sample = decode(&bytes, "m").unwrap();
    assert_eq!(back, sample());
}

#[test]
fn every_single_flipped_bit_is_caught() {
    let bytes = encode(&sample()).unwrap();
    for i in 0..bytes.len() {
        for bit in 0..8 {
            let mut b = bytes.clone();
            b[i] ^= 1 << bit;
            assert!(decode::<Sample>(&b, "m").is_err(), "byte {i} bit {bit}");
        }
    }
}

#[test]
fn every_truncation_is_caught() {
    let bytes = encode(&sample()).unwrap();
    for n in 0..bytes.len() {
        let e = decode::<Sample>(&bytes[..n], "m").unwrap_err();
        assert!(matches!(
            e.kind(),
            ErrorKind::NotAModel | ErrorKind::Damaged
        ));
    }
}

#[test]
fn newer_version_is_named() {
    let mut bytes = encode(&sample()).unwrap();
    bytes[8..10].copy_from_slice(&(FORMAT_VERSION + 1).to_le_bytes());
    let e = decode::<Sample>(&bytes, "m").unwrap_err();
    assert_eq!(e.kind(), ErrorKind::NewerFormat);
    assert!(e.to_string().contains("newer copse"));
}

#[test]
fn older_version_says_to_train_again() {
    let mut bytes = encode(&sample()).unwrap();
    bytes[8..10].copy_from_slice(&1u16.to_le_bytes());
    let e = decode::<Sample>(&bytes, "old.copse").unwrap_err();
    assert_eq!(e.kind(), ErrorKind::OlderFormat);
    let m = e.to_string();
    assert!(
        m.contains("old.copse") && m.contains("earlier copse"),
        "{m}"
    );
    assert!(
        m.contains("model format 1") && m.contains("trained again"),
        "{m}"
    );
}

#[test]
fn terabyte_length_field_is_refused_before_reading() {
    let mut bytes = encode(&sample()).unwrap();
    bytes[12..20].copy_from_slice(&(1u64 << 42).to_le_bytes());
    let e = decode::<Sample>(&bytes, "m").unwrap_err();
    assert_eq!(e.kind(), ErrorKind::Damaged);
}

/// At most 16 bytes per tree node in a model file, for two-class and regression
/// forests: each node's record takes at most 16 bytes and usually fewer (see
/// copse-tree's `NodeRecord`).
#[test]
fn a_forest_file_takes_at_most_16_bytes_per_node() {
    use crate::{synth, ForestSettings};
    for (name, d) in [
        ("two classes", synth::twonorm(2000, 5)),
        ("regression", synth::friedman1(2000, 5)),
    ] {
        let s = ForestSettings {
            trees: 4,
            seed: 2,
            ..ForestSettings::default()
        };
        let f = Forest::train(d.x.view(), &d.meta, &d.outcome, &s, &Default::default())
            .unwrap()
            .forest;
        // The trees alone: the rest of the file (bin layout, summaries) does not grow
        // with the node count.
        let per_node = encode(&f.trees()).unwrap().len() as f64 / f.n_nodes() as f64;
        assert!(per_node <= 16.0, "{name}: {per_node:.2} bytes per node");
    }
}

/// A hostile payload with a valid checksum whose string claims 2^40 bytes must be
/// refused by the limit, not attempted as an allocation.
#[test]
fn hostile_inner_length_with_valid_checksum_is_refused() {
    // bincode's varint: 0xFD then a u64 little-endian length.
    let mut payload = vec![0xFD];
    payload.extend_from_slice(&(1u64 << 40).to_le_bytes());
    payload.extend_from_slice(b"abc");
    let mut bytes = Vec::new();
    bytes.extend_from_slice(&MAGIC);
    bytes.extend_from_slice(&FORMAT_VERSION.to_le_bytes());
    bytes.extend_from_slice(&0u16.to_le_bytes());
    bytes.extend_from_slice(&(payload.len() as u64).to_le_bytes());
    bytes.extend_from_slice(&payload);
    let crc = crc32fast::hash(&bytes);
    bytes.extend_from_slice(&crc.to_le_bytes());
    let e = decode::<Sample>(&bytes, "m").unwrap_err();
    assert_eq!(e.kind(), ErrorKind::Undecodable);
}

/// A small real model: 3 trees on 200 rows of the twonorm problem, with one
/// categorical input added so category bit sets are present.
fn small_forest() -> Forest {
    use ndarray::Array2;
    let data = crate::synth::twonorm(200, 5);
    let (n, p) = data.x.dim();
    let x = Array2::from_shape_fn((n, p + 1), |(i, j)| {
        if j < p {
            data.x[[i, j]]
        } else {
            (i % 3) as f64
        }
    });
    let mut meta = data.meta.clone();
    meta.push(copse_tree::FeatureMeta::categorical(
        "shade",
        vec!["a".into(), "b".into(), "c".into()],
    ));
    let settings = crate::ForestSettings {
        trees: 3,
        seed: 2,
        ..crate::ForestSettings::default()
    };
    Forest::train(
        x.view(),
        &meta,
        &data.outcome,
        &settings,
        &Default::default(),
    )
    .unwrap()
    .forest
}

/// A hostile file can carry a valid checksum over altered contents. Whatever single
/// bit is changed (checksum recomputed), reading either refuses the file or gives
/// a model that predicts and renders without a panic. Both outcomes must occur:
/// some flips land in bytes the checks cannot tell from real values (a threshold,
/// a leaf output) and must decode and score, others must be refused.
#[test]
fn altered_contents_with_a_valid_checksum_never_panic() {
    use rand::{RngExt, SeedableRng};
    let forest = small_forest();
    let bytes = forest.to_bytes().unwrap();
    let n = bytes.len();
    let p = forest.n_features();
    let rows = ndarray::Array2::from_shape_fn((20, p), |(i, j)| {
        if j + 1 == p {
            (i % 5) as f64 - 1.0
        } else {
            (i as f64 - 10.0) / 4.0
        }
    });
    let mut rng = rand_xoshiro::Xoshiro256PlusPlus::seed_from_u64(11);
    let (mut decoded, mut scored, mut refused) = (0, 0, 0);
    for _ in 0..400 {
        let mut b = bytes.clone();
        let at = rng.random_range(HEADER_LEN..n - TRAILER_LEN);
        b[at] ^= 1 << rng.random_range(0..8);
        let crc = crc32fast::hash(&b[..n - 4]);
        b[n - 4..].copy_from_slice(&crc.to_le_bytes());
        match Forest::from_bytes(&b, "hostile") {
            Ok(m) => {
                decoded += 1;
                if m.predict(rows.view()).is_ok() {
                    scored += 1;
                }
                for t in m.trees() {
                    let _ = copse_tree::render::render(t, m.meta(), Some(m.classes()));
                }
            }
            Err(_) => refused += 1,
        }
    }
    // Most bytes of a small model are bin bounds and thresholds, where any value
    // is a valid one, so most altered files decode; a model that passes the
    // checks on reading must also score.
    assert!(
        decoded >= 100,
        "only {decoded} of 400 altered files decoded"
    );
    assert_eq!(
        scored, decoded,
        "a model that passed its checks failed to score"
    );
    assert!(refused >= 1, "no altered file was refused");
}

/// The same for a regression model that keeps its leaf rows: whatever single bit is
/// changed (checksum recomputed), a model that passes the checks on reading gives
/// outcome ranges without a panic.
#[test]
fn altered_leaf_rows_with_a_valid_checksum_never_panic() {
    use rand::{RngExt, SeedableRng};
    let d = crate::synth::friedman1(60, 3);
    let settings = crate::ForestSettings {
        trees: 2,
        seed: 2,
        ..crate::ForestSettings::default()
    };
    let options = crate::TrainOptions {
        keep_leaf_rows: true,
        oob_importance: false,
        ..crate::TrainOptions::default()
    };
    let forest = Forest::train(d.x.view(), &d.meta, &d.outcome, &settings, &options)
        .unwrap()
        .forest;
    let bytes = forest.to_bytes().unwrap();
    let n = bytes.len();
    let mut rng = rand_xoshiro::Xoshiro256PlusPlus::seed_from_u64(12);
    let (mut decoded, mut refused) = (0, 0);
    for _ in 0..400 {
        let mut b = bytes.clone();
        let at = rng.random_range(HEADER_LEN..n - TRAILER_LEN);
        b[at] ^= 1 << rng.random_range(0..8);
        let crc = crc32fast::hash(&b[..n - 4]);
        b[n - 4..].copy_from_slice(&crc.to_le_bytes());
        match Forest::from_bytes(&b, "hostile") {
            Ok(m) => {
                decoded += 1;
                assert!(m.outcome_intervals(d.x.view(), 0.9).is_ok());
            }
            Err(_) => refused += 1,
        }
    }
    assert!(
        decoded >= 1 && refused >= 1,
        "{decoded} decoded, {refused} refused"
    );
}
