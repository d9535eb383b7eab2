//! S1M end to end: the `copse` binary trains on a CSV file and scores a CSV file on 1
//! and all threads, set beside a CSV pass alone (read, parse, write) on one thread; and
//! scores the same rows from a Parquet file, to CSV and to Parquet.
use crate::config::{Config, K, TREES};
use crate::table::Table;
use copse_forest::{synth, Outcome};
use std::fmt::Write as _;
use std::io::{BufRead, BufWriter, Write};
use std::path::{Path, PathBuf};
use std::process::Command;
use std::time::{Duration, Instant};

/// Adds the end-to-end section: `copse train` on `train` written as CSV, then
/// `copse score` on `score` written as CSV.
pub fn section(
    cfg: &Config,
    train: &synth::Synthetic,
    score: &synth::Synthetic,
    table: &mut Table,
) {
    let threads = cfg.threads;
    let (n100k, n1m) = (train.x.nrows(), score.x.nrows());
    table.section(&format!(
        "S1M end to end: copse score, CSV to CSV, {n1m} rows"
    ));
    if cfg.skip("e2e") {
        table.note("skipped (COPSE_BENCH_SKIP)");
        return;
    }
    let e = match run(train, score, threads, cfg.repeat) {
        Ok(e) => e,
        Err(msg) => {
            table.note(&format!("not measured: {msg}"));
            return;
        }
    };
    table.ratio_row(
        "rows per second, 1 thread",
        n1m as f64 / e.score1.as_secs_f64(),
        n1m as f64 / e.csv_floor.as_secs_f64(),
        "",
    );
    table.ratio_row(
        &format!("rows per second, {threads} threads"),
        n1m as f64 / e.score_all.as_secs_f64(),
        n1m as f64 / e.csv_floor.as_secs_f64(),
        ">= 450000 on 2 threads (issue 19)",
    );
    table.ratio_row(
        &format!("rows per second, Parquet to CSV, {threads} threads"),
        n1m as f64 / e.parquet_in.as_secs_f64(),
        n1m as f64 / e.score_all.as_secs_f64(),
        "",
    );
    table.ratio_row(
        &format!("rows per second, Parquet to Parquet, {threads} threads"),
        n1m as f64 / e.parquet_both.as_secs_f64(),
        n1m as f64 / e.score_all.as_secs_f64(),
        "",
    );
    table.ratio_row(
        &format!("end-to-end speed-up, {threads} threads over 1"),
        e.score1.as_secs_f64() / e.score_all.as_secs_f64(),
        threads as f64,
        ">= 1.9 (issue 19)",
    );
    table.note(&format!(
        "CPU seconds of copse score (user + system): {:.2} on 1 thread, {:.2} on {threads}; \
         {:.0} rows per CPU second on 1 thread (on a machine shared with other work, \
         the CPU seconds move far less than the walls)",
        e.cpu1,
        e.cpu_all,
        n1m as f64 / e.cpu1.max(1e-9)
    ));
    table.row(
        "bytes per node on disk (model file)",
        format!("{:.2}", e.file_bytes as f64 / e.file_nodes.max(1) as f64),
        String::new(),
        "<= 16",
    );
    table.note(&format!(
        "input CSV {:.1} MB; copse train on the {n100k}-row CSV took {:.2} s \
         ({threads} threads, with report and importance); model file {} bytes, \
         {} nodes; rows/s limit = one-thread CSV pass alone (for the Parquet rows: CSV to \
         CSV on as many threads); Parquet input {:.1} MB",
        e.csv_bytes as f64 / 1e6,
        e.train.as_secs_f64(),
        e.file_bytes,
        e.file_nodes,
        e.parquet_bytes as f64 / 1e6
    ));
}

/// What the end-to-end run measured.
struct EndToEnd {
    train: Duration,
    score1: Duration,
    score_all: Duration,
    /// CPU seconds of the scoring runs (the least of the repeats).
    cpu1: f64,
    cpu_all: f64,
    csv_floor: Duration,
    csv_bytes: u64,
    parquet_in: Duration,
    parquet_both: Duration,
    parquet_bytes: u64,
    file_bytes: u64,
    file_nodes: u64,
}

/// Writes the training and scoring CSV files, trains with `copse train`, scores with
/// `copse score` on 1 and all threads (the fastest of `repeat` runs each, taken in
/// turn so both see the machine alike), and times the CSV pass alone.
fn run(
    train: &synth::Synthetic,
    score: &synth::Synthetic,
    threads: usize,
    repeat: usize,
) -> Result<EndToEnd, String> {
    let exe = copse_binary().ok_or(
        "no copse binary: build it with `cargo build --release -p copse-cli`, or set COPSE_BIN",
    )?;
    let dir = std::env::temp_dir().join(format!("copse-bench-{}", std::process::id()));
    std::fs::create_dir_all(&dir).map_err(|e| format!("{}: {e}", dir.display()))?;
    let result = (|| {
        let train_csv = dir.join("train.csv");
        let score_csv = dir.join("score.csv");
        let model = dir.join("model.copse");
        write_csv(&train_csv, train, true)?;
        write_csv(&score_csv, score, false)?;
        let csv_bytes = std::fs::metadata(&score_csv).map_or(0, |m| m.len());
        let t = Instant::now();
        run_copse(
            &exe,
            &[
                "--quiet",
                "--threads",
                &threads.to_string(),
                "train",
                "--data",
                path_str(&train_csv)?,
                "--target",
                "class",
                "--out",
                path_str(&model)?,
                "--trees",
                &TREES.to_string(),
                "--features-per-split",
                &K.to_string(),
                "--min-leaf",
                "1",
                "--seed",
                "1",
            ],
        )?;
        let train_wall = t.elapsed();
        let info = run_copse(&exe, &["inspect", "--model", path_str(&model)?, "--json"])?;
        let json: serde_json::Value =
            serde_json::from_str(&info).map_err(|e| format!("inspect --json: {e}"))?;
        let find = |key: &str| find_number(&json, key).unwrap_or(0);
        let score_parquet = dir.join("score.parquet");
        crate::parquet_rows::write(&score_parquet, score)?;
        let parquet_bytes = std::fs::metadata(&score_parquet).map_or(0, |m| m.len());
        let parquet_out = ["--out-format", "parquet"];
        let score_with = |t: usize, data: &Path, extra: &[&str], rows: Option<usize>| {
            let out = dir.join(format!("scored-{t}.out"));
            timed_score(&exe, t, &model, data, &out, extra, rows)
        };
        let (mut score1, mut score_all) = (Duration::MAX, Duration::MAX);
        let (mut parquet_in, mut parquet_both) = (Duration::MAX, Duration::MAX);
        let (mut cpu1, mut cpu_all) = (f64::INFINITY, f64::INFINITY);
        for _ in 0..repeat {
            let (w, c) = score_with(1, &score_csv, &[], Some(score.x.nrows()))?;
            score1 = score1.min(w);
            cpu1 = cpu1.min(c);
            let (w, c) = score_with(threads, &score_csv, &[], Some(score.x.nrows()))?;
            score_all = score_all.min(w);
            cpu_all = cpu_all.min(c);
            let (w, _) = score_with(threads, &score_parquet, &[], None)?;
            parquet_in = parquet_in.min(w);
            let (w, _) = score_with(threads, &score_parquet, &parquet_out, None)?;
            parquet_both = parquet_both.min(w);
        }
        let csv_floor = csv_pass(&score_csv, &dir.join("floor.csv"), train.x.ncols())?;
        Ok(EndToEnd {
            train: train_wall,
            score1,
            score_all,
            cpu1,
            cpu_all,
            csv_floor,
            csv_bytes,
            parquet_in,
            parquet_both,
            parquet_bytes,
            file_bytes: find("file_bytes"),
            file_nodes: find("nodes"),
        })
    })();
    let _ = std::fs::remove_dir_all(&dir);
    result
}

/// The `copse` binary: `COPSE_BIN` if set; else the one Cargo built beside this
/// benchmark (`cargo bench -p copse-cli` builds it); else one in the same target
/// directory (`target/release/copse`).
pub fn copse_binary() -> Option<PathBuf> {
    if let Some(p) = std::env::var_os("COPSE_BIN") {
        return Some(PathBuf::from(p));
    }
    if let Some(p) = option_env!("CARGO_BIN_EXE_copse") {
        return Some(PathBuf::from(p));
    }
    let exe = std::env::current_exe().ok()?;
    let dir = exe.parent()?.parent()?;
    let bin = dir.join(format!("copse{}", std::env::consts::EXE_SUFFIX));
    bin.exists().then_some(bin)
}

pub fn path_str(p: &Path) -> Result<&str, String> {
    p.to_str()
        .ok_or_else(|| format!("{} is not valid UTF-8", p.display()))
}

/// First number under `key` anywhere in a JSON value.
pub fn find_number(v: &serde_json::Value, key: &str) -> Option<u64> {
    match v {
        serde_json::Value::Object(m) => m
            .get(key)
            .and_then(serde_json::Value::as_u64)
            .or_else(|| m.values().find_map(|x| find_number(x, key))),
        serde_json::Value::Array(a) => a.iter().find_map(|x| find_number(x, key)),
        _ => None,
    }
}

/// Runs `copse score` of `data` with `model` on `threads` threads into `out`, `extra`
/// arguments added, and removes `out` again. Returns the wall and the CPU seconds
/// (user + system) of the run; with `rows` given, checks that `out` holds a header
/// line and a line per row first.
pub fn timed_score(
    exe: &Path,
    threads: usize,
    model: &Path,
    data: &Path,
    out: &Path,
    extra: &[&str],
    rows: Option<usize>,
) -> Result<(Duration, f64), String> {
    let _ = std::fs::remove_file(out);
    let threads = threads.to_string();
    let mut args = vec![
        "--quiet",
        "--threads",
        &threads,
        "score",
        "--model",
        path_str(model)?,
        "--data",
        path_str(data)?,
        "--out",
        path_str(out)?,
    ];
    args.extend_from_slice(extra);
    let cpu = crate::machine::children_cpu_s();
    let start = Instant::now();
    run_copse(exe, &args)?;
    let wall = start.elapsed();
    let cpu = crate::machine::children_cpu_s() - cpu;
    if let Some(rows) = rows {
        let lines = std::fs::File::open(out)
            .map(|f| std::io::BufReader::new(f).lines().count())
            .map_err(|e| e.to_string())?;
        if lines != rows + 1 {
            return Err(format!("copse score wrote {lines} lines for {rows} rows"));
        }
    }
    let _ = std::fs::remove_file(out);
    Ok((wall, cpu))
}

pub fn run_copse(exe: &Path, args: &[&str]) -> Result<String, String> {
    let out = Command::new(exe)
        .args(args)
        .output()
        .map_err(|e| format!("cannot run {}: {e}", exe.display()))?;
    if !out.status.success() {
        return Err(format!(
            "copse {} failed: {}",
            args.iter()
                .find(|a| !a.starts_with('-') && a.parse::<u64>().is_err())
                .unwrap_or(&""),
            String::from_utf8_lossy(&out.stderr).trim()
        ));
    }
    Ok(String::from_utf8_lossy(&out.stdout).into_owned())
}

/// Writes the inputs (six decimals, as a measuring instrument would give them) and,
/// for training, the class.
fn write_csv(path: &Path, data: &synth::Synthetic, with_class: bool) -> Result<(), String> {
    let f = std::fs::File::create(path).map_err(|e| format!("{}: {e}", path.display()))?;
    let mut w = BufWriter::with_capacity(1 << 20, f);
    let p = data.x.ncols();
    let mut line = String::new();
    for j in 1..=p {
        let _ = write!(line, "{}x{j}", if j > 1 { "," } else { "" });
    }
    if with_class {
        line.push_str(",class");
    }
    line.push('\n');
    let codes = match &data.outcome {
        Outcome::Classes { codes, .. } => codes.as_slice(),
        Outcome::Values(_) => &[],
    };
    for (i, row) in data.x.rows().into_iter().enumerate() {
        for (j, v) in row.iter().enumerate() {
            let _ = write!(line, "{}{v:.6}", if j > 0 { "," } else { "" });
        }
        if with_class {
            let _ = write!(line, ",c{}", codes.get(i).copied().unwrap_or(0));
        }
        line.push('\n');
        if line.len() > 1 << 16 {
            w.write_all(line.as_bytes()).map_err(|e| e.to_string())?;
            line.clear();
        }
    }
    w.write_all(line.as_bytes()).map_err(|e| e.to_string())?;
    w.flush().map_err(|e| e.to_string())
}

/// The CSV floor: read every record with a reused buffer, parse every cell as a
/// number, write one short line per row; one thread.
fn csv_pass(input: &Path, output: &Path, p: usize) -> Result<Duration, String> {
    let start = Instant::now();
    let mut r = csv::Reader::from_path(input).map_err(|e| e.to_string())?;
    let f = std::fs::File::create(output).map_err(|e| e.to_string())?;
    let mut w = BufWriter::with_capacity(1 << 16, f);
    let mut rec = csv::ByteRecord::new();
    let mut row = vec![0.0f64; p];
    while r.read_byte_record(&mut rec).map_err(|e| e.to_string())? {
        for (v, cell) in row.iter_mut().zip(rec.iter()) {
            *v = std::str::from_utf8(cell)
                .ok()
                .and_then(|s| s.parse().ok())
                .unwrap_or(f64::NAN);
        }
        let s: f64 = row.iter().sum();
        writeln!(w, "{},{:.6},{:.6}", s > 0.0, s, -s).map_err(|e| e.to_string())?;
    }
    w.flush().map_err(|e| e.to_string())?;
    let wall = start.elapsed();
    let _ = std::fs::remove_file(output);
    Ok(wall)
}
