//! The ranked bar frame shared by the importance, contribution, tuning and decision
//! charts: values across, one segment per row down (the first row on top), a teal bar
//! from zero per row with an optional whisker, and a dark line at zero. The charts
//! differ only in layout (a whole page or a captioned panel), label font and width,
//! the axis text and whether whiskers have end caps.
use crate::numbers::plain;
use crate::plots_palette::{err, PlotResult, GREY, GRID, INK};
use plotters::coord::ranged1d::SegmentValue;
use plotters::prelude::*;

/// A chart of rises: values across, one segment per row down.
pub(crate) type RiseChart<'a, 'b> = ChartContext<
    'b,
    SVGBackend<'a>,
    Cartesian2d<
        plotters::coord::types::RangedCoordf64,
        plotters::coord::ranged1d::SegmentedCoord<plotters::coord::types::RangedCoordi32>,
    >,
>;

/// Where the frame stands.
pub(crate) enum Layout<'t> {
    /// The whole area below a chart's title block.
    Page,
    /// One captioned panel of several side by side.
    Panel(&'t str),
}

/// How one ranked chart differs from the others.
pub(crate) struct RankedFrame<'t> {
    pub layout: Layout<'t>,
    /// Text under the value axis, if any.
    pub axis: Option<&'t str>,
    /// Font size of the row labels and value ticks.
    pub label_size: u32,
    /// Width of the row labels' area, in pixels (see [`label_width`]).
    pub label_width: u32,
    /// Number of value ticks, when not the drawing library's default.
    pub ticks: Option<usize>,
    /// End caps on the whiskers.
    pub caps: bool,
}

/// One row of a ranked chart.
pub(crate) struct RankedBar {
    pub label: String,
    pub value: f64,
    /// Half-width of the whisker around `value`, if any.
    pub whisker: Option<f64>,
    pub colour: RGBColor,
}

/// Width of a label area fitting the longest of `labels` at `per_char` pixels a
/// character plus `extra`, at most `cap` (5 characters when there are none).
pub(crate) fn label_width<'a>(
    labels: impl Iterator<Item = &'a str>,
    per_char: u32,
    extra: u32,
    cap: u32,
) -> u32 {
    let longest = labels.map(|s| s.chars().count()).max().unwrap_or(5) as u32;
    (longest * per_char + extra).min(cap)
}

/// The value range of a chart whose rows span `spans` (low, high): zero always in
/// it, widened by 6% of its width on each side; with `zero_edge` the range starts at
/// zero when nothing is below it.
pub(crate) fn padded_range(spans: impl Iterator<Item = (f64, f64)>, zero_edge: bool) -> (f64, f64) {
    let (mut lo, mut hi) = (0.0f64, 0.0f64);
    for (a, b) in spans {
        lo = lo.min(a);
        hi = hi.max(b);
    }
    if hi - lo <= 0.0 {
        hi = lo + 1e-6;
    }
    let pad = 0.06 * (hi - lo);
    if zero_edge && lo >= 0.0 {
        (0.0, hi + pad)
    } else {
        (lo - pad, hi + pad)
    }
}

/// Draws `bars` (the first on top) over `range` on `area` in the look `frame` gives.
pub(crate) fn draw_ranked(
    area: &DrawingArea<SVGBackend<'_>, plotters::coord::Shift>,
    frame: &RankedFrame<'_>,
    range: (f64, f64),
    bars: &[RankedBar],
) -> PlotResult<()> {
    let n = bars.len().max(1);
    let mut builder = ChartBuilder::on(area);
    match frame.layout {
        Layout::Page => builder
            .margin_left(18)
            .margin_right(28)
            .margin_bottom(10)
            .x_label_area_size(40),
        Layout::Panel(caption) => builder
            .caption(caption, ("sans-serif", 14).into_font().color(&INK))
            .margin(10)
            .x_label_area_size(34),
    };
    let mut chart = builder
        .y_label_area_size(frame.label_width)
        .build_cartesian_2d(range.0..range.1, (0..n as i32 - 1).into_segmented())
        .map_err(err)?;
    let label = |v: &SegmentValue<i32>| match v {
        // Segment 0 is drawn at the bottom; the top one is the first row.
        SegmentValue::CenterOf(i) if (*i as usize) < n => bars
            .get(n - 1 - *i as usize)
            .map(|b| b.label.clone())
            .unwrap_or_default(),
        _ => String::new(),
    };
    let mut mesh = chart.configure_mesh();
    mesh.disable_y_mesh()
        .light_line_style(WHITE)
        .bold_line_style(GRID)
        .axis_style(GREY)
        .y_labels(n)
        .y_label_formatter(&label)
        .x_label_formatter(&|v| plain(*v))
        .label_style(("sans-serif", frame.label_size).into_font().color(&INK));
    if let Some(axis) = frame.axis {
        mesh.x_desc(axis)
            .axis_desc_style(("sans-serif", 13).into_font().color(&GREY));
    }
    if let Some(ticks) = frame.ticks {
        mesh.x_labels(ticks);
    }
    mesh.draw().map_err(err)?;
    for (pos, b) in bars.iter().enumerate() {
        let slot = (n - 1 - pos) as i32;
        draw_rise(&mut chart, slot, b.value, b.whisker, b.colour, frame.caps)?;
    }
    // The zero line: bars left of it are rows whose value is below zero.
    draw_zero_line(&mut chart, n)
}

/// One row's rise in segment `slot`: a bar from zero to `mean` and a whisker of
/// `mean` ± `se` (with end caps when `caps`).
fn draw_rise(
    chart: &mut RiseChart<'_, '_>,
    slot: i32,
    mean: f64,
    se: Option<f64>,
    colour: RGBColor,
    caps: bool,
) -> PlotResult<()> {
    let (a, b) = if mean >= 0.0 {
        (0.0, mean)
    } else {
        (mean, 0.0)
    };
    let mut bar = Rectangle::new(
        [
            (a, SegmentValue::Exact(slot)),
            (b, SegmentValue::Exact(slot + 1)),
        ],
        colour.mix(0.85).filled(),
    );
    bar.set_margin(6, 6, 0, 0);
    chart.draw_series(std::iter::once(bar)).map_err(err)?;
    if let Some(se) = se {
        let y = SegmentValue::CenterOf(slot);
        let style = INK.stroke_width(2);
        chart
            .draw_series(std::iter::once(PathElement::new(
                vec![(mean - se, y.clone()), (mean + se, y.clone())],
                style,
            )))
            .map_err(err)?;
        if caps {
            for end in [mean - se, mean + se] {
                chart
                    .draw_series(std::iter::once(
                        EmptyElement::at((end, y.clone()))
                            + PathElement::new(vec![(0, -6), (0, 6)], style),
                    ))
                    .map_err(err)?;
            }
        }
    }
    Ok(())
}

/// The zero line across the `n` segments of a rise chart.
fn draw_zero_line(chart: &mut RiseChart<'_, '_>, n: usize) -> PlotResult<()> {
    chart
        .draw_series(std::iter::once(PathElement::new(
            vec![
                (0.0, SegmentValue::Exact(0)),
                (0.0, SegmentValue::Exact(n as i32)),
            ],
            INK.stroke_width(1),
        )))
        .map_err(err)?;
    Ok(())
}
