//! Integration tests of the `copse` command: each runs the real binary in a temporary
//! folder and checks its outputs, exit codes and messages. This file holds the helpers
//! the modules share; each module is one concern.
//!
//! Data: `tests/data/iris.csv` (Fisher 1936, via the vega_datasets package) and
//! `tests/data/penguins.csv` (Gorman, Williams & Fraser 2014, palmerpenguins package);
//! provenance in `tests/data/README.md`. The demo data is the invented register in
//! `demo-data/`.
use std::io::Write;
use std::path::{Path, PathBuf};
use std::process::{Command, Output, Stdio};

mod bad_input;
mod csv_text;
mod decision_report;
mod decisions;
mod demo;
mod effects;
mod explain;
mod extras;
mod html_check;
mod intervals;
mod library;
mod model_files;
mod options;
mod parquet;
mod parts;
mod pipeline;
mod pool;
mod recipes;
mod reliability;
mod report_contributions;
mod report_shapes;
mod round_trips;
mod score_parallel;
mod scoring_streams;
mod shapes;
#[path = "../support/mod.rs"]
mod support;
mod tune;
mod unfamiliar;
mod weights;

/// A file of the repository.
fn repo(rel: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("../..")
        .join(rel)
}

/// Runs copse with `args` in `dir`, feeding `stdin` if given.
fn copse_in(dir: &Path, args: &[&str], stdin: Option<&[u8]>) -> Output {
    let mut cmd = Command::new(env!("CARGO_BIN_EXE_copse"));
    cmd.args(args)
        .current_dir(dir)
        .env("NO_COLOR", "1")
        .stdin(if stdin.is_some() {
            Stdio::piped()
        } else {
            Stdio::null()
        })
        .stdout(Stdio::piped())
        .stderr(Stdio::piped());
    let mut child = cmd.spawn().expect("the copse binary starts");
    if let Some(bytes) = stdin {
        let mut pipe = child.stdin.take().expect("stdin is piped");
        // The child may stop reading early on an error; that is not a test failure.
        let _ = pipe.write_all(bytes);
    }
    child.wait_with_output().expect("copse finishes")
}

fn text(b: &[u8]) -> String {
    String::from_utf8_lossy(b).into_owned()
}

/// Asserts exit code `code` and returns (stdout, stderr).
fn expect_code(out: &Output, code: i32) -> (String, String) {
    let (so, se) = (text(&out.stdout), text(&out.stderr));
    assert_eq!(
        out.status.code(),
        Some(code),
        "expected exit {code}\n--- stdout\n{so}\n--- stderr\n{se}"
    );
    (so, se)
}

fn tmp() -> tempfile::TempDir {
    tempfile::tempdir().expect("a temporary folder")
}

fn json_of(stdout: &str) -> serde_json::Value {
    serde_json::from_str(stdout.trim()).expect("stdout is one JSON object")
}

fn train_iris(dir: &Path, extra: &[&str]) -> Output {
    let iris = repo("tests/data/iris.csv");
    let iris = iris.to_str().expect("utf-8 path");
    let mut args = vec![
        "train",
        "--data",
        iris,
        "--target",
        "species",
        "--out",
        "iris.copse",
        "--trees",
        "150",
        "--seed",
        "3",
    ];
    args.extend_from_slice(extra);
    copse_in(dir, &args, None)
}

/// Reads a CSV file into rows of fields.
fn read_csv(bytes: &[u8]) -> Vec<Vec<String>> {
    let mut r = csv::ReaderBuilder::new()
        .has_headers(false)
        .from_reader(bytes);
    r.records()
        .map(|rec| rec.expect("valid CSV").iter().map(str::to_string).collect())
        .collect()
}

fn penguins() -> String {
    repo("tests/data/penguins.csv")
        .to_str()
        .expect("utf-8 path")
        .to_string()
}

/// `/dev/full` (every write fails with "no space"), or `None` with a note on stderr
/// that the calling test was skipped, on a machine without it.
fn full_device(test: &str) -> Option<&'static Path> {
    let dev = Path::new("/dev/full");
    if dev.exists() {
        Some(dev)
    } else {
        eprintln!("{test}: skipped, this machine has no /dev/full");
        None
    }
}

/// After a write to `/dev/full` failed: it is still the character device (not
/// replaced by a file through a rename), and no partial output was left beside it.
fn assert_full_device_intact() {
    use std::os::unix::fs::FileTypeExt;
    let meta = std::fs::metadata("/dev/full").expect("/dev/full is still there");
    assert!(
        meta.file_type().is_char_device(),
        "/dev/full is no longer a device"
    );
    let partial: Vec<String> = std::fs::read_dir("/dev")
        .expect("/dev lists")
        .filter_map(|e| e.ok())
        .map(|e| e.file_name().to_string_lossy().into_owned())
        .filter(|n| n.starts_with(".copse-"))
        .collect();
    assert!(
        partial.is_empty(),
        "partial files left in /dev: {partial:?}"
    );
}
