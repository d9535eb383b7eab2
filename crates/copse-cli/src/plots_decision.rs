//! SVG charts of the decision layer, in the look of [`crate::plots`]:
//! - catch by rank: the share of the positive class caught against the share of rows
//!   inspected from the top, with the diagonal that random picking follows and the
//!   standard depths marked;
//! - reliability: each bin's mean probability against the share observed, with Wilson
//!   whiskers and the diagonal of perfect calibration;
//! - importance for classes: the rise in Brier score (which sees probabilities) beside
//!   the rise in misclassification, in one order.
use crate::numbers::pct_short;
use crate::plots::{err, titled, PlotResult, GREY, GRID, INK, TEAL};
use crate::plots_ranked::{draw_ranked, label_width, padded_range, Layout, RankedBar, RankedFrame};
use copse_forest::decision::{CatchByRank, Reliability};
use copse_forest::Importance;
use plotters::coord::types::RangedCoordf64;
use plotters::prelude::*;

const AMBER: RGBColor = RGBColor(191, 120, 32);

type Area<'a> = DrawingArea<SVGBackend<'a>, plotters::coord::Shift>;

/// A unit square chart (both axes 0 to 1, shown as percentages) with the diagonal.
fn unit_chart<'a, 'b>(
    area: &'b Area<'a>,
    x_desc: &str,
    y_desc: &str,
) -> PlotResult<ChartContext<'b, SVGBackend<'a>, Cartesian2d<RangedCoordf64, RangedCoordf64>>> {
    let mut chart = ChartBuilder::on(area)
        .margin_left(18)
        .margin_right(36)
        .margin_bottom(10)
        .x_label_area_size(40)
        .y_label_area_size(64)
        .build_cartesian_2d(0f64..1f64, 0f64..1f64)
        .map_err(err)?;
    chart
        .configure_mesh()
        .light_line_style(WHITE)
        .bold_line_style(GRID)
        .axis_style(GREY)
        .x_desc(x_desc)
        .y_desc(y_desc)
        .x_label_formatter(&|v| pct_short(*v))
        .y_label_formatter(&|v| pct_short(*v))
        .label_style(("sans-serif", 13).into_font().color(&INK))
        .axis_desc_style(("sans-serif", 13).into_font().color(&GREY))
        .draw()
        .map_err(err)?;
    chart
        .draw_series(std::iter::once(PathElement::new(
            vec![(0.0, 0.0), (1.0, 1.0)],
            GREY.stroke_width(1),
        )))
        .map_err(err)?;
    Ok(chart)
}

/// The catch-by-rank curve of `curve` (points at many depths, shallowest first) with
/// the depths of `marked` drawn as dots, as SVG text.
///
/// # Errors
/// A message when drawing fails.
pub fn catch_svg(
    curve: &CatchByRank,
    marked: &CatchByRank,
    positive: &str,
    subtitle: &str,
) -> PlotResult<String> {
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, (860, 560)).into_drawing_area();
        let area = titled(
            &root,
            &format!("Share of '{positive}' caught when inspecting the top rows by score"),
            subtitle,
        )?;
        let mut chart = unit_chart(
            &area,
            "share of rows inspected, highest score first",
            &format!("share of all '{positive}' rows caught"),
        )?;
        let line: Vec<(f64, f64)> = std::iter::once((0.0, 0.0))
            .chain(curve.points.iter().map(|p| (p.top_share, p.caught_share)))
            .collect();
        chart
            .draw_series(LineSeries::new(line, TEAL.stroke_width(2)))
            .map_err(err)?;
        for p in &marked.points {
            chart
                .draw_series(std::iter::once(Circle::new(
                    (p.top_share, p.caught_share),
                    4,
                    INK.filled(),
                )))
                .map_err(err)?;
            chart
                .draw_series(std::iter::once(
                    EmptyElement::at((p.top_share, p.caught_share))
                        + Text::new(
                            format!(
                                "top {}: {}",
                                pct_short(p.top_share),
                                pct_short(p.caught_share)
                            ),
                            (8, 4),
                            ("sans-serif", 12).into_font().color(&INK),
                        ),
                ))
                .map_err(err)?;
        }
        chart
            .draw_series(std::iter::once(
                EmptyElement::at((0.62, 0.55))
                    + Text::new(
                        "random picking".to_string(),
                        (0, 0),
                        ("sans-serif", 12).into_font().color(&GREY),
                    ),
            ))
            .map_err(err)?;
        root.present().map_err(err)?;
    }
    Ok(svg)
}

/// The reliability chart of `r` as SVG text: a dot per bin at its mean probability and
/// observed share, whiskers over the share's 95% Wilson interval.
///
/// # Errors
/// A message when drawing fails.
pub fn reliability_svg(r: &Reliability, positive: &str, subtitle: &str) -> PlotResult<String> {
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, (860, 560)).into_drawing_area();
        let area = titled(
            &root,
            &format!("Do the probabilities of '{positive}' mean what they say?"),
            subtitle,
        )?;
        let mut chart = unit_chart(
            &area,
            "mean probability in the bin (promised)",
            &format!("share of the bin that was '{positive}' (observed)"),
        )?;
        let pts: Vec<(f64, f64)> = r
            .bins
            .iter()
            .map(|b| (b.mean_score, b.observed_share))
            .collect();
        chart
            .draw_series(LineSeries::new(pts.clone(), TEAL.mix(0.6).stroke_width(1)))
            .map_err(err)?;
        for b in &r.bins {
            if let Some(i) = b.observed_interval {
                chart
                    .draw_series(std::iter::once(PathElement::new(
                        vec![(b.mean_score, i.low), (b.mean_score, i.high)],
                        INK.stroke_width(1),
                    )))
                    .map_err(err)?;
            }
        }
        chart
            .draw_series(pts.iter().map(|&p| Circle::new(p, 5, TEAL.filled())))
            .map_err(err)?;
        chart
            .draw_series(std::iter::once(
                EmptyElement::at((0.62, 0.55))
                    + Text::new(
                        "promised = observed".to_string(),
                        (0, 0),
                        ("sans-serif", 12).into_font().color(&GREY),
                    ),
            ))
            .map_err(err)?;
        root.present().map_err(err)?;
    }
    Ok(svg)
}

/// One panel of bars, inputs in the order `order` (top first).
fn bar_panel(
    area: &Area<'_>,
    imp: &Importance,
    order: &[usize],
    names: &[String],
    caption: &str,
    colour: RGBColor,
    show_names: bool,
) -> PlotResult<()> {
    let range = padded_range(
        imp.features.iter().map(|f| {
            let se = f.std_error.unwrap_or(0.0);
            (f.mean - se, f.mean + se)
        }),
        true,
    );
    let bars: Vec<RankedBar> = order
        .iter()
        .filter_map(|&j| imp.features.get(j).map(|f| (j, f)))
        .map(|(j, f)| RankedBar {
            label: match names.get(j) {
                Some(name) if show_names => name.clone(),
                _ => String::new(),
            },
            value: f.mean,
            whisker: f.std_error,
            colour,
        })
        .collect();
    let frame = RankedFrame {
        layout: Layout::Panel(caption),
        axis: None,
        label_size: 12,
        label_width: if show_names {
            label_width(names.iter().map(String::as_str), 8, 16, 260)
        } else {
            8
        },
        ticks: Some(5),
        caps: false,
    };
    draw_ranked(area, &frame, range, &bars)
}

/// Importance for classes as SVG text: the rise in Brier score on the left (inputs in
/// its order, most important on top) and the rise in misclassification of the same
/// inputs on the right; whiskers of one standard error.
///
/// # Errors
/// A message when drawing fails.
pub fn brier_importance_svg(
    brier: &Importance,
    error: &Importance,
    title: &str,
    subtitle: &str,
) -> PlotResult<String> {
    let order: Vec<usize> = brier.ranked().iter().map(|f| f.feature).collect();
    let names: Vec<String> = brier.features.iter().map(|f| f.name.clone()).collect();
    let n = order.len().max(1) as u32;
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, (960, 170 + 30 * n)).into_drawing_area();
        let area = titled(&root, title, subtitle)?;
        let (left, right) = area.split_horizontally(600);
        bar_panel(
            &left,
            brier,
            &order,
            &names,
            "rise in Brier score (sees probabilities)",
            TEAL,
            true,
        )?;
        bar_panel(
            &right,
            error,
            &order,
            &names,
            "rise in misclassification",
            AMBER,
            false,
        )?;
        root.present().map_err(err)?;
    }
    Ok(svg)
}
