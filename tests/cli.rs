//! Integration tests of the `copse` command: each runs the real binary in a temporary
//! folder and checks its outputs, exit codes and messages.
//!
//! Data: `tests/data/iris.csv` (Fisher 1936, via the vega_datasets package) and
//! `tests/data/penguins.csv` (Gorman, Williams & Fraser 2014, palmerpenguins package);
//! provenance in `tests/data/README.md`. The demo data is the invented register in
//! `demo-data/`.
use std::io::Write;
use std::path::{Path, PathBuf};
use std::process::{Command, Output, Stdio};

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

/// The committed demo files are exactly what the generator writes with its defaults,
/// so the README's description of them (and the benchmark sizes) stay true.
#[test]
fn committed_demo_data_matches_the_generator() {
    let dir = tmp();
    let out = copse_in(dir.path(), &["make-demo-data", "--out", "gen"], None);
    expect_code(&out, 0);
    for f in ["water_mains.csv", "water_mains_to_score.csv"] {
        let made = std::fs::read(dir.path().join("gen").join(f)).expect("generated file");
        let committed = std::fs::read(repo(&format!("demo-data/{f}"))).expect("committed file");
        assert!(made == committed, "{f} differs from the generator's output");
    }
}
