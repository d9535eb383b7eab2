//! The bad-input matrix: messy spreadsheets, damaged or hostile model files, impossible
//! outputs, interruptions and bad flags, each run through the real binary. Every case
//! checks the exit code (0 success, 1 failure while running, 2 usage or input error,
//! 130 interrupted), that the message names the file (and line and column where one
//! applies) and says what to do, and that no output or temporary file is left behind.
//!
//! Cases covered by tests in `main.rs` are not repeated here: tampered model files
//! (empty, truncated, one byte flipped, wrong marker, newer version, a length field
//! claiming terabytes), a missing column at scoring, unseen categories when scoring,
//! `--trees 0` / `--min-leaf 0` / `--features-per-split 0` / a share above 100%, BOM
//! with CRLF and quoted fields in training data, a stray word in a numeric column,
//! `/dev/full` when scoring, CRLF line numbers, and no partial output when scoring
//! fails part-way. This file adds the rest of the matrix (more than 30 cases of its
//! own), the property tests of the two decoders, and the regression inputs found by
//! fuzzing (`fuzz/`), kept in `tests/data/fuzz/`.
//!
//! Data: `tests/data/iris.csv` (Fisher 1936; provenance in `tests/data/README.md`) for
//! models; every other file is written by the test itself.
use super::{copse_in, expect_code, repo, text, tmp};
use std::path::Path;
use std::process::{Command, Output, Stdio};

/// Every entry of `dir`, hidden ones (temporary files) included, sorted.
pub(super) fn files(dir: &Path) -> Vec<String> {
    let mut names: Vec<String> = std::fs::read_dir(dir)
        .expect("list the folder")
        .map(|e| e.expect("entry").file_name().to_string_lossy().into_owned())
        .collect();
    names.sort();
    names
}

pub(super) fn put(dir: &Path, name: &str, bytes: impl AsRef<[u8]>) {
    std::fs::write(dir.join(name), bytes).expect("write a test file");
}

pub(super) fn iris() -> String {
    repo("tests/data/iris.csv")
        .to_str()
        .expect("utf-8 path")
        .to_string()
}

/// A small iris model, `iris.copse`, in `dir`.
pub(super) fn iris_model(dir: &Path) {
    let i = iris();
    let args = [
        "train",
        "--data",
        &i,
        "--target",
        "species",
        "--out",
        "iris.copse",
        "--trees",
        "20",
        "-q",
    ];
    expect_code(&copse_in(dir, &args, None), 0);
}

/// Asserts the message is one `copse:` error line without a panic report.
pub(super) fn one_clean_error(se: &str) {
    assert!(se.starts_with("copse: error: "), "{se}");
    assert!(
        !se.contains("panicked") && !se.contains("internal error"),
        "{se}"
    );
}

/// Runs copse in `dir` and checks a refusal: exit `code`, a clean `copse: error:`
/// message containing every one of `needles`, and the folder exactly as it was (no
/// output file, no temporary file). Returns standard error.
pub(super) fn refused(
    dir: &Path,
    args: &[&str],
    stdin: Option<&[u8]>,
    code: i32,
    needles: &[&str],
) -> String {
    let before = files(dir);
    let out = copse_in(dir, args, stdin);
    let (so, se) = expect_code(&out, code);
    one_clean_error(&se);
    for n in needles {
        assert!(se.contains(n), "missing {n:?} in: {se}");
    }
    assert!(
        so.is_empty(),
        "nothing on standard output after an error: {so}"
    );
    assert_eq!(files(dir), before, "files left behind by {args:?}");
    se
}

pub(super) fn train_args<'a>(data: &'a str, target: &'a str) -> Vec<&'a str> {
    vec![
        "train", "--data", data, "--target", target, "--out", "m.copse", "--trees", "10",
    ]
}

/// Scoring the file `new.csv` holding `csv` with a small iris model is refused with
/// exit code 2 and a message holding each of `needles` (see [`refused`]).
fn score_refused(csv: impl AsRef<[u8]>, needles: &[&str]) {
    let dir = tmp();
    iris_model(dir.path());
    put(dir.path(), "new.csv", csv);
    let args = [
        "score",
        "--model",
        "iris.copse",
        "--data",
        "new.csv",
        "--out",
        "s.csv",
    ];
    refused(dir.path(), &args, None, 2, needles);
}

/// Training on the file `d.csv` holding `csv`, with target `target`, is refused with
/// exit code 2 and a message holding each of `needles` (see [`refused`]).
fn train_refused(csv: impl AsRef<[u8]>, target: &str, needles: &[&str]) {
    let dir = tmp();
    put(dir.path(), "d.csv", csv);
    refused(dir.path(), &train_args("d.csv", target), None, 2, needles);
}

/// Waits (up to 20 s) until the child runs more than one thread: the Ctrl-C handler
/// is installed first thing and runs on a thread of its own, so from then on SIGINT
/// reaches it. Where `/proc` is missing, waits a second instead.
pub(super) fn wait_for_handler(child: &std::process::Child) {
    let status = format!("/proc/{}/status", child.id());
    if !Path::new(&status).exists() {
        std::thread::sleep(std::time::Duration::from_secs(1));
        return;
    }
    for _ in 0..200 {
        let threads = std::fs::read_to_string(&status)
            .ok()
            .and_then(|t| {
                t.lines()
                    .find_map(|l| l.strip_prefix("Threads:"))
                    .and_then(|v| v.trim().parse::<u32>().ok())
            })
            .unwrap_or(0);
        if threads >= 2 {
            return;
        }
        std::thread::sleep(std::time::Duration::from_millis(100));
    }
}

/// Sends SIGINT to a running child and waits for it.
pub(super) fn interrupt(child: std::process::Child) -> Output {
    wait_for_handler(&child);
    let status = Command::new("kill")
        .args(["-INT", &child.id().to_string()])
        .status()
        .expect("kill runs");
    assert!(status.success());
    child.wait_with_output().expect("copse ends")
}

mod decoders;
mod flags;
mod interruption;
mod model_files;
mod outputs;
mod scoring;
mod training_data;
