//! `copse demo`: the main job end to end on the invented water-main register: write
//! the data, train with plots and out-of-bag predictions, save the report, score a
//! batch of further segments, and say where every output went.
use crate::args::{
    ColumnRoles, CsvArgs, CutsArg, DelimiterArg, DemoArgs, ImpurityArg, ScoreArgs, TrainArgs,
};
use crate::commands::make_demo_data::write_demo_files;
use crate::commands::report_page::{CATCH_SVG, RELIABILITY_SVG};
use crate::commands::{emit, make_folder, score, train};
use crate::decision_args::DecisionArgs;
use crate::demo_data::{DEFAULT_SEED, ID, TARGET};
use crate::error::{CliError, CliResult};
use crate::numbers::{count, pct};
use crate::output::write_file;
use crate::ui::Ui;
use copse_forest::Sampling;
use std::fmt::Write;
use std::path::Path;

const TRAIN_ROWS: u64 = 2000;
const SCORE_ROWS: u64 = 500;
const TREES: u32 = 500;
/// Segments the demo's inspectors can visit: the catch-by-rank table gets a line for it.
const DEMO_BUDGET: u64 = 50;

/// Runs `copse demo`.
///
/// # Errors
/// Failures when writing into the output folder.
pub fn run(a: &DemoArgs, ui: &Ui) -> CliResult<()> {
    let dir = &a.out;
    make_folder(dir)?;
    let shown = |p: &Path| p.display().to_string();
    let (train_csv, score_csv) =
        write_demo_files(&dir.join("data"), TRAIN_ROWS, SCORE_ROWS, DEFAULT_SEED)?;
    crate::output::commit_all()?;
    let model_path = dir.join("water_mains.copse");
    let oob_path = dir.join("oob_predictions.csv");
    let plots_dir = dir.join("plots");
    let scored_path = dir.join("scored_segments.csv");
    let report_path = dir.join("report.txt");
    let page_path = dir.join("report.html");

    let csv = CsvArgs {
        delimiter: DelimiterArg::Comma,
        missing: None,
        decimal: None,
    };
    let targs = TrainArgs {
        data: shown(&train_csv),
        roles: ColumnRoles {
            target: TARGET.to_string(),
            ignore: vec![ID.to_string()],
            categorical: Vec::new(),
            numeric: Vec::new(),
            task: None,
            weights: None,
            group: None,
        },
        out: model_path.clone(),
        csv: csv.clone(),
        trees: TREES,
        features_per_split: None,
        bagging: false,
        sampling: Some(Sampling::Bootstrap),
        balanced: false,
        impurity: ImpurityArg::Gini,
        cuts: CutsArg::Best,
        max_depth: None,
        min_leaf: 1,
        bins: 255,
        seed: 1,
        oob_out: Some(oob_path.clone()),
        plots: Some(plots_dir.clone()),
        keep_draws: false,
        keep_leaf_rows: false,
        shuffled_target_runs: None,
        renamed_shuffled_target_runs: None,
        json: false,
        report: Some(page_path.clone()),
        decision: DecisionArgs {
            budget: Some(DEMO_BUDGET),
            ..DecisionArgs::default()
        },
        allow_large: false,
        tree_range: None,
    };
    let mut text = String::new();
    let _ = writeln!(
        text,
        "copse demo: an INVENTED register of {TRAIN_ROWS} water-main segments of a fictional utility.\n\
         Task: learn which segments failed within the year, then rank {SCORE_ROWS} further segments.\n"
    );
    emit(&text)?;
    let run = train::train(&targs, ui)?;
    write_file(&report_path, run.text.as_bytes())?;
    crate::output::commit_all()?;
    emit(&run.text)?;

    let sargs = ScoreArgs {
        model: model_path.clone(),
        data: shown(&score_csv),
        out: Some(shown(&scored_path)),
        keep: vec![ID.to_string()],
        uncertainty: false,
        interval: None,
        flag_unfamiliar: false,
        csv,
        blank_unscorable: false,
        columns: Vec::new(),
        omit_header: false,
        out_format: crate::args::OutFormat::Csv,
        block_rows: None,
    };
    let scored = score::score(&sargs, ui)?;
    crate::output::commit_all()?;

    let mut tail = String::new();
    let _ = writeln!(
        tail,
        "\nHIGHEST ESTIMATED CHANCE OF FAILURE IN THE SCORED BATCH"
    );
    for (id, p) in top_segments(&scored_path, 5)? {
        let _ = writeln!(tail, "  {id:<12} {:>6}", pct(p));
    }
    let _ = writeln!(
        tail,
        "  (a ranking to focus inspections, not a verdict on any segment)\n"
    );
    let _ = writeln!(tail, "WHERE EVERYTHING WENT");
    let items = [
        ("training data (invented)", train_csv.clone()),
        ("segments to score", score_csv.clone()),
        ("model", model_path.clone()),
        ("report (as above)", report_path.clone()),
        ("report page (open it)", page_path.clone()),
        ("out-of-bag predictions", oob_path.clone()),
        ("importance chart", plots_dir.join("importance.svg")),
        ("out-of-bag error chart", plots_dir.join("oob_error.svg")),
        ("catch-by-rank chart", plots_dir.join(CATCH_SVG)),
        ("calibration chart", plots_dir.join(RELIABILITY_SVG)),
        ("scored segments", scored_path.clone()),
    ];
    for (what, path) in &items {
        let _ = writeln!(tail, "  {what:<26}{}", path.display());
    }
    let _ = writeln!(
        tail,
        "\nThe same steps by hand:\n  \
         copse train --data {} --target {TARGET} --ignore {ID} --out {} --oob-out {} --plots {} --budget {DEMO_BUDGET} --report {}\n  \
         copse score --model {} --data {} --keep {ID} --out {}\n  \
         copse evaluate --model {} --data <labelled rows the model has not seen>\n  \
         copse inspect --model {} --tree 0",
        train_csv.display(),
        model_path.display(),
        oob_path.display(),
        plots_dir.display(),
        page_path.display(),
        model_path.display(),
        score_csv.display(),
        scored_path.display(),
        model_path.display(),
        model_path.display(),
    );
    let _ = writeln!(
        tail,
        "\n{} scored.",
        count(scored.rows as usize, "row", "rows")
    );
    emit(&tail)
}

/// The `n` segments with the highest probability of failure in the scored file.
fn top_segments(path: &Path, n: usize) -> CliResult<Vec<(String, f64)>> {
    let mut r = csv::Reader::from_path(path)
        .map_err(|e| CliError::failure(format!("could not read back {}: {e}", path.display())))?;
    let headers = r
        .headers()
        .map_err(|e| CliError::failure(format!("could not read back {}: {e}", path.display())))?
        .clone();
    let col = headers
        .iter()
        .position(|h| h == "prob_yes")
        .ok_or_else(|| CliError::failure("the scored file has no prob_yes column"))?;
    let mut rows: Vec<(String, f64)> = Vec::new();
    for rec in r.records() {
        let rec = rec.map_err(|e| {
            CliError::failure(format!("could not read back {}: {e}", path.display()))
        })?;
        let p = rec
            .get(col)
            .and_then(|v| v.parse::<f64>().ok())
            .unwrap_or(0.0);
        rows.push((rec.get(0).unwrap_or("").to_string(), p));
    }
    rows.sort_by(|a, b| b.1.total_cmp(&a.1));
    rows.truncate(n);
    Ok(rows)
}
