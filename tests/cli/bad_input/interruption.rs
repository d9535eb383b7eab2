//! Interruption: Ctrl-C or SIGTERM during training and scoring leaves either nothing or
//! everything, and says which.
use super::*;

/// Ctrl-C during training: exit 130, a message, and no model file (nor temporary file).
#[test]
fn m38_interrupted_training_leaves_no_model() {
    let dir = tmp();
    expect_code(
        &copse_in(
            dir.path(),
            &[
                "make-demo-data",
                "--out",
                ".",
                "--rows",
                "3000",
                "--score-rows",
                "1",
            ],
            None,
        ),
        0,
    );
    let before = files(dir.path());
    // Far more trees than could be grown before the signal arrives.
    let child = Command::new(env!("CARGO_BIN_EXE_copse"))
        .args([
            "train",
            "--data",
            "water_mains.csv",
            "--target",
            "failed_within_year",
            "--ignore",
            "segment_id",
            "--out",
            "m.copse",
            "--trees",
            "1000000",
            "--max-depth",
            "3",
        ])
        .current_dir(dir.path())
        .stdin(Stdio::null())
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .expect("copse starts");
    // Give it time to read the data and start growing.
    std::thread::sleep(std::time::Duration::from_millis(500));
    let out = interrupt(child);
    let se = text(&out.stderr);
    assert_eq!(out.status.code(), Some(130), "{se}");
    assert!(se.contains("copse: interrupted"), "{se}");
    assert_eq!(files(dir.path()), before);
}

/// Ctrl-C while scoring into a file: the unfinished temporary file is removed and the
/// destination never appears. Rows come from a pipe kept open, so the signal surely
/// arrives while the temporary file exists.
#[test]
fn m39_interrupted_scoring_removes_the_temporary_file() {
    let dir = tmp();
    iris_model(dir.path());
    let before = files(dir.path());
    let mut child = Command::new(env!("CARGO_BIN_EXE_copse"))
        .args([
            "score",
            "--model",
            "iris.copse",
            "--data",
            "-",
            "--out",
            "s.csv",
        ])
        .current_dir(dir.path())
        .stdin(Stdio::piped())
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .expect("copse starts");
    let mut pipe = child.stdin.take().expect("stdin");
    use std::io::Write;
    pipe.write_all(b"sepal_length,sepal_width,petal_length,petal_width\n5.1,3.5,1.4,0.2\n")
        .expect("feed rows");
    pipe.flush().expect("flush");
    // Wait (up to 20 s) for the temporary file to appear.
    let mut seen = false;
    for _ in 0..200 {
        if files(dir.path()).iter().any(|f| f.ends_with(".partial")) {
            seen = true;
            break;
        }
        std::thread::sleep(std::time::Duration::from_millis(100));
    }
    assert!(seen, "no temporary file appeared: {:?}", files(dir.path()));
    let out = interrupt(child);
    drop(pipe);
    let se = text(&out.stderr);
    assert_eq!(out.status.code(), Some(130), "{se}");
    assert!(se.contains("1 unfinished output file removed"), "{se}");
    assert_eq!(files(dir.path()), before);
}
