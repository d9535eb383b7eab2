//! Decoders on random input, and inputs found by fuzzing: the harness on clean input, the
//! kept regression inputs, and property tests of both decoders.
use super::*;

/// The harness behind the fuzz targets and property tests goes all the way on clean
/// input: iris (Fisher 1936) with the species as target is read, trained on, written,
/// read back and scored row for row, and a model file of its own reads.
#[test]
fn harness_reaches_scoring_and_decoding_on_clean_input() {
    let iris = std::fs::read(repo("tests/data/iris.csv")).expect("iris");
    // Settings byte 0x10: comma, target column 4 (species), task from the data.
    let mut data = vec![0x10u8];
    data.extend_from_slice(&iris);
    assert_eq!(copse_cli::harness::ingest_csv(&data), Some(150));
    let dir = tmp();
    iris_model(dir.path());
    let mut file = vec![0u8];
    file.extend(std::fs::read(dir.path().join("iris.copse")).expect("model"));
    assert!(copse_cli::harness::decode_model(&file));
}

/// Every input that once made a fuzz target fail, kept under the name of its fault:
/// each must now run through its entry point without a panic, and one whose name ends
/// in `.refused` must be refused (the fix was a check that turns it away).
#[test]
fn fuzz_regressions_run_clean() {
    let base = repo("tests/data/fuzz");
    for sub in ["csv_ingest", "model_decode"] {
        let Ok(entries) = std::fs::read_dir(base.join(sub)) else {
            continue;
        };
        for e in entries {
            let path = e.expect("entry").path();
            if path.extension().is_some_and(|x| x == "md") {
                continue;
            }
            let bytes = std::fs::read(&path).expect("read a regression input");
            let accepted = if sub == "csv_ingest" {
                copse_cli::harness::ingest_csv(&bytes).is_some()
            } else {
                copse_cli::harness::decode_model(&bytes)
            };
            if path.extension().is_some_and(|x| x == "refused") {
                assert!(!accepted, "{} was accepted", path.display());
            }
        }
    }
}

mod properties {
    //! Random bytes and random CSV shapes through both decoders: no panic, whatever the
    //! input. Case counts are kept small so the suite stays fast; the fuzz targets
    //! (`fuzz/`) run the same entry points for far longer.
    use copse_cli::harness::{decode_model, ingest_csv, wrap_payload};
    use proptest::prelude::*;

    /// A CSV-like text from cells that are numbers, words, missing tokens, quotes,
    /// delimiters and line breaks: a header of `n` names, then rows of `n` cells, one
    /// in eight of them with a cell more or less.
    fn csv_shape() -> impl Strategy<Value = Vec<u8>> {
        let cell = prop_oneof![
            4 => (-1000i32..1000).prop_map(|v| v.to_string()),
            3 => (-1e6f64..1e6).prop_map(|v| format!("{v}")),
            3 => "[a-c]{1,2}",
            1 => Just(String::new()),
            1 => Just("NA".to_string()),
            1 => Just("?".to_string()),
            1 => Just("inf".to_string()),
            1 => Just("1e400".to_string()),
            1 => Just("\"q,uo\nted\"".to_string()),
            1 => Just("\"unclosed".to_string()),
            1 => Just("\u{feff}".to_string()),
            1 => Just("\r".to_string()),
        ];
        (2usize..6, any::<u8>(), any::<bool>())
            .prop_flat_map(move |(n, ctrl, crlf)| {
                let row = (prop::collection::vec(cell.clone(), n), 0u8..8);
                (
                    Just(n),
                    Just(ctrl),
                    Just(crlf),
                    prop::collection::vec(row, 1..40),
                )
            })
            .prop_map(|(n, ctrl, crlf, rows)| {
                let sep = [",", "\t", ";", ","][usize::from(ctrl & 3)];
                let eol = if crlf { "\r\n" } else { "\n" };
                let mut s = vec![ctrl];
                let header: Vec<String> = (0..n).map(|j| format!("c{j}")).collect();
                s.extend_from_slice(header.join(sep).as_bytes());
                s.extend_from_slice(eol.as_bytes());
                for (mut cells, odd) in rows {
                    match odd {
                        0 => cells.push("x".to_string()),
                        1 => {
                            cells.pop();
                        }
                        _ => {}
                    }
                    s.extend_from_slice(cells.join(sep).as_bytes());
                    s.extend_from_slice(eol.as_bytes());
                }
                s
            })
    }

    proptest! {
        #![proptest_config(ProptestConfig { cases: 64, ..ProptestConfig::default() })]

        #[test]
        fn random_bytes_through_csv_ingestion(data in prop::collection::vec(any::<u8>(), 0..600)) {
            let _ = ingest_csv(&data);
        }

        #[test]
        fn random_csv_shapes_cause_no_panic_in_csv_ingestion(data in csv_shape()) {
            let _ = ingest_csv(&data);
        }

        /// The same shapes without the odd rows and awkward cells mostly read, train
        /// and score: the harness's checks behind reading are reached.
        #[test]
        fn clean_csv_shapes_are_scored_row_for_row(
            n in 2usize..5,
            rows in prop::collection::vec(prop::collection::vec(0u8..6, 5), 2..60),
            ctrl in any::<u8>(),
        ) {
            let sep = [",", "\t", ";", ","][usize::from(ctrl & 3)];
            let mut s = vec![ctrl];
            let header: Vec<String> = (0..n).map(|j| format!("c{j}")).collect();
            s.extend_from_slice(header.join(sep).as_bytes());
            s.push(b'\n');
            for r in &rows {
                let cells: Vec<String> = r[..n]
                    .iter()
                    .map(|&v| match v {
                        0 => "NA".to_string(),
                        1 | 2 => format!("w{v}"),
                        _ => format!("{}", f64::from(v) * 1.5),
                    })
                    .collect();
                s.extend_from_slice(cells.join(sep).as_bytes());
                s.push(b'\n');
            }
            if let Some(scored) = ingest_csv(&s) {
                prop_assert_eq!(scored, rows.len());
            }
        }

        #[test]
        fn random_bytes_through_model_decoding(data in prop::collection::vec(any::<u8>(), 0..600)) {
            let _ = decode_model(&data);
        }

        /// Random payloads inside a well-formed container (correct marker, length and
        /// checksum) reach the decoder itself, and must not panic it.
        #[test]
        fn random_payloads_cause_no_panic_in_model_decoding(payload in prop::collection::vec(any::<u8>(), 0..600)) {
            let mut data = vec![0u8];
            data.extend_from_slice(&wrap_payload(&payload));
            let _ = decode_model(&data);
        }
    }
}
