//! `copse effect`: effect curves of chosen inputs and heat maps of chosen pairs over
//! the rows of a file, written as CSV (long form: one line per grid point of each
//! curve) and SVG, with a printed or JSON summary. The engine computes
//! ([`copse_forest::Forest::effect_curve`], [`copse_forest::Forest::effect_surface`]);
//! this module names, formats, draws and writes.
use crate::args::EffectArgs;
use crate::commands::{emit, load_model, make_folder, open_for_model};
use crate::error::{forest_error, CliError, CliResult};
use crate::numbers::{fixed, plain, value_decimals, PROBABILITY_DECIMALS};
use crate::output::write_file;
use crate::plots_effect::{curve_svg, surface_svg, CurveChart, SurfaceChart};
use crate::report::effect::{CurveView, EffectView, SurfaceView};
use crate::report::model::ModelView;
use crate::report::{self, Style};
use crate::ui::Ui;
use copse_forest::effects::sample_rows;
use copse_forest::{
    EffectCurve, EffectGrid, EffectSettings, EffectSurface, FeatureKind, Forest, SurfaceSettings,
    Task,
};
use ndarray::{Array2, ArrayView2, Axis};
use std::collections::HashSet;
use std::path::{Path, PathBuf};

/// Most points along each numeric axis of a heat map: every row is scored once per
/// cell, so the cost grows with the square.
pub const SURFACE_POINTS: usize = 12;

/// Runs `copse effect`.
///
/// # Errors
/// Input errors (exit 2) for no input named, an unknown input or class, a bad pair, a
/// bad model or data file; failures when writing.
pub fn run(a: &EffectArgs, ui: &Ui) -> CliResult<()> {
    if a.inputs.is_empty() && a.pairs.is_empty() {
        return Err(CliError::input(
            "name what to draw: --input NAME for one input, --pair A,B for two together \
             ('copse inspect --model M' lists the model's inputs)",
        ));
    }
    let model = load_model(&a.model)?;
    let mut inputs = Vec::new();
    for name in &a.inputs {
        let j = find_input(&model, name)?;
        if !inputs.contains(&j) {
            inputs.push(j);
        }
    }
    let pairs = a
        .pairs
        .iter()
        .map(|p| find_pair(&model, p))
        .collect::<CliResult<Vec<_>>>()?;
    let shown = shown_output(&model, a.class.as_deref())?;

    let input = open_for_model(&a.data, &a.csv, &model)?;
    let source = input.name().to_string();
    let missing = a.csv.missing.as_deref().map_or_else(
        || copse_data::Missing::of_model(&model),
        copse_data::Missing::from_list,
    );
    let rows = copse_data::read_inputs(input, &model, missing)?;
    if let Some(w) = rows.encoder.unseen_warning() {
        ui.warn(&w);
    }
    for n in &rows.notes {
        ui.note(n);
    }
    make_folder(&a.out_dir)?;
    let n = rows.x.nrows();
    let kept: Vec<usize> = match a.sample {
        Some(m) if (m as usize) < n => sample_rows(n, m as usize, a.seed),
        _ => (0..n).collect(),
    };
    let x = if kept.len() < n {
        rows.x.select(Axis(0), &kept)
    } else {
        rows.x
    };
    let mut names = FileNames::default();
    let mut effects = Vec::new();
    let mut written: Vec<PathBuf> = Vec::new();
    for &j in &inputs {
        let settings = EffectSettings {
            grid: quantile_grid(a.grid as usize),
            row_curves: a.curves as usize,
            row_seed: Some(a.seed),
        };
        let context = format!(
            "cannot draw the effect of '{}' on {source}",
            model.meta()[j].name
        );
        let curve = model
            .effect_curve(x.view(), j, &settings)
            .map_err(|e| forest_error(&e, &context))?;
        let stem = names.unique(&format!("effect_{}", slug(&model.meta()[j].name)));
        let (csv_path, svg_path) = (
            a.out_dir.join(format!("{stem}.csv")),
            a.out_dir.join(format!("{stem}.svg")),
        );
        write_file(&csv_path, &curve_csv(&model, &curve, &kept)?)?;
        let svg = draw_curve(&model, &curve, x.view(), shown, &source)?;
        write_file(&svg_path, svg.as_bytes())?;
        effects.push(curve_view(
            &model, &curve, shown, &kept, &csv_path, &svg_path,
        ));
        written.extend([csv_path, svg_path]);
    }
    let mut surfaces = Vec::new();
    for &(p, q) in &pairs {
        let points = (a.grid as usize).min(SURFACE_POINTS);
        let settings = SurfaceSettings {
            first: quantile_grid(points),
            second: quantile_grid(points),
        };
        let context = format!(
            "cannot draw the heat map of '{}' and '{}' on {source}",
            model.meta()[p].name,
            model.meta()[q].name
        );
        let surface = model
            .effect_surface(x.view(), p, q, &settings)
            .map_err(|e| forest_error(&e, &context))?;
        let stem = names.unique(&format!(
            "surface_{}_{}",
            slug(&model.meta()[p].name),
            slug(&model.meta()[q].name)
        ));
        let (csv_path, svg_path) = (
            a.out_dir.join(format!("{stem}.csv")),
            a.out_dir.join(format!("{stem}.svg")),
        );
        write_file(&csv_path, &surface_csv(&model, &surface)?)?;
        let svg = draw_surface(&model, &surface, shown, &source)?;
        write_file(&svg_path, svg.as_bytes())?;
        surfaces.push(surface_view(&model, &surface, shown, &csv_path, &svg_path));
        written.extend([csv_path, svg_path]);
    }
    crate::output::commit_all()?;
    for path in &written {
        ui.wrote(&path.display().to_string());
    }
    let view = EffectView {
        model: ModelView::new("effect", &model),
        source,
        rows_read: n,
        rows_averaged: kept.len(),
        shown: output_words(&model, shown),
        shown_class: shown_class(&model, shown),
        effects,
        surfaces,
        reading: crate::report::effect::READING,
        chances: model.task() == Task::Classify,
    };
    if a.json {
        return report::print_json(&view);
    }
    emit(&view.text(Style::new(ui.stdout_colour())))
}

/// The column of input `name`.
fn find_input(model: &Forest, name: &str) -> CliResult<usize> {
    model
        .meta()
        .iter()
        .position(|m| m.name == name)
        .ok_or_else(|| {
            let all: Vec<&str> = model.meta().iter().map(|m| m.name.as_str()).collect();
            let target = if model.card().target == name {
                " (it is the target the model predicts)"
            } else {
                ""
            };
            CliError::input(format!(
                "the model has no input '{}'{target}; its inputs are {}",
                copse_data::clip(name),
                all.join(", ")
            ))
        })
}

/// The columns of a pair written `A,B`.
fn find_pair(model: &Forest, pair: &str) -> CliResult<(usize, usize)> {
    let names: Vec<&str> = pair.split(',').map(str::trim).collect();
    match names[..] {
        [a, b] if !a.is_empty() && !b.is_empty() => {
            let (p, q) = (find_input(model, a)?, find_input(model, b)?);
            if p == q {
                return Err(CliError::input(format!(
                    "--pair {pair} names '{a}' twice; a heat map needs two different inputs \
                     (use --input {a} for one)"
                )));
            }
            Ok((p, q))
        }
        _ => Err(CliError::input(format!(
            "--pair takes two input names joined by a comma, such as install_year,material; \
             got '{}'",
            copse_data::clip(pair)
        ))),
    }
}

/// The output the charts and the summary show: a class's chance (the one named, or
/// for two classes the second, else the first) or the value.
fn shown_output(model: &Forest, class: Option<&str>) -> CliResult<usize> {
    let classes = model.classes();
    match (model.task(), class) {
        (Task::Regress, None) => Ok(0),
        (Task::Regress, Some(c)) => Err(CliError::input(format!(
            "--class {} names a class, but this model predicts numbers; drop --class",
            copse_data::clip(c)
        ))),
        (Task::Classify, None) => Ok(usize::from(classes.len() == 2)),
        (Task::Classify, Some(c)) => classes.iter().position(|k| k == c).ok_or_else(|| {
            CliError::input(format!(
                "--class {} is not a class of the model; its classes are {}",
                copse_data::clip(c),
                classes.join(", ")
            ))
        }),
    }
}

fn shown_class(model: &Forest, k: usize) -> Option<String> {
    model.classes().get(k).cloned()
}

/// "chance of 'yes'" or "predicted price".
pub(crate) fn output_words(model: &Forest, k: usize) -> String {
    match shown_class(model, k) {
        Some(c) => format!("chance of '{c}'"),
        None => format!("predicted {}", model.card().target),
    }
}

/// `points` quantiles from the 5th to the 95th percentile.
pub(crate) fn quantile_grid(points: usize) -> EffectGrid {
    EffectGrid::Quantiles {
        points,
        low: 0.05,
        high: 0.95,
    }
}

/// A file-name stem from an input name: letters, digits, `-` and `_` kept.
fn slug(name: &str) -> String {
    let s: String = name
        .chars()
        .map(|c| {
            if c.is_alphanumeric() || c == '-' || c == '_' {
                c
            } else {
                '_'
            }
        })
        .collect();
    if s.is_empty() {
        "input".into()
    } else {
        s
    }
}

/// File stems handed out once each (`_2`, `_3` after a repeat).
#[derive(Default)]
struct FileNames(HashSet<String>);

impl FileNames {
    fn unique(&mut self, stem: &str) -> String {
        let mut s = stem.to_string();
        let mut k = 2;
        while !self.0.insert(s.to_lowercase()) {
            s = format!("{stem}_{k}");
            k += 1;
        }
        s
    }
}

/// The text of a grid value: a number, or a category's label.
pub(crate) fn grid_label(model: &Forest, j: usize, v: f64) -> String {
    match &model.meta()[j].kind {
        FeatureKind::Categorical { levels } => levels.get(v as usize).cloned().unwrap_or_default(),
        FeatureKind::Numeric => plain(v),
    }
}

fn grid_json(model: &Forest, j: usize, grid: &[f64]) -> Vec<serde_json::Value> {
    grid.iter()
        .map(|&v| match &model.meta()[j].kind {
            FeatureKind::Categorical { .. } => grid_label(model, j, v).into(),
            FeatureKind::Numeric => serde_json::json!(v),
        })
        .collect()
}

/// The output columns, as `copse score` names them: `prob_<class>` per class, or
/// `prediction`; and a formatter of their values.
fn output_columns(model: &Forest, top: f64) -> (Vec<String>, usize) {
    match model.task() {
        Task::Classify => (
            model
                .classes()
                .iter()
                .map(|c| format!("prob_{c}"))
                .collect(),
            PROBABILITY_DECIMALS,
        ),
        Task::Regress => (vec!["prediction".into()], value_decimals(top)),
    }
}

fn top_abs<'v>(values: impl Iterator<Item = &'v f64>) -> f64 {
    values.fold(0.0f64, |m, v| m.max(v.abs()))
}

fn csv_error(e: impl std::fmt::Display) -> CliError {
    CliError::failure(format!("could not write a CSV file: {e}"))
}

/// A curve as CSV, long form: `curve` (`average` or `row`), `data_row` (the row of the
/// data file, counting from 1, for a row's curve), the input's value, `rows_near` (on
/// the average's lines) and the outputs.
fn curve_csv(model: &Forest, c: &EffectCurve, kept: &[usize]) -> CliResult<Vec<u8>> {
    let top = top_abs(c.mean.iter().chain(c.row_curves.iter()));
    let (outputs, decimals) = output_columns(model, top);
    let mut w = csv::Writer::from_writer(Vec::new());
    let mut header = vec![
        "curve".to_string(),
        "data_row".into(),
        model.meta()[c.input].name.clone(),
        "rows_near".into(),
    ];
    header.extend(outputs);
    w.write_record(&header).map_err(csv_error)?;
    for (p, &v) in c.grid.iter().enumerate() {
        let mut rec = vec![
            "average".to_string(),
            String::new(),
            grid_label(model, c.input, v),
            c.counts[p].to_string(),
        ];
        rec.extend(c.mean.row(p).iter().map(|&o| fixed(o, decimals)));
        w.write_record(&rec).map_err(csv_error)?;
    }
    for (slot, &r) in c.rows.iter().enumerate() {
        for (p, &v) in c.grid.iter().enumerate() {
            let mut rec = vec![
                "row".to_string(),
                (kept[r] + 1).to_string(),
                grid_label(model, c.input, v),
                String::new(),
            ];
            rec.extend(
                c.row_curves
                    .index_axis(Axis(0), slot)
                    .row(p)
                    .iter()
                    .map(|&o| fixed(o, decimals)),
            );
            w.write_record(&rec).map_err(csv_error)?;
        }
    }
    w.into_inner().map_err(csv_error)
}

/// A heat map as CSV, one line per cell: the two inputs' values, `rows_near` and the
/// outputs.
fn surface_csv(model: &Forest, s: &EffectSurface) -> CliResult<Vec<u8>> {
    let (outputs, decimals) = output_columns(model, top_abs(s.mean.iter()));
    let [a, b] = s.inputs;
    let mut w = csv::Writer::from_writer(Vec::new());
    let mut header = vec![
        model.meta()[a].name.clone(),
        model.meta()[b].name.clone(),
        "rows_near".into(),
    ];
    header.extend(outputs);
    w.write_record(&header).map_err(csv_error)?;
    for (i, &u) in s.grids[0].iter().enumerate() {
        for (j, &v) in s.grids[1].iter().enumerate() {
            let mut rec = vec![
                grid_label(model, a, u),
                grid_label(model, b, v),
                s.counts[[i, j]].to_string(),
            ];
            rec.extend((0..s.mean.dim().2).map(|k| fixed(s.mean[[i, j, k]], decimals)));
            w.write_record(&rec).map_err(csv_error)?;
        }
    }
    w.into_inner().map_err(csv_error)
}

fn draw_err(e: String) -> CliError {
    CliError::failure(format!("could not draw a chart: {e}"))
}

/// The chart of a curve, showing output `k`.
pub(crate) fn draw_curve(
    model: &Forest,
    c: &EffectCurve,
    x: ArrayView2<'_, f64>,
    k: usize,
    source: &str,
) -> CliResult<String> {
    let name = &model.meta()[c.input].name;
    let words = output_words(model, k);
    let average: Vec<f64> = c.mean.column(k).to_vec();
    let rows: Vec<Vec<f64>> = c
        .row_curves
        .outer_iter()
        .map(|r| r.column(k).to_vec())
        .collect();
    let values: Vec<f64> = x
        .column(c.input)
        .iter()
        .copied()
        .filter(|v| !v.is_nan())
        .collect();
    let categories = match &model.meta()[c.input].kind {
        FeatureKind::Categorical { levels } => Some(levels.as_slice()),
        FeatureKind::Numeric => None,
    };
    let subtitle = format!(
        "bold: the average over {} rows of {source}; faint: {} single rows",
        x.nrows(),
        c.rows.len()
    );
    curve_svg(&CurveChart {
        title: &format!("How the {words} moves with {name}"),
        subtitle: &subtitle,
        input: name,
        output: &words,
        chances: model.task() == Task::Classify,
        grid: &c.grid,
        average: &average,
        rows: &rows,
        categories,
        values: &values,
        counts: &c.counts,
    })
    .map_err(draw_err)
}

/// The heat map of a surface, showing output `k`.
pub(crate) fn draw_surface(
    model: &Forest,
    s: &EffectSurface,
    k: usize,
    source: &str,
) -> CliResult<String> {
    let [a, b] = s.inputs;
    let (na, nb) = (&model.meta()[a].name, &model.meta()[b].name);
    let words = output_words(model, k);
    let layer = s.mean.index_axis(Axis(2), k);
    let cells: Vec<Vec<f64>> = layer.outer_iter().map(|r| r.to_vec()).collect();
    let counts: Vec<Vec<usize>> = s.counts.outer_iter().map(|r| r.to_vec()).collect();
    // Four significant digits on the map's axes: quantiles of whole numbers such as
    // years fall between them.
    let labels = |j: usize, grid: &[f64]| {
        grid.iter()
            .map(|&v| match &model.meta()[j].kind {
                FeatureKind::Numeric => crate::numbers::sig(v, 4),
                FeatureKind::Categorical { .. } => grid_label(model, j, v),
            })
            .collect()
    };
    surface_svg(&SurfaceChart {
        title: &format!("How the {words} moves with {na} and {nb} together"),
        subtitle: &format!(
            "average over {} rows of {source}; interaction share {}; crossed cells: no row near",
            s.counts.sum() + s.missing,
            crate::numbers::pct_short(s.interaction_share(k))
        ),
        inputs: [na, nb],
        output: &words,
        chances: model.task() == Task::Classify,
        labels: [labels(a, &s.grids[0]), labels(b, &s.grids[1])],
        cells: &cells,
        counts: &counts,
    })
    .map_err(draw_err)
}

fn curve_view(
    model: &Forest,
    c: &EffectCurve,
    k: usize,
    kept: &[usize],
    csv: &Path,
    svg: &Path,
) -> CurveView {
    let categorical = matches!(model.meta()[c.input].kind, FeatureKind::Categorical { .. });
    CurveView {
        input: model.meta()[c.input].name.clone(),
        kind: if categorical {
            "categorical"
        } else {
            "numeric"
        },
        grid: grid_json(model, c.input, &c.grid),
        average: c.mean.column(k).to_vec(),
        rows_near: c.counts.clone(),
        rows_missing: c.missing,
        rows_drawn: c.rows.iter().map(|&r| kept[r] + 1).collect(),
        csv: csv.display().to_string(),
        svg: svg.display().to_string(),
        labels: c
            .grid
            .iter()
            .map(|&v| grid_label(model, c.input, v))
            .collect(),
    }
}

fn surface_view(
    model: &Forest,
    s: &EffectSurface,
    k: usize,
    csv: &Path,
    svg: &Path,
) -> SurfaceView {
    let [a, b] = s.inputs;
    let layer: Array2<f64> = s.mean.index_axis(Axis(2), k).to_owned();
    SurfaceView {
        inputs: [model.meta()[a].name.clone(), model.meta()[b].name.clone()],
        grids: [
            grid_json(model, a, &s.grids[0]),
            grid_json(model, b, &s.grids[1]),
        ],
        average: layer.outer_iter().map(|r| r.to_vec()).collect(),
        rows_near: s.counts.outer_iter().map(|r| r.to_vec()).collect(),
        interaction_share: s.interaction_share(k),
        csv: csv.display().to_string(),
        svg: svg.display().to_string(),
    }
}
