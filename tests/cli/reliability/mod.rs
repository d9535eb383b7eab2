//! The bad-input matrix, continued (cases r01 on): rows that must never be dropped or
//! misnumbered (stray quotes, rows without line ends, blank lines), outputs of one
//! command replaced together or not at all, standard error that cannot be written, the
//! memory check against measured peaks, scoring memory on very wide files, decimal
//! commas, labels merged by trimming, and the smaller promises of the messages. Each
//! runs the real binary in a temporary folder, like `bad_input.rs`, whose helpers it
//! shares.
//!
//! Data: `tests/data/iris.csv` (Fisher 1936; provenance in `tests/data/README.md`) for
//! models; every other file is written by the test itself.
use super::bad_input::{files, iris_model, put, refused, train_args};
use super::{copse_in, expect_code, tmp};
use std::path::Path;

const IRIS_HEADER: &str = "id,sepal_length,sepal_width,petal_length,petal_width\n";

/// Scores `new.csv` in `dir` with the iris model and extra arguments.
fn score_in(dir: &Path, extra: &[&str]) -> std::process::Output {
    let mut args = vec!["score", "--model", "iris.copse", "--data", "new.csv"];
    args.extend_from_slice(extra);
    copse_in(dir, &args, None)
}

/// A stray quote at the start of a row: without `--blank-unscorable` an error naming
/// its line; with it, that row is written blank and every later row is still scored,
/// one output row per input row (the quote once swallowed the rest of the file).
#[test]
fn r01_a_stray_quote_costs_one_row_not_the_rest_of_the_file() {
    let dir = tmp();
    iris_model(dir.path());
    let mut d = String::from(IRIS_HEADER);
    for i in 1..=6 {
        let q = if i == 2 { "\"" } else { "" };
        d.push_str(&format!("{q}r{i},5.1,3.5,1.4,0.2\n"));
    }
    put(dir.path(), "new.csv", &d);
    let args = [
        "score",
        "--model",
        "iris.copse",
        "--data",
        "new.csv",
        "--out",
        "s.csv",
    ];
    refused(
        dir.path(),
        &args,
        None,
        2,
        &[
            "new.csv line 3: a quoted field that starts on this line is never closed",
            "check that no quote is missing",
            "--blank-unscorable",
        ],
    );
    let (so, se) = expect_code(
        &score_in(dir.path(), &["--keep", "id", "--blank-unscorable"]),
        0,
    );
    let rows: Vec<&str> = so.lines().collect();
    assert_eq!(rows.len(), 7, "{so}");
    assert_eq!(rows[2], ",,,,", "{so}");
    for (i, r) in rows.iter().enumerate().skip(1).filter(|(i, _)| *i != 2) {
        assert!(r.starts_with(&format!("r{i},setosa,")), "{so}");
    }
    assert!(
        se.contains("1 of 6 rows of new.csv could not be scored") && se.contains("(line 3)"),
        "{se}"
    );
}

/// Input without line ends (what `yes x | tr -d '\n'` or `/dev/zero` gives) stops at the
/// record size cap with an error naming the line, instead of growing memory until the
/// allocator aborts.
#[test]
fn r02_input_without_line_ends_is_refused_at_the_record_cap() {
    let dir = tmp();
    iris_model(dir.path());
    let mut d = IRIS_HEADER.as_bytes().to_vec();
    d.extend(std::iter::repeat_n(b'x', 3 << 20));
    let args = [
        "score",
        "--model",
        "iris.copse",
        "--data",
        "-",
        "--blank-unscorable",
    ];
    refused(
        dir.path(),
        &args,
        Some(&d),
        2,
        &[
            "standard input line 2: the row is longer than 1 MiB",
            "line ends",
        ],
    );
    if Path::new("/dev/zero").exists() {
        let args = ["score", "--model", "iris.copse", "--data", "/dev/zero"];
        refused(
            dir.path(),
            &args,
            None,
            2,
            &["/dev/zero line 1: the row is longer than 1 MiB"],
        );
    }
}

/// A model on one input, `a`.
fn one_input_model(dir: &Path) {
    let mut d = String::from("a,y\n");
    for i in 0..40 {
        d.push_str(&format!(
            "{},{}\n",
            f64::from(i) / 40.0,
            if i < 20 { "lo" } else { "hi" }
        ));
    }
    put(dir, "one.csv", &d);
    let mut args = train_args("one.csv", "y");
    args[6] = "one.copse";
    expect_code(&copse_in(dir, &args, None), 0);
}

/// With one column a blank line is a row whose value is missing: every input row gives
/// an output row (a blank line once vanished without a word).
#[test]
fn r03_a_blank_line_in_one_column_is_a_missing_value() {
    let dir = tmp();
    one_input_model(dir.path());
    let args = ["score", "--model", "one.copse", "--data", "-"];
    let (so, _) = expect_code(&copse_in(dir.path(), &args, Some(b"a\n0.1\n\n0.9\n")), 0);
    let rows: Vec<&str> = so.lines().collect();
    assert_eq!(rows.len(), 4, "{so}");
    assert!(
        rows[1].starts_with("lo,") && rows[3].starts_with("hi,"),
        "{so}"
    );
}

/// With several columns a blank line holds no row: it is passed over and counted in a
/// note, and every line number in messages and in `--oob-out` is a file line.
#[test]
fn r04_blank_lines_are_counted_and_line_numbers_are_file_lines() {
    let dir = tmp();
    iris_model(dir.path());
    let d =
        format!("{IRIS_HEADER}r1,5.1,3.5,1.4,0.2\n\n\nr2,5.1,3.5,1.4,0.2\nr3,5.1,wide,1.4,0.2\n");
    put(dir.path(), "new.csv", &d);
    let args = [
        "score",
        "--model",
        "iris.copse",
        "--data",
        "new.csv",
        "--out",
        "s.csv",
    ];
    refused(
        dir.path(),
        &args,
        None,
        2,
        &["new.csv line 6, column 'sepal_width'"],
    );
    let (so, se) = expect_code(
        &score_in(dir.path(), &["--keep", "id", "--blank-unscorable"]),
        0,
    );
    assert_eq!(so.lines().count(), 4, "{so}");
    assert!(se.contains("(line 6)"), "{se}");
    assert!(
        se.contains("copse: note: 2 blank lines of new.csv were passed over")
            && se.contains("lines 3, 4"),
        "{se}"
    );

    let mut d = String::from("a,b,y\n");
    for i in 0..30 {
        if i == 5 {
            d.push_str("\n\n");
        }
        d.push_str(&format!(
            "{i},{},{}\n",
            i % 3,
            if i < 15 { "p" } else { "q" }
        ));
    }
    put(dir.path(), "t.csv", &d);
    let mut args = train_args("t.csv", "y");
    args.extend(["--oob-out", "o.csv"]);
    let (_, se) = expect_code(&copse_in(dir.path(), &args, None), 0);
    assert!(
        se.contains("2 blank lines of t.csv were passed over, as they hold no row (lines 7, 8)"),
        "{se}"
    );
    let oob = std::fs::read_to_string(dir.path().join("o.csv")).expect("oob file");
    let lines: Vec<u64> = oob
        .lines()
        .skip(1)
        .map(|l| {
            l.split(',')
                .next()
                .and_then(|v| v.parse().ok())
                .expect("line")
        })
        .collect();
    let want: Vec<u64> = (2..7).chain(9..34).collect();
    assert_eq!(lines, want);
    assert!(!files(dir.path()).iter().any(|f| f.ends_with(".partial")));
}

/// Standard error pointing at a full device.
fn full_stderr() -> std::process::Stdio {
    std::fs::OpenOptions::new()
        .write(true)
        .open("/dev/full")
        .expect("/dev/full opens")
        .into()
}

/// The outputs of one command are replaced together: when the second (`--oob-out`)
/// cannot be written, the first (the model) is not replaced either.
#[test]
fn r05_a_failed_second_output_leaves_the_first_untouched() {
    if !Path::new("/dev/full").exists() {
        return;
    }
    let dir = tmp();
    put(dir.path(), "m.copse", "old model");
    let i = super::bad_input::iris();
    let args = [
        "train",
        "--data",
        &i,
        "--target",
        "species",
        "--out",
        "m.copse",
        "--trees",
        "5",
        "--oob-out",
        "/dev/full",
    ];
    let (_, se) = expect_code(&copse_in(dir.path(), &args, None), 1);
    assert!(se.contains("could not write /dev/full"), "{se}");
    assert_eq!(
        std::fs::read(dir.path().join("m.copse")).expect("model"),
        b"old model"
    );
    assert_eq!(files(dir.path()), ["m.copse"]);
}

/// Ctrl-C at any moment of a run with two outputs: either both are replaced or
/// neither, and the message says which (it once said "nothing was written" with the
/// model replaced and the out-of-bag file old).
#[test]
fn r06_an_interruption_never_leaves_a_mixed_pair() {
    let dir = tmp();
    let i = super::bad_input::iris();
    let mut seen = [0; 3];
    // The delays are shares of one uninterrupted run's time, so that some signals land
    // during training and some after it on a fast or a slow machine alike.
    let started = std::time::Instant::now();
    let run = |dir: &Path| {
        std::process::Command::new(env!("CARGO_BIN_EXE_copse"))
            .args([
                "train",
                "--data",
                &i,
                "--target",
                "species",
                "--out",
                "m.copse",
                "--trees",
                "300",
                "--oob-out",
                "o.csv",
                "-q",
                "--threads",
                "1",
            ])
            .current_dir(dir)
            .stdout(std::process::Stdio::null())
            .stderr(std::process::Stdio::piped())
            .spawn()
            .expect("copse starts")
    };
    let whole = run(dir.path()).wait_with_output().expect("copse ends");
    assert_eq!(whole.status.code(), Some(0));
    let full = started.elapsed().as_micros() as u64;
    for delay in (0..12).map(|k| full * k / 10) {
        put(dir.path(), "m.copse", "old");
        put(dir.path(), "o.csv", "old");
        let child = run(dir.path());
        std::thread::sleep(std::time::Duration::from_micros(delay));
        let _ = std::process::Command::new("kill")
            .args(["-INT", &child.id().to_string()])
            .status();
        let out = child.wait_with_output().expect("copse ends");
        let se = super::text(&out.stderr);
        let m_new = std::fs::read(dir.path().join("m.copse")).expect("m") != b"old";
        let o_new = std::fs::read(dir.path().join("o.csv")).expect("o") != b"old";
        assert_eq!(m_new, o_new, "after {delay} µs: {se}");
        match out.status.code() {
            Some(130) if m_new => {
                seen[1] += 1;
                assert!(
                    se.contains("m.copse, o.csv had already been written in full"),
                    "{se}"
                );
            }
            Some(130) => {
                seen[0] += 1;
                assert!(se.contains("nothing was written"), "{se}");
            }
            Some(0) => {
                seen[2] += 1;
                assert!(m_new, "{se}");
            }
            // The signal came before the handler was installed.
            None => assert!(!m_new),
            Some(c) => panic!("exit {c}: {se}"),
        }
        let left = files(dir.path());
        assert_eq!(left, ["m.copse", "o.csv"], "after {delay} µs");
    }
    assert!(
        seen[0] > 0,
        "no run was interrupted while training: {seen:?}"
    );
}

/// A temporary file left by a run killed with no chance to clean up (kill -9) is
/// removed by the next run writing into that folder; one whose process is alive stays.
#[test]
fn r07_stale_temporary_files_are_removed_by_the_next_run() {
    if !Path::new("/proc/self").exists() {
        return;
    }
    let dir = tmp();
    iris_model(dir.path());
    let gone = (4_000_000u32..).find(|p| !Path::new(&format!("/proc/{p}")).exists());
    let gone = gone.expect("a free process id");
    let stale = format!(".copse-{gone}-0123456789abcdef.partial");
    let live = format!(".copse-{}-0123456789abcdef.partial", std::process::id());
    put(dir.path(), &stale, vec![0u8; 4096]);
    put(dir.path(), &live, "in progress");
    put(
        dir.path(),
        "new.csv",
        format!("{IRIS_HEADER}r1,5.1,3.5,1.4,0.2\n"),
    );
    expect_code(&score_in(dir.path(), &["--out", "s.csv"]), 0);
    let left = files(dir.path());
    assert!(!left.contains(&stale), "{left:?}");
    assert!(left.contains(&live), "{left:?}");
}

/// A standard error that cannot be written (a full device, a closed pipe) never makes
/// copse panic: the run ends with the exit code it earns (0 with its outputs written,
/// 2 for bad input), not an abort.
#[test]
fn r08_a_full_standard_error_is_no_fault() {
    if !Path::new("/dev/full").exists() {
        return;
    }
    let dir = tmp();
    let i = super::bad_input::iris();
    let run = |args: &[&str]| {
        std::process::Command::new(env!("CARGO_BIN_EXE_copse"))
            .args(args)
            .current_dir(dir.path())
            .stdout(std::process::Stdio::null())
            .stderr(full_stderr())
            .status()
            .expect("copse runs")
            .code()
    };
    let train = [
        "train", "--data", &i, "--target", "species", "--out", "m.copse", "--trees", "5",
    ];
    assert_eq!(run(&train), Some(0));
    assert!(dir.path().join("m.copse").exists());
    assert_eq!(
        run(&[
            "train",
            "--data",
            "absent.csv",
            "--target",
            "y",
            "--out",
            "x"
        ]),
        Some(2)
    );
    assert_eq!(run(&["train", "--frobnicate"]), Some(2));
}

/// Ctrl-C while scoring to standard output says how many rows went out, instead of
/// "nothing was written".
#[test]
fn r09_an_interrupted_stream_says_how_many_rows_went_out() {
    use std::io::{BufRead, Write};
    let dir = tmp();
    iris_model(dir.path());
    let mut child = std::process::Command::new(env!("CARGO_BIN_EXE_copse"))
        .args([
            "score",
            "--model",
            "iris.copse",
            "--data",
            "-",
            "--block-rows",
            "2",
            "--threads",
            "1",
        ])
        .current_dir(dir.path())
        .stdin(std::process::Stdio::piped())
        .stdout(std::process::Stdio::piped())
        .stderr(std::process::Stdio::piped())
        .spawn()
        .expect("copse starts");
    let mut pipe = child.stdin.take().expect("stdin");
    pipe.write_all(IRIS_HEADER.as_bytes()).expect("feed");
    for k in 0..5 {
        writeln!(pipe, "r{k},5.1,3.5,1.4,0.2").expect("feed");
    }
    pipe.flush().expect("flush");
    // Two blocks of two rows go out; the fifth row waits for its block to fill.
    let mut lines = std::io::BufReader::new(child.stdout.take().expect("stdout"));
    let mut line = String::new();
    for _ in 0..5 {
        line.clear();
        lines.read_line(&mut line).expect("a scored row");
    }
    let out = super::bad_input::interrupt(child);
    drop(pipe);
    let se = super::text(&out.stderr);
    assert_eq!(out.status.code(), Some(130), "{se}");
    assert!(
        se.contains("copse: interrupted; 4 rows had been written to standard output"),
        "{se}"
    );
}

mod limits;
