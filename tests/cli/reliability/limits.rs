//! The bad-input matrix, cases r10 on: usage errors on one line, the memory estimate
//! against measured peaks, output paths and threads checked before any work, exact kept
//! cells and escaped messages, scoring memory on very wide files, the stability folds'
//! reason, labels merged by trimming, and decimal commas.
use super::*;

/// A usage error from the argument parser is one `copse: error:` line with the hint,
/// like every other error.
#[test]
fn r10_usage_errors_are_one_line() {
    let dir = tmp();
    let out = copse_in(dir.path(), &["train", "--frobnicate"], None);
    let (_, se) = expect_code(&out, 2);
    assert_eq!(se.lines().count(), 1, "{se}");
    assert!(
        se.starts_with("copse: error: unexpected argument '--frobnicate' found")
            && se.trim_end().ends_with("see 'copse train --help'"),
        "{se}"
    );
}

/// Runs copse with `args` in `dir` and returns its peak resident memory in bytes
/// (`VmHWM`, read from `/proc` while it runs; the peak comes while the model is saved,
/// well before the process ends).
fn peak_of(dir: &Path, args: &[&str]) -> f64 {
    let mut child = std::process::Command::new(env!("CARGO_BIN_EXE_copse"))
        .args(args)
        .current_dir(dir)
        .stdout(std::process::Stdio::null())
        .stderr(std::process::Stdio::null())
        .spawn()
        .expect("copse starts");
    let status = format!("/proc/{}/status", child.id());
    let mut peak_kib = 0u64;
    loop {
        if let Ok(text) = std::fs::read_to_string(&status) {
            let hwm = text
                .lines()
                .find_map(|l| l.strip_prefix("VmHWM:"))
                .and_then(|v| v.trim().trim_end_matches("kB").trim().parse().ok());
            if let Some(v) = hwm {
                peak_kib = peak_kib.max(v);
            }
        }
        if child.try_wait().expect("wait").is_some() {
            break;
        }
        std::thread::sleep(std::time::Duration::from_millis(2));
    }
    assert!(child.wait().expect("copse ends").success());
    peak_kib as f64 * 1024.0
}

/// The memory check's estimate of a run's peak against the peak measured, for 2, 3, 100
/// and 1,000 classes: within a factor 1.5 either way (it once missed many classes by
/// three times: the model's file is built beside the model, and the per-row tables of
/// the out-of-bag pass hold a value per class). Labels are drawn at random, so trees grow
/// until their leaves are pure, as on data with many rare classes. The large case is
/// 6,000 rows and 3 trees rather than thousands of classes on more rows, to stay fast.
#[test]
fn r11_the_memory_estimate_follows_the_measured_peak() {
    if !Path::new("/proc/self/status").exists() {
        return;
    }
    use copse_cli::memory::{peak_bytes, Request};
    let dir = tmp();
    // (classes, rows, trees)
    for (k, rows, trees) in [
        (2u64, 10_000u64, 60u32),
        (3, 10_000, 60),
        (100, 6_000, 10),
        (1_000, 6_000, 3),
    ] {
        let mut state = 0x2545_f491_4f6c_dd1du64 ^ k;
        let mut next = move || {
            // xorshift64 (Marsaglia 2003): a fixed stream of test data.
            state ^= state << 13;
            state ^= state >> 7;
            state ^= state << 17;
            state
        };
        let mut d = String::from("a,b,y\n");
        for _ in 0..rows {
            let a = next() % 100_000;
            let b = next() % 1_000;
            d.push_str(&format!("{a},{b},c{}\n", next() % k));
        }
        put(dir.path(), "d.csv", &d);
        let trees_s = trees.to_string();
        let args = [
            "train",
            "--data",
            "d.csv",
            "--target",
            "y",
            "--out",
            "m.copse",
            "--trees",
            &trees_s,
            "--threads",
            "2",
            "-q",
        ];
        let measured = peak_of(dir.path(), &args);
        // The same request the command makes.
        let table = copse_data::TrainingTable::from_csv(
            copse_data::CsvInput::open(
                &dir.path().join("d.csv").to_string_lossy(),
                copse_data::Delimiter::Comma,
            )
            .expect("open"),
            &copse_data::Roles::target("y"),
            copse_data::Missing::standard(),
        )
        .expect("read");
        let settings = copse_forest::ForestSettings {
            trees: trees as usize,
            ..Default::default()
        };
        let estimate = peak_bytes(&Request::new(&table, &settings, false));
        let ratio = estimate / measured;
        eprintln!(
            "{k} classes: estimate {estimate:.0}, measured peak {measured:.0}, ratio {ratio:.2}"
        );
        assert!(
            (1.0 / 1.5..=1.5).contains(&ratio),
            "{k} classes: estimate {estimate}, peak {measured}"
        );
    }
}

/// Outputs checked before any work: `--oob-out -` (which would mix a CSV and the report
/// on standard output) and a file path ending in `/` are refused at once; a thread
/// count far above the cores is cut with a note instead of crawling.
#[test]
fn r12_output_paths_and_threads_are_checked_before_any_work() {
    let dir = tmp();
    let i = super::super::bad_input::iris();
    let mut args = vec![
        "train", "--data", &i, "--target", "species", "--out", "m.copse", "--trees", "5",
    ];
    let mut dash = args.clone();
    dash.extend(["--oob-out", "-"]);
    refused(
        dir.path(),
        &dash,
        None,
        2,
        &["--oob-out -", "give a file name"],
    );
    let mut slash = args.clone();
    slash[6] = "x.copse/";
    refused(dir.path(), &slash, None, 2, &["x.copse/", "names a folder"]);
    args.extend(["--threads", "65535"]);
    let (_, se) = expect_code(&copse_in(dir.path(), &args, None), 0);
    assert!(
        se.contains("--threads 65535 is more than 8 per core"),
        "{se}"
    );
}

/// A kept column is copied exactly (a quoted CR LF keeps its CR), and a message quoting
/// a name or cell holding control characters stays on one line with them escaped.
#[test]
fn r13_kept_cells_are_exact_and_messages_are_escaped() {
    let dir = tmp();
    iris_model(dir.path());
    put(
        dir.path(),
        "new.csv",
        format!("{IRIS_HEADER}\"\r\n4\",5.1,3.5,1.4,0.2\r\n"),
    );
    let (so, _) = expect_code(&score_in(dir.path(), &["--keep", "id"]), 0);
    assert!(so.contains("\"\r\n4\",setosa,"), "{so:?}");
    put(dir.path(), "d.csv", "a\0b,y\n1,p\n2,q\n");
    let se = refused(dir.path(), &train_args("d.csv", "zz"), None, 2, &["a\\0b"]);
    assert!(!se.contains('\0') && se.lines().count() == 1, "{se:?}");
}

/// A file of `rows` rows and 20,000 one-digit columns `c0`, `c1`, ..., then a class
/// `y` that follows `c3`; written straight to `path`.
fn wide_file(path: &Path, rows: usize) {
    const COLS: usize = 20_000;
    let mut d = Vec::with_capacity((rows + 1) * (2 * COLS + 8));
    for j in 0..COLS {
        d.extend_from_slice(format!("c{j},").as_bytes());
    }
    d.extend_from_slice(b"y\n");
    for r in 0..rows {
        for j in 0..COLS {
            d.push(b'0' + ((r * 31 + j * 17 + r * j) % 10) as u8);
            d.push(b',');
        }
        let c3 = (r * 31 + 3 * 17 + r * 3) % 10;
        d.extend_from_slice(if c3 < 5 { b"a\n" } else { b"b\n" });
    }
    std::fs::write(path, d).expect("write the wide file");
}

/// Scoring a file of 20,000 columns keeps memory bounded whatever its width: a block
/// keeps only the model's inputs and the kept cells of its rows, and blocks are sized
/// by bytes as well as rows. Once every row of a block kept its whole record, so 2,000
/// rows of 20,000 columns scored by a model of three inputs peaked near 1 GB; a model
/// of all 20,000 inputs needs 160 kB of values a row, so its blocks hold fewer rows.
/// Peak resident memory is measured on two threads (a block read ahead) and held under
/// 100 MB; the output keeps one row per input row.
#[test]
fn r14_scoring_a_very_wide_file_keeps_memory_bounded() {
    if !Path::new("/proc/self/status").exists() {
        return;
    }
    let dir = tmp();
    wide_file(&dir.path().join("wide.csv"), 2_000);
    // A model of three of the columns, trained on a narrow copy of the first rows.
    let text = std::fs::read_to_string(dir.path().join("wide.csv")).expect("read");
    let mut narrow = String::from("c3,c7,c11,y\n");
    for line in text.lines().skip(1).take(300) {
        let f: Vec<&str> = line.split(',').collect();
        narrow.push_str(&format!("{},{},{},{}\n", f[3], f[7], f[11], f[20_000]));
    }
    drop(text);
    put(dir.path(), "narrow.csv", narrow);
    let train = |data: &str, model: &str| {
        let args = [
            "train", "--data", data, "--target", "y", "--out", model, "--trees", "3", "-q",
        ];
        expect_code(&copse_in(dir.path(), &args, None), 0);
    };
    train("narrow.csv", "few.copse");
    // A model of all 20,000 columns, trained on the first 200 rows.
    let head: String = std::fs::read_to_string(dir.path().join("wide.csv"))
        .expect("read")
        .lines()
        .take(201)
        .map(|l| format!("{l}\n"))
        .collect();
    put(dir.path(), "head.csv", head);
    train("head.csv", "all.copse");
    for model in ["few.copse", "all.copse"] {
        let args = [
            "score",
            "--model",
            model,
            "--data",
            "wide.csv",
            "--keep",
            "c0",
            "--out",
            "s.csv",
            "--threads",
            "2",
            "-q",
        ];
        let peak = peak_of(dir.path(), &args);
        eprintln!("{model}: peak {:.1} MB", peak / 1e6);
        assert!(peak < 100e6, "{model}: peak {peak} bytes");
        let out = std::fs::read_to_string(dir.path().join("s.csv")).expect("the scores");
        assert_eq!(out.lines().count(), 2_001, "{model}");
        assert!(out.starts_with("c0,prediction,prob_a,prob_b\n"), "{model}");
    }
}

/// `copse stability` on 3 rows with `--folds 2`: a fold's tree would have 1 row to
/// train on, and the message says so and which fold count works (it once said only 1
/// row had a known outcome, when all 3 had); `--folds 3` runs.
#[test]
fn r15_stability_folds_too_few_for_a_tree_give_the_right_reason() {
    let dir = tmp();
    put(dir.path(), "d.csv", "a,y\n1,1.5\n2,2.5\n3,4.0\n");
    let mut args = vec![
        "stability",
        "--data",
        "d.csv",
        "--target",
        "y",
        "--trees",
        "5",
        "--seeds",
        "2",
        "--folds",
        "2",
    ];
    let se = refused(
        dir.path(),
        &args,
        None,
        2,
        &[
            "with 3 rows with an outcome in 2 folds",
            "trained on the other folds' 1 row(s)",
            "use 3 folds or more",
        ],
    );
    assert!(!se.contains("known outcome"), "{se}");
    args[10] = "3";
    expect_code(&copse_in(dir.path(), &args, None), 0);
}

/// Target labels `plain` and `plain ` (a trailing space) are one class once cells are
/// trimmed; the training notes say which labels were merged, on standard error and in
/// the JSON report (they once merged without a word).
#[test]
fn r16_labels_merged_by_trimming_are_noted() {
    let dir = tmp();
    let mut d = String::from("a,finish\n");
    for i in 0..30 {
        let label = ["plain", "plain ", "ribbed"][i % 3];
        d.push_str(&format!("{i},{label}\n"));
    }
    put(dir.path(), "d.csv", d);
    let mut args = train_args("d.csv", "finish");
    args.push("--json");
    let (so, se) = expect_code(&copse_in(dir.path(), &args, None), 0);
    let want = "the target 'finish' holds labels that differ only in spaces at their ends, \
                and each such set is read as one: 'plain' and 'plain ' as 'plain'";
    assert!(se.contains(want), "{se}");
    let j = super::super::json_of(&so);
    let notes = j["notes"].as_array().expect("notes");
    assert!(
        notes
            .iter()
            .any(|n| n.as_str().is_some_and(|n| n.starts_with(want))),
        "{notes:?}"
    );
}

/// A decimal-comma file (semicolons between fields, `5,1` cells): read as it is, its
/// measurements would be categories, and a note says so and offers `--decimal comma`;
/// with it, the model is the one trained on the same numbers written with points (the
/// same predictions), its card keeps the mark, so scoring, evaluation and importance read
/// new decimal-comma files the same way without being told, and a point in such a file
/// is refused with a hint.
#[test]
fn r17_decimal_commas_are_noted_and_read_with_decimal_comma() {
    let dir = tmp();
    let points = std::fs::read_to_string(super::super::bad_input::iris()).expect("iris");
    let commas = points.replace(',', ";").replace('.', ",");
    put(dir.path(), "p.csv", &points);
    put(dir.path(), "c.csv", &commas);
    let train = |data: &str, model: &str, extra: &[&str]| {
        let mut args = vec![
            "train", "--data", data, "--target", "species", "--out", model, "--trees", "20",
            "--seed", "7",
        ];
        args.extend_from_slice(extra);
        copse_in(dir.path(), &args, None)
    };
    let (_, se) = expect_code(
        &train("c.csv", "raw.copse", &["--delimiter", "semicolon"]),
        0,
    );
    assert!(
        se.contains(
            "columns 'sepal_length', 'sepal_width', 'petal_length' and 1 more hold numbers \
             written with a decimal comma (such as '5,1' on line 2), so copse reads them as \
             categories; add --decimal comma to read them as numbers"
        ),
        "{se}"
    );
    let comma_args = ["--delimiter", "semicolon", "--decimal", "comma"];
    let (_, se) = expect_code(&train("c.csv", "c.copse", &comma_args), 0);
    assert!(!se.contains("decimal comma"), "{se}");
    expect_code(&train("p.csv", "p.copse", &[]), 0);
    // Scored without --decimal: the comma model reads commas from its card.
    let score = |model: &str, data: &str, delimiter: &str| {
        let args = [
            "score",
            "--model",
            model,
            "--data",
            data,
            "--delimiter",
            delimiter,
        ];
        let (so, _) = expect_code(&copse_in(dir.path(), &args, None), 0);
        so.replace(';', ",")
    };
    let by_commas = score("c.copse", "c.csv", "semicolon");
    assert_eq!(by_commas.lines().count(), 151);
    assert_eq!(by_commas, score("p.copse", "p.csv", "comma"));
    for command in ["evaluate", "importance"] {
        let args = [
            command,
            "--model",
            "c.copse",
            "--data",
            "c.csv",
            "--delimiter",
            "semicolon",
        ];
        expect_code(&copse_in(dir.path(), &args, None), 0);
    }
    let stability = [
        "stability",
        "--data",
        "c.csv",
        "--target",
        "species",
        "--trees",
        "5",
        "--seeds",
        "2",
        "--delimiter",
        "semicolon",
        "--decimal",
        "comma",
    ];
    let (_, se) = expect_code(&copse_in(dir.path(), &stability, None), 0);
    assert!(!se.contains("decimal comma"), "{se}");
    let args = ["score", "--model", "c.copse", "--data", "p.csv"];
    refused(
        dir.path(),
        &args,
        None,
        2,
        &["'5.1' is not a finite number", "add --decimal point"],
    );
}
