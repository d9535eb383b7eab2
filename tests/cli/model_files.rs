//! Model files: damaged or foreign files refused clearly, the same bytes for any
//! thread count, and the fuzz seeds in the current format.
//!
//! Data: `tests/data/iris.csv` (Fisher 1936, via the vega_datasets package) and
//! `tests/data/penguins.csv` (Gorman, Williams & Fraser 2014, palmerpenguins package);
//! provenance in `tests/data/README.md`.
use super::{copse_in, expect_code, penguins, repo, tmp, train_iris};

/// Damaged or foreign model files end with exit 2 and a message naming the file and
/// the fault, never a crash.
#[test]
fn tampered_model_files_are_refused_clearly() {
    let dir = tmp();
    expect_code(&train_iris(dir.path(), &[]), 0);
    let good = std::fs::read(dir.path().join("iris.copse")).expect("model");
    let mut cases: Vec<(&str, Vec<u8>, &str)> = Vec::new();
    for at in [30, good.len() / 2, good.len() - 2] {
        let mut b = good.clone();
        b[at] ^= 0x04;
        cases.push(("flipped.copse", b, "damaged"));
    }
    cases.push(("cut.copse", good[..good.len() - 17].to_vec(), "damaged"));
    cases.push(("cut_header.copse", good[..12].to_vec(), "damaged"));
    let mut b = good.clone();
    b[..4].copy_from_slice(b"PK\x03\x04");
    cases.push(("zip.copse", b, "not a copse model"));
    let mut b = good.clone();
    b[8] = 6;
    cases.push(("future.copse", b, "newer copse"));
    // Formats 1 to 4 are earlier layouts; this copse reads format 5 only.
    for old in [1, 2, 3, 4] {
        let mut b = good.clone();
        b[8] = old;
        cases.push(("earlier.copse", b, "trained again with this copse"));
    }
    let mut b = good.clone();
    b[12..20].copy_from_slice(&(1u64 << 44).to_le_bytes());
    cases.push(("huge_length.copse", b, "damaged"));
    cases.push(("empty.copse", Vec::new(), "empty"));
    let iris = repo("tests/data/iris.csv");
    for (name, bytes, words) in cases {
        std::fs::write(dir.path().join(name), &bytes).expect("write");
        for cmd in [
            vec![
                "score",
                "--model",
                name,
                "--data",
                iris.to_str().expect("path"),
            ],
            vec!["inspect", "--model", name],
        ] {
            let (_, se) = expect_code(&copse_in(dir.path(), &cmd, None), 2);
            assert!(se.starts_with("copse: "), "{name}: {se}");
            assert!(se.contains(name) && se.contains(words), "{name}: {se}");
            assert!(!se.contains("panicked"), "{name}: {se}");
        }
    }
}

/// Same seed and data with one thread or two: byte-identical model files.
#[test]
fn model_does_not_depend_on_thread_count() {
    let dir = tmp();
    let p = penguins();
    for (threads, out) in [("1", "one.copse"), ("2", "two.copse")] {
        let args = [
            "train",
            "--data",
            &p,
            "--target",
            "species",
            "--out",
            out,
            "--trees",
            "60",
            "--threads",
            threads,
        ];
        expect_code(&copse_in(dir.path(), &args, None), 0);
    }
    let one = std::fs::read(dir.path().join("one.copse")).expect("model");
    let two = std::fs::read(dir.path().join("two.copse")).expect("model");
    assert!(one == two, "models differ between 1 and 2 threads");
}

/// The committed starting inputs of the model-decoding fuzz target are model files of
/// the current format (whole, and as bare payloads), so fuzzing starts past the version
/// check; a format change must refresh them (`fuzz/README.md`).
#[test]
fn fuzz_model_seeds_decode_in_the_current_format() {
    let dir = repo("fuzz/seeds/model_decode");
    let mut n = 0;
    for entry in std::fs::read_dir(&dir).expect("the seed folder lists") {
        let path = entry.expect("an entry").path();
        let bytes = std::fs::read(&path).expect("a seed reads");
        assert!(
            copse_cli::harness::decode_model(&bytes),
            "{} no longer decodes as a model",
            path.display()
        );
        n += 1;
    }
    assert!(n >= 6, "only {n} seeds");
}
