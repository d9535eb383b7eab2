//! The files of the decision layer that `train` and `evaluate` share: the catch-by-rank
//! and reliability charts (`--plots DIR`) and the HTML page (`--report FILE.html`),
//! with the page's contribution ranking and effect curves of the top inputs.
use crate::error::{CliError, CliResult};
use crate::output::write_file;
use crate::plots_decision;
use crate::report::decision::DecisionView;
use crate::report::html::{self, Chart, Page};
use std::path::{Path, PathBuf};

/// The file name of the catch-by-rank chart.
pub const CATCH_SVG: &str = "catch_by_rank.svg";
/// The file name of the reliability chart.
pub const RELIABILITY_SVG: &str = "calibration.svg";

/// The catch-by-rank and reliability charts of `d`, as (file name, chart).
///
/// # Errors
/// A failure when a chart cannot be drawn.
pub fn decision_charts(d: &DecisionView, subtitle: &str) -> CliResult<Vec<(&'static str, Chart)>> {
    let draw_err = |e: String| CliError::failure(format!("could not draw a chart: {e}"));
    let mut charts = Vec::new();
    if let (Some(curve), Some(marked)) = (&d.curve, &d.catch_by_rank) {
        let svg = plots_decision::catch_svg(
            curve,
            marked,
            &d.positive_class,
            &format!("{} scores; {subtitle}", d.scores),
        )
        .map_err(draw_err)?;
        charts.push((
            CATCH_SVG,
            Chart {
                after: "CATCH BY RANK".into(),
                caption: format!(
                    "Share of '{}' caught against the share of rows inspected; the diagonal is random picking.",
                    d.positive_class
                ),
                svg,
            },
        ));
    }
    if let Some(r) = &d.calibration {
        let svg = plots_decision::reliability_svg(
            r,
            &d.positive_class,
            &format!(
                "{} scores in {} bins of equal size; {subtitle}",
                d.scores,
                r.bins.len()
            ),
        )
        .map_err(draw_err)?;
        charts.push((
            RELIABILITY_SVG,
            Chart {
                after: "DO THE PROBABILITIES".into(),
                caption: "Each bin's mean probability against the share observed, with 95% Wilson \
                          intervals; on the diagonal, probabilities are chances."
                    .into(),
                svg,
            },
        ));
    }
    Ok(charts)
}

/// Writes `charts` into `dir`, returning what was written as (what, path).
///
/// # Errors
/// A failure when a file cannot be written.
pub fn write_charts(
    dir: &Path,
    charts: &[(&'static str, Chart)],
) -> CliResult<Vec<(String, PathBuf)>> {
    let mut written = Vec::new();
    for (name, c) in charts {
        let path = dir.join(name);
        write_file(&path, c.svg.as_bytes())?;
        let what = if *name == CATCH_SVG {
            "catch-by-rank chart"
        } else {
            "calibration chart"
        };
        written.push((what.to_string(), path));
    }
    Ok(written)
}

/// Writes the HTML page of `page` at `path`.
///
/// # Errors
/// A failure when the file cannot be written.
pub fn write_page(path: &Path, page: &Page<'_>) -> CliResult<()> {
    write_file(path, html::render(page).as_bytes())
}

/// The heading of the page's effect-curve section.
pub const EFFECTS_HEADING: &str = "HOW THE PREDICTIONS MOVE WITH THE TOP INPUTS";
/// Inputs drawn on the page: the top ones by importance.
const PAGE_INPUTS: usize = 3;
/// Rows the page's curves average over (drawn at random when the data has more), so
/// the page stays quick to make on large files.
const PAGE_ROWS: usize = 300;
/// Points along each numeric input on the page.
const PAGE_GRID: usize = 12;
/// Single rows' curves drawn faint on the page.
const PAGE_CURVES: usize = 20;

/// The heading of the page's contribution ranking.
pub const CONTRIBUTIONS_HEADING: &str = "HOW FAR EACH INPUT MOVES A PREDICTION";

/// The rows of `n` that the page's own sections work on: all when there are at most
/// 300 (`PAGE_ROWS`), else that many drawn at random with a fixed seed (so the page is the
/// same on every run, and its tests can draw the same rows).
pub fn page_rows(n: usize) -> Vec<usize> {
    copse_forest::effects::sample_rows(n, PAGE_ROWS, 1)
}

/// The page's own sections for the rows `x` of `source`, to go before the caution (see
/// [`with_section`]): the contribution ranking, then the effect curves; as the
/// printed text and the charts.
///
/// # Errors
/// A failure when a figure cannot be computed or drawn.
pub fn page_sections(
    model: &copse_forest::Forest,
    x: ndarray::ArrayView2<'_, f64>,
    source: &str,
    class: usize,
) -> CliResult<(String, Vec<Chart>)> {
    let (mut text, mut charts) = contribution_section(model, x, source)?;
    let (effects, curves) = effect_section(model, x, source, class)?;
    text.push_str(&effects);
    charts.extend(curves);
    Ok((text, charts))
}

/// The page's ranking by mean absolute contribution over the page's rows of `x`
/// (see [`page_rows`]): the printed text and its bar chart. A model trained with class
/// balancing has no contributions; the section then says why.
///
/// # Errors
/// A failure when the ranking cannot be computed or drawn.
pub fn contribution_section(
    model: &copse_forest::Forest,
    x: ndarray::ArrayView2<'_, f64>,
    source: &str,
) -> CliResult<(String, Vec<Chart>)> {
    use crate::report::contribution::ContributionView;
    use crate::report::{paragraph, wrap, WIDTH};
    use std::fmt::Write as _;
    let n = x.nrows();
    let rows = page_rows(n);
    let mut text = format!(
        "{CONTRIBUTIONS_HEADING}
"
    );
    let ranking =
        match model.contribution_ranking(x.select(ndarray::Axis(0), &rows).view(), PAGE_ROWS) {
            Ok(r) => r,
            Err(e) if e.kind() == copse_forest::ErrorKind::InvalidSetting => {
                for l in wrap(&format!("Not shown: {}.", e.message()), WIDTH) {
                    let _ = writeln!(text, "  {l}");
                }
                text.push('\n');
                return Ok((text, Vec::new()));
            }
            Err(e) => {
                return Err(crate::error::forest_error(
                    &e,
                    &format!("cannot explain {source}"),
                ))
            }
        };
    let classes = model.classes();
    let moved = match classes.len() {
        0 => "the prediction".to_string(),
        2 => format!("the chance of '{}'", classes[1]),
        _ => "the class probabilities (half the sum over classes: the share of probability \
              moved between classes)"
            .to_string(),
    };
    let drawn = if rows.len() < n {
        " (drawn at random; the same rows as the effect curves)"
    } else {
        ""
    };
    paragraph(
        &mut text,
        &format!(
            "Mean absolute contribution (exact Shapley values of the forest) over {} of the \
             {n} rows of {source}{drawn}: how far, on average, each input moves {moved} away \
             from the model's base value. It needs no outcomes and does not shuffle inputs \
             apart, so it can differ from a permutation ranking where inputs go together. It \
             describes the model, not causes.",
            rows.len()
        ),
    );
    text.push('\n');
    let view = ContributionView::new(model, &ranking);
    view.table(&mut text);
    let meta = model.meta();
    let bars: Vec<(&str, f64)> = ranking
        .order
        .iter()
        .map(|&j| (meta[j].name.as_str(), ranking.mean_abs[j]))
        .collect();
    let measure = if classes.is_empty() {
        "mean absolute contribution to the prediction"
    } else {
        "mean absolute contribution (share of probability)"
    };
    let svg = crate::plots::contribution_svg(
        &bars,
        measure,
        "How far each input moves a prediction",
        &format!("{} rows of {source}; exact Shapley values", rows.len()),
    )
    .map_err(|e| CliError::failure(format!("could not draw a chart: {e}")))?;
    let chart = Chart {
        after: CONTRIBUTIONS_HEADING.into(),
        caption: "Each input's mean absolute contribution on these rows, the largest on top; \
                  it describes the model, not causes."
            .into(),
        svg,
    };
    Ok((text, vec![chart]))
}

/// The page's effect-curve section for the rows `x` of `source`: its printed text (to
/// go before the caution, see [`with_section`]) and its charts. The inputs are the top
/// three by out-of-bag importance (by impurity decrease when the model has
/// none); the curves show the chance of `class` (a class's code) or the value.
///
/// # Errors
/// A failure when a curve cannot be computed or drawn.
pub fn effect_section(
    model: &copse_forest::Forest,
    x: ndarray::ArrayView2<'_, f64>,
    source: &str,
    class: usize,
) -> CliResult<(String, Vec<Chart>)> {
    use crate::commands::effect::{draw_curve, output_words, quantile_grid};
    use crate::numbers::{pct, sig};
    use std::fmt::Write as _;
    let ranked: Vec<(usize, String)> = match model.oob_importance() {
        Some(p) => p.brier.as_ref().unwrap_or(&p.error).ranked(),
        None => model.impurity_importance().ranked(),
    }
    .into_iter()
    .take(PAGE_INPUTS)
    .map(|f| (f.feature, f.name.clone()))
    .collect();
    let n = x.nrows();
    let rows = page_rows(n);
    let sample = x.select(ndarray::Axis(0), &rows);
    let words = output_words(model, class);
    let mut text = format!("{EFFECTS_HEADING}\n");
    let by = if model.oob_importance().is_some() {
        "out-of-bag importance"
    } else {
        "impurity decrease"
    };
    let _ = writeln!(
        text,
        "  The {} inputs ranked highest by {by}; the {words} averaged over {} of the {n} rows \
         of {source}{}.",
        ranked.len(),
        rows.len(),
        if rows.len() < n {
            " (drawn at random)"
        } else {
            ""
        }
    );
    let value = |v: f64| {
        if model.task() == copse_forest::Task::Classify {
            pct(v)
        } else {
            sig(v, 4)
        }
    };
    let mut charts = Vec::new();
    for (j, name) in ranked {
        let settings = copse_forest::EffectSettings {
            grid: quantile_grid(PAGE_GRID),
            row_curves: PAGE_CURVES,
            row_seed: Some(1),
        };
        let curve = model
            .effect_curve(sample.view(), j, &settings)
            .map_err(|e| {
                CliError::failure(format!(
                    "could not compute the effect of {name}: {}",
                    e.message()
                ))
            })?;
        let avg = curve.mean.column(class);
        let (lo, hi) = avg
            .iter()
            .fold((f64::MAX, f64::MIN), |(a, b), &v| (a.min(v), b.max(v)));
        let _ = writeln!(
            text,
            "  {name:<24}the average moves from {} to {}",
            value(lo),
            value(hi)
        );
        charts.push(Chart {
            after: EFFECTS_HEADING.into(),
            caption: format!(
                "The {words} as {name} changes: the average bold, single rows faint, the data's rows along the axis below."
            ),
            svg: draw_curve(model, &curve, sample.view(), class, source)?,
        });
    }
    for l in crate::report::wrap(crate::report::effect::READING, crate::report::WIDTH) {
        let _ = writeln!(text, "  {l}");
    }
    text.push('\n');
    Ok((text, charts))
}

/// `text` (a printed report) with `section` placed before its caution (at the end
/// when it has none).
pub fn with_section(text: &str, section: &str) -> String {
    match text.find("\nCAUTION\n") {
        Some(i) => format!("{}\n{section}{}", &text[..i], &text[i + 1..]),
        None => format!("{text}\n{section}"),
    }
}

/// The class whose chance the page's curves show: the decision layer's positive class
/// when it has one, else for two classes the second, else the first (0 for numbers).
pub fn page_class(model: &copse_forest::Forest, decision: Option<&DecisionView>) -> usize {
    let classes = model.classes();
    decision
        .and_then(|d| classes.iter().position(|c| *c == d.positive_class))
        .unwrap_or(usize::from(classes.len() == 2))
}
