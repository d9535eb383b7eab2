//! The files of the decision layer that `train` and `evaluate` share: the catch-by-rank
//! and reliability charts (`--plots DIR`) and the HTML page (`--report FILE.html`).
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
