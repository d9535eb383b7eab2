//! The HTML report page in a real headless browser (Debian's chromium). A test binary
//! of its own, so the browser's load never runs beside the timing-sensitive tests of
//! `tests/cli/` (cargo runs test binaries one after another).
//!
//! Data: the invented demo register `demo-data/water_mains.csv`, its first 1,400 rows
//! for training and the other 600 as rows the model has not seen.
use std::path::{Path, PathBuf};
use std::process::{Command, Stdio};
use std::time::{Duration, Instant};

fn repo(rel: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("../..")
        .join(rel)
}

/// Runs copse in `dir` and returns its standard output; panics unless it succeeds.
fn copse(dir: &Path, args: &[&str]) -> String {
    let out = Command::new(env!("CARGO_BIN_EXE_copse"))
        .args(args)
        .current_dir(dir)
        .env("NO_COLOR", "1")
        .stdin(Stdio::null())
        .output()
        .expect("copse runs");
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    String::from_utf8_lossy(&out.stdout).into_owned()
}

fn tmp() -> tempfile::TempDir {
    tempfile::tempdir().expect("a temporary folder")
}

/// Trains on the first 1,400 demo rows and evaluates on the other 600 with the page
/// written as `page.html`; returns the printed evaluation report.
fn evaluate_with_page(dir: &Path) -> String {
    let text = std::fs::read_to_string(repo("demo-data/water_mains.csv")).expect("demo data");
    let lines: Vec<&str> = text.lines().collect();
    let mut train = lines[..1401].join("\n");
    train.push('\n');
    let mut held = format!("{},district\n", lines[0]);
    for (i, r) in lines[1401..].iter().enumerate() {
        held.push_str(&format!("{r},d{}\n", i % 3));
    }
    std::fs::write(dir.join("train.csv"), train).expect("written");
    std::fs::write(dir.join("held_out.csv"), held).expect("written");
    copse(
        dir,
        &[
            "train",
            "--data",
            "train.csv",
            "--target",
            "failed_within_year",
            "--ignore",
            "segment_id",
            "--out",
            "m.copse",
            "--trees",
            "120",
            "--seed",
            "3",
        ],
    );
    copse(
        dir,
        &[
            "evaluate",
            "--model",
            "m.copse",
            "--data",
            "held_out.csv",
            "--costs",
            "1:4",
            "--by",
            "district",
            "--report",
            "page.html",
        ],
    )
}

/// The section headings of a printed report (unindented lines after the title).
fn printed_headings(text: &str) -> Vec<String> {
    text.lines()
        .skip(1)
        .filter(|l| !l.is_empty() && !l.starts_with(' '))
        .map(str::to_string)
        .collect()
}

/// Runs `cmd` for at most two minutes, reading its output as it comes (a full pipe
/// would stop it).
fn run_for_a_while(cmd: &mut Command) -> Option<std::process::Output> {
    use std::io::Read;
    let mut child = cmd
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .ok()?;
    let drain = |mut r: Box<dyn Read + Send>| {
        std::thread::spawn(move || {
            let mut v = Vec::new();
            let _ = r.read_to_end(&mut v);
            v
        })
    };
    let out = drain(Box::new(child.stdout.take()?));
    let err = drain(Box::new(child.stderr.take()?));
    let start = Instant::now();
    let status = loop {
        if let Some(s) = child.try_wait().ok()? {
            break s;
        }
        if start.elapsed() > Duration::from_secs(120) {
            let _ = child.kill();
            break child.wait().ok()?;
        }
        std::thread::sleep(Duration::from_millis(100));
    };
    Some(std::process::Output {
        status,
        stdout: out.join().ok()?,
        stderr: err.join().ok()?,
    })
}

/// The page in a real headless browser (Debian's chromium): it loads from disk with
/// networking off, its rendered document has every section (and the contribution
/// ranking and effect curves the page adds), the console reports no
/// error, and a screenshot is saved as `target/report.png` for a person to look at.
/// Skipped, saying so, when chromium is not installed (CI installs it).
#[test]
fn the_html_report_renders_in_a_headless_browser() {
    let Some(browser) = ["/usr/bin/chromium", "/usr/bin/chromium-browser"]
        .into_iter()
        .find(|p| Path::new(p).exists())
    else {
        eprintln!("skipped: chromium is not installed (apt-get install -y chromium)");
        return;
    };
    let dir = tmp();
    let text = evaluate_with_page(dir.path());
    let page = dir.path().join("page.html");
    let url = format!("file://{}", page.display());
    let shot = Path::new(env!("CARGO_TARGET_TMPDIR")).join("../report.png");
    let _ = std::fs::remove_file(&shot);
    let run = |extra: &[String]| {
        let profile = tmp();
        let mut cmd = Command::new(browser);
        cmd.args([
            "--headless",
            "--no-sandbox",
            "--disable-gpu",
            "--disable-quic",
            "--no-first-run",
            "--disable-background-networking",
            "--disable-component-update",
            "--disable-sync",
            "--enable-logging=stderr",
            "--v=0",
        ])
        .arg(format!("--user-data-dir={}", profile.path().display()))
        .args(extra)
        .arg(&url);
        run_for_a_while(&mut cmd).expect("chromium runs")
    };
    let dom = run(&["--dump-dom".to_string()]);
    let shown = run(&[
        format!("--screenshot={}", shot.display()),
        "--window-size=1200,3000".to_string(),
    ]);
    for out in [&dom, &shown] {
        let err = String::from_utf8_lossy(&out.stderr);
        assert!(
            !err.contains("Uncaught") && !err.contains("ERROR:CONSOLE"),
            "{err}"
        );
    }
    let dom = String::from_utf8_lossy(&dom.stdout);
    for head in printed_headings(&text) {
        let head = head.replace('&', "&amp;");
        assert!(
            dom.contains(&format!(">{head}</h2>")),
            "{head} missing from the rendered page"
        );
    }
    assert!(dom.contains("<svg"), "charts rendered");
    // The page's own sections: the contribution ranking (a table and one bar chart),
    // then the effect curves of the top three inputs, after the printed report's
    // sections and before the caution.
    let ranking = dom
        .find(">HOW FAR EACH INPUT MOVES A PREDICTION</h2>")
        .expect("the contribution ranking renders");
    let effects = dom
        .find(">HOW THE PREDICTIONS MOVE WITH THE TOP INPUTS</h2>")
        .expect("the effect-curve section renders");
    let caution = dom.find(">CAUTION</h2>").expect("the caution");
    assert!(ranking < effects && effects < caution);
    assert_eq!(
        dom[ranking..effects].matches("<svg").count(),
        1,
        "one contribution chart"
    );
    assert_eq!(
        dom[effects..caution].matches("<svg").count(),
        3,
        "three effect charts"
    );
    let png = std::fs::read(&shot).expect("a screenshot");
    assert!(
        png.starts_with(b"\x89PNG") && png.len() > 10_000,
        "a real screenshot"
    );
    eprintln!("screenshot: {}", shot.display());
}
