//! `copse train`: read a CSV file, grow the forest, write the model (and optionally the
//! out-of-bag predictions and charts), and report.
use crate::args::TrainArgs;
use crate::commands::report_page;
use crate::commands::{
    check_features_per_split, check_output, emit, make_folder, read_training, tree_settings,
};
use crate::decision_args::DecisionArgs;
use crate::error::{forest_error, CliError, CliResult};
use crate::memory;
use crate::numbers::{binary_bytes, fixed, value_decimals, PROBABILITY_DECIMALS};
use crate::output::{write_file, Output};
use crate::plots;
use crate::report::html::{Chart, Page};
use crate::report::judged::{Judged, Scores};
use crate::report::ranking::shown_mirror;
use crate::report::train::{TrainFacts, TrainView};
use crate::report::{self, Style};
use crate::ui::{Bar, Ui};
use copse_data::TrainingTable as TrainingData;
use copse_forest::{
    response_permutation_test, FeaturesPerSplit, Forest, ForestSettings, PermutationSignificance,
    Progress, Sampling, Significance, Stage, Task, TrainOptions, Trained,
};
use std::io::Write as _;
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicU8, Ordering};
use std::time::Instant;

/// What a training run produced.
pub struct TrainRun {
    /// The printed report.
    pub text: String,
    /// The JSON report, on one line.
    pub json: String,
    /// Files written: (what, path).
    pub outputs: Vec<(String, PathBuf)>,
}

/// Runs `copse train` (without `--tree-range`, which `train_part` runs) and prints
/// its report.
///
/// # Errors
/// Input errors for bad data or settings, failures when writing.
pub fn run(a: &TrainArgs, ui: &Ui) -> CliResult<()> {
    let r = train(a, ui)?;
    crate::output::commit_all()?;
    for (what, path) in &r.outputs {
        ui.wrote(&format!("{what}: {}", path.display()));
    }
    if a.json {
        emit(&format!("{}\n", r.json))
    } else {
        emit(&r.text)
    }
}

/// Trains and writes every output; the caller prints.
///
/// # Errors
/// As for [`run`].
pub fn train(a: &TrainArgs, ui: &Ui) -> CliResult<TrainRun> {
    let started = Instant::now();
    check_output(&a.data, &a.out, "model file")?;
    if let Some(o) = &a.oob_out {
        if o.as_os_str() == "-" {
            return Err(CliError::input(
                "--oob-out - would mix the out-of-bag CSV with the report on standard output; \
                 give a file name",
            ));
        }
        check_output(&a.data, o, "out-of-bag file")?;
        if o == &a.out {
            return Err(CliError::input(
                "--oob-out and --out name the same file; give them different names",
            ));
        }
    }
    if let Some(dir) = &a.plots {
        make_folder(dir)?;
    }
    if let Some(page) = &a.report {
        check_output(&a.data, page, "HTML report")?;
    }

    let data = read_training(&a.data, &a.roles, &a.csv, ui)?;
    check_positive(&a.decision, &data)?;
    let settings = resolve_settings(a, &data, ui)?;

    if !a.allow_large {
        check_memory(&data, &settings, a)?;
    }
    let options = TrainOptions {
        keep_draws: a.keep_draws,
        keep_leaf_rows: a.keep_leaf_rows,
        ..TrainOptions::default()
    };
    let rows_used = data.outcome.n_labelled();
    if a.keep_draws && (a.trees as usize) < 2 * rows_used {
        ui.note(&format!(
            "standard errors need many trees compared with rows: with {} trees for {rows_used} \
             rows many will come out unknown; use --trees {} or more (ten times the rows is \
             better)",
            a.trees,
            2 * rows_used
        ));
    }
    let trained = grow(&data, &settings, options, ui)?;
    let shuffle = match (a.shuffled_target_runs, trained.forest.oob_importance()) {
        (Some(n), Some(imp)) => Some(shuffled_target_test(&data, &settings, imp, n, ui)?),
        _ => None,
    };
    let shuffle_error = shuffle.as_ref().map(|s| &s.error);
    let train_secs = started.elapsed().as_secs_f64();
    let model = trained.forest;

    let judged = Judged::new(
        &model,
        Scores {
            preds: trained.oob.predictions.view(),
            outcome: &data.outcome,
            kind: "out-of-bag",
            training_rows: None,
            by: None,
        },
        &a.decision,
    )?;
    let charts = if a.plots.is_some() || a.report.is_some() {
        let mut c = model_charts(&model, shuffle_error)?;
        if let Some(d) = &judged.decision {
            c.extend(report_page::decision_charts(d, &judged_subtitle(&model))?);
        }
        c
    } else {
        Vec::new()
    };

    let mut outputs = Vec::new();
    let bytes = model
        .to_bytes()
        .map_err(|e| CliError::failure(format!("{}; nothing was written", e.message())))?;
    write_file(&a.out, &bytes)?;
    let model_bytes = bytes.len() as u64;
    outputs.push(("model".to_string(), a.out.clone()));
    if let Some(path) = &a.oob_out {
        write_oob(path, &data, &model, &trained.oob)?;
        outputs.push(("out-of-bag predictions".to_string(), path.clone()));
    }
    if let Some(dir) = &a.plots {
        for (what, path) in write_plots(dir, &model, shuffle_error)? {
            outputs.push((what, path));
        }
        let decision_charts: Vec<_> = charts
            .iter()
            .filter(|(name, _)| {
                [report_page::CATCH_SVG, report_page::RELIABILITY_SVG].contains(name)
            })
            .map(|(name, c)| {
                (
                    *name,
                    Chart {
                        after: c.after.clone(),
                        caption: c.caption.clone(),
                        svg: c.svg.clone(),
                    },
                )
            })
            .collect();
        outputs.extend(report_page::write_charts(dir, &decision_charts)?);
    }
    if let Some(page) = &a.report {
        outputs.push(("report page".to_string(), page.clone()));
    }
    let total_secs = started.elapsed().as_secs_f64();

    let missing_cells = data.missing_cells();
    let view = TrainView::new(
        &model,
        &TrainFacts {
            shuffle: shuffle_error,
            model_bytes,
            outputs: &outputs,
            threads: rayon::current_num_threads(),
            seconds: total_secs,
            training_seconds: train_secs,
            notes: &data.notes,
            missing_cells: &missing_cells,
            judged: Some(&judged),
        },
    );
    let text = view.text(Style::new(ui.stdout_colour()));
    let json = report::json_text(&view)?;
    if let Some(page) = &a.report {
        let class = report_page::page_class(&model, judged.decision.as_ref());
        let (section, effects) =
            report_page::page_sections(&model, data.x.view(), &data.source, class)?;
        let plain = report_page::with_section(&view.text(Style::new(false)), &section);
        let mut charts: Vec<Chart> = charts.into_iter().map(|(_, c)| c).collect();
        charts.extend(effects);
        report_page::write_page(
            page,
            &Page {
                text: &plain,
                subtitle: judged_subtitle(&model),
                decision: judged.decision.as_ref(),
                charts,
            },
        )?;
    }
    Ok(TrainRun {
        text,
        json,
        outputs,
    })
}

/// The forest's settings from the options, refusing combinations that cannot work
/// with this data.
pub(crate) fn resolve_settings(
    a: &TrainArgs,
    data: &TrainingData,
    ui: &Ui,
) -> CliResult<ForestSettings> {
    let sampling = chosen_sampling(a, ui);
    if a.keep_draws && (sampling != Sampling::Bootstrap || a.balanced) {
        return Err(CliError::input(
            "--keep-draws is for standard errors, which assume plain bootstrap samples; use \
             --sampling bootstrap without --balanced, or drop --keep-draws",
        ));
    }
    if a.keep_leaf_rows && data.task != Task::Regress {
        return Err(CliError::input(format!(
            "--keep-leaf-rows keeps the training outcomes for ranges of a numeric target, but the \
             target '{}' is read as classes; drop --keep-leaf-rows (class probabilities already \
             say how sure the model is), or use --task regress if the target holds numbers",
            data.target
        )));
    }
    if a.keep_leaf_rows && a.roles.weights.is_some() {
        return Err(CliError::input(
            "--keep-leaf-rows weights the training outcomes by whole draws and does not take \
             case weights yet; drop --keep-leaf-rows or --weights",
        ));
    }
    if a.keep_draws && (a.roles.weights.is_some() || a.roles.group.is_some()) {
        return Err(CliError::input(
            "--keep-draws is for standard errors, which assume plain bootstrap draws of rows; \
             drop --keep-draws, or --weights and --group",
        ));
    }
    if a.shuffled_target_runs.is_some() && (a.roles.weights.is_some() || a.roles.group.is_some()) {
        return Err(CliError::input(
            "--shuffled-target-runs trains its forests on plain rows; it does not take case \
             weights or groups yet: drop it, or --weights and --group",
        ));
    }
    if a.balanced && a.roles.group.is_some() {
        return Err(CliError::input(
            "--balanced draws rows by class, and the groups of --group may mix classes; use one \
             or the other",
        ));
    }
    if a.roles.weights.is_some()
        && a.roles.group.is_none()
        && matches!(sampling, Sampling::Subsample(_))
    {
        return Err(CliError::input(
            "--sampling subsample:F draws rows without replacement, which case weights do not \
             define; use --sampling bootstrap or none with --weights (or add --group)",
        ));
    }
    if a.shuffled_target_runs.is_some() && sampling == Sampling::Whole {
        return Err(CliError::input(
            "--shuffled-target-runs compares out-of-bag importances, and --sampling none leaves no \
             row out of bag; use bootstrap or subsample:F",
        ));
    }
    if a.balanced && data.task == Task::Regress {
        return Err(CliError::input(
            "--balanced draws the same number of rows from each class, so it needs a class target; \
             drop --balanced or use --task classify",
        ));
    }

    let fps = if a.bagging {
        FeaturesPerSplit::Every
    } else {
        a.features_per_split.unwrap_or_default()
    };
    let settings = ForestSettings {
        trees: a.trees as usize,
        features_per_split: fps,
        sampling,
        balanced: a.balanced,
        tree: copse_forest::TreeRules {
            cuts: a.cuts.into(),
            ..tree_settings(a.impurity, a.max_depth, a.min_leaf)
        },
        bins: a.bins as usize,
        seed: a.seed,
    };
    check_features_per_split(fps, data)?;
    Ok(settings)
}

/// The sampling asked for, or else the usual one for the cut choice (every row in
/// every tree for randomized cut points, said in a note since it leaves no out-of-bag
/// check).
fn chosen_sampling(a: &TrainArgs, ui: &Ui) -> Sampling {
    let cuts = a.cuts.into();
    match a.sampling {
        Some(s) => s,
        None if a.balanced => Sampling::Bootstrap,
        None => {
            let s = Sampling::usual_for(cuts);
            if s == Sampling::Whole {
                ui.note(
                    "--cuts random grows every tree on every row unless --sampling is given, so \
                     there is no out-of-bag check; judge the model with 'copse evaluate' on \
                     held-out rows, or add --sampling bootstrap",
                );
            }
            s
        }
    }
}

/// Refuses, before growing anything, a `--positive` that names no class of the data.
fn check_positive(d: &DecisionArgs, data: &TrainingData) -> CliResult<()> {
    let Some(p) = &d.positive else {
        return Ok(());
    };
    if data.task == Task::Regress {
        return Err(CliError::input(format!(
            "--positive {p} names a class, but the target '{}' is read as numbers; drop --positive \
             or use --task classify",
            data.target
        )));
    }
    if !data.classes().iter().any(|c| c == p) {
        return Err(CliError::input(format!(
            "--positive {p} is not a class of '{}' in {}; its classes are {}",
            data.target,
            data.source,
            data.classes().join(", ")
        )));
    }
    Ok(())
}

/// The line under a chart's or a page's title: trees, target and data of `model`.
pub fn judged_subtitle(model: &Forest) -> String {
    format!(
        "{} trees, target '{}', data {}",
        model.trees().len(),
        model.card().target,
        model.card().source
    )
}

/// Refuses, before growing anything, a model that obviously would not fit in the
/// memory available (see [`crate::memory`]).
fn check_memory(data: &TrainingData, settings: &ForestSettings, a: &TrainArgs) -> CliResult<()> {
    let Some(available) = memory::available_bytes() else {
        return Ok(());
    };
    let request = memory::Request {
        keep_leaf_rows: a.keep_leaf_rows,
        ..memory::Request::new(data, settings, a.keep_draws)
    };
    let need = memory::peak_bytes(&request);
    if need > available as f64 {
        return Err(CliError::input(format!(
            "training {} trees on the {} rows of {} with --min-leaf {} could need about {} of memory at its peak (the model twice over while \
             it is saved, and working tables), but only {} of memory is available; use fewer --trees, a larger --min-leaf or a --max-depth \
             (or add --allow-large to try anyway)",
            a.trees,
            request.rows,
            data.source,
            a.min_leaf,
            binary_bytes(need),
            binary_bytes(available as f64)
        )));
    }
    Ok(())
}

/// The shuffled-target test of the out-of-bag importance `imp`, with a progress bar.
fn shuffled_target_test(
    data: &TrainingData,
    settings: &ForestSettings,
    imp: &copse_forest::PermutationImportance,
    permutations: u32,
    ui: &Ui,
) -> CliResult<PermutationSignificance> {
    let bar = ui.bar(u64::from(permutations), "forests on a shuffled target");
    let result = response_permutation_test(
        data.x.view(),
        &data.features,
        &data.outcome,
        settings,
        imp,
        permutations as usize,
        settings.seed,
        &|done, _| bar.advance_to(done),
    );
    bar.finish();
    result.map_err(|e| forest_error(&e, &format!("cannot test importance on {}", data.source)))
}

/// Grows the forest with a progress bar that follows the three stages.
fn grow(
    data: &TrainingData,
    settings: &ForestSettings,
    options: TrainOptions<'_>,
    ui: &Ui,
) -> CliResult<Trained> {
    let bar: Bar = ui.bar(settings.trees as u64, "growing trees");
    let stage = AtomicU8::new(0);
    let progress = |p: Progress| {
        let (code, label) = match p.stage {
            Stage::Growing => (0, "growing trees"),
            Stage::OutOfBag => (1, "out-of-bag check"),
            Stage::Importance => (2, "importance"),
        };
        if stage.swap(code, Ordering::Relaxed) != code {
            bar.restart(p.total, label);
        }
        bar.advance_to(p.done);
    };
    let options = TrainOptions {
        progress: Some(&progress),
        ..options
    };
    let result = data.train(settings, &options);
    bar.finish();
    result.map_err(|e| forest_error(&e, &format!("cannot train on {}", data.source)))
}

/// Writes one line per training row: its file line, actual target, out-of-bag
/// prediction (and class probabilities), and the number of trees that left it out.
fn write_oob(
    path: &Path,
    data: &TrainingData,
    model: &Forest,
    oob: &copse_forest::OobReport,
) -> CliResult<()> {
    let p = path.to_string_lossy().to_string();
    let out = Output::create(Some(&p))?;
    let name = out.name().to_string();
    let mut w = csv::Writer::from_writer(out);
    let werr = |e: csv::Error| match e.into_kind() {
        csv::ErrorKind::Io(io) => CliError::write(&name, &io),
        other => CliError::failure(format!("could not write {name}: {other:?}")),
    };
    let classes = model.classes();
    // One precision per column: six significant digits of the largest training value.
    let d = value_decimals(crate::commands::score::target_size(model));
    let mut header = vec![
        "line".to_string(),
        "actual".to_string(),
        "prediction".to_string(),
    ];
    header.extend(classes.iter().map(|c| format!("prob_{c}")));
    header.push("trees_judging_row".to_string());
    w.write_record(&header).map_err(werr)?;
    let mut rec: Vec<String> = Vec::with_capacity(header.len());
    for i in 0..data.lines.len() {
        rec.clear();
        rec.push(data.lines[i].to_string());
        let pred = oob.predictions.row(i);
        let judged = oob.trees_out[i] > 0;
        match &data.outcome {
            copse_forest::Outcome::Classes { codes, labels } => {
                rec.push(labels.get(codes[i] as usize).cloned().unwrap_or_default());
                let probs: Vec<f64> = pred.to_vec();
                rec.push(if judged {
                    model.class_label(&probs).unwrap_or("").to_string()
                } else {
                    String::new()
                });
                rec.extend(probs.iter().map(|&v| fixed(v, PROBABILITY_DECIMALS)));
            }
            copse_forest::Outcome::Values(v) => {
                rec.push(fixed(v[i], d));
                rec.push(fixed(pred[0], d));
            }
        }
        rec.push(oob.trees_out[i].to_string());
        w.write_record(&rec).map_err(werr)?;
    }
    let out = w
        .into_inner()
        .map_err(|e| CliError::write(&name, e.error()))?;
    out.finish()
}

/// Writes the importance chart and the out-of-bag error curve into `dir`, with
/// p-values beside the inputs of the importance chart: those of `shuffle` when given,
/// else the mirrored-null test's when its null sample is large enough to show.
///
/// # Errors
/// A failure when drawing or writing fails.
pub fn write_plots(
    dir: &Path,
    model: &Forest,
    shuffle: Option<&Significance>,
) -> CliResult<Vec<(String, PathBuf)>> {
    let mut written = Vec::new();
    for (name, c) in model_charts(model, shuffle)? {
        let path = dir.join(name);
        write_file(&path, c.svg.as_bytes())?;
        let what = if name == "importance.svg" {
            "importance chart"
        } else {
            "out-of-bag error chart"
        };
        written.push((what.to_string(), path));
    }
    let _ = std::io::stderr().flush();
    Ok(written)
}

/// The importance chart and the out-of-bag error curve of `model`, as (file name,
/// chart), with p-values beside the inputs of the importance chart: those of
/// `shuffle` when given, else the mirrored-null test's when its null sample is large
/// enough to show.
///
/// # Errors
/// A failure when drawing fails.
pub fn model_charts(
    model: &Forest,
    shuffle: Option<&Significance>,
) -> CliResult<Vec<(&'static str, Chart)>> {
    let mut charts = Vec::new();
    let f = model;
    let measure = report::error_measure(model.task()).to_string();
    let sub = judged_subtitle(model);
    let draw_err = |e: String| CliError::failure(format!("could not draw a chart: {e}"));
    if let Some(imp) = f.oob_importance() {
        let mirror = shown_mirror(&imp.error);
        let (p, about) = match (shuffle, &mirror) {
            (Some(s), _) => (
                Some(s),
                format!("; p: {} forests on a shuffled target", s.null_size),
            ),
            (None, Some(m)) => (
                Some(m),
                format!("; p: mirrored-null test, {} null values", m.null_size),
            ),
            (None, None) => (None, String::new()),
        };
        let svg = plots::importance_svg(
            &imp.error,
            p,
            &format!("Which inputs matter: rise in out-of-bag {measure} when shuffled"),
            &format!("{sub}{about}"),
        )
        .map_err(draw_err)?;
        charts.push((
            "importance.svg",
            Chart {
                after: "WHICH INPUTS MATTER".into(),
                caption:
                    "Rise in out-of-bag error when each input is shuffled, with one standard error."
                        .into(),
                svg,
            },
        ));
    }
    if f.oob().error_curve.iter().any(Option::is_some) {
        let svg = plots::oob_curve_svg(&f.oob().error_curve, &measure, &sub).map_err(draw_err)?;
        charts.push((
            "oob_error.svg",
            Chart {
                after: "OUT-OF-BAG CHECK".into(),
                caption: "Out-of-bag error as trees are added.".into(),
                svg,
            },
        ));
    }
    Ok(charts)
}
