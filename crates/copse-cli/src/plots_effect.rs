//! SVG charts of effect curves, in the look of [`crate::plots`]:
//! - one input: the average curve bold over a faint sample of row curves, and under it
//!   a strip with the data's distribution along the same axis (a histogram of the
//!   values in the file given; for a categorical input, the rows of each category) so
//!   the reader sees where the curve rests on few rows;
//! - a categorical input: a bar per category for the average, the rows' values as
//!   faint dots beside it;
//! - two inputs: a heat map of the average over the grid cells with a colour legend,
//!   cells with no data row near them crossed out.
use crate::numbers::{pct_short, plain, sig};
use crate::plots::{err, titled, PlotResult, GREY, GRID, INK, TEAL};
use plotters::coord::ranged1d::SegmentValue;
use plotters::prelude::*;

type Area<'a> = DrawingArea<SVGBackend<'a>, plotters::coord::Shift>;

/// Bars of the histogram strip under a numeric curve.
const HISTOGRAM_BINS: usize = 30;
/// Width of the value labels left of both panels, so their horizontal axes line up.
const Y_LABELS: u32 = 72;

/// What an effect chart of one input shows.
pub struct CurveChart<'a> {
    /// The title line.
    pub title: &'a str,
    /// The grey line under it.
    pub subtitle: &'a str,
    /// The input's name (the horizontal axis).
    pub input: &'a str,
    /// What the vertical axis shows ("chance of 'yes'", "predicted price").
    pub output: &'a str,
    /// Whether the outputs are chances (labelled as percentages).
    pub chances: bool,
    /// The grid: values, or category codes when `categories` is given.
    pub grid: &'a [f64],
    /// The average at each grid point.
    pub average: &'a [f64],
    /// Each kept row's curve, one value per grid point.
    pub rows: &'a [Vec<f64>],
    /// The category labels of a categorical input, by code.
    pub categories: Option<&'a [String]>,
    /// The data's non-missing values of a numeric input (for the histogram).
    pub values: &'a [f64],
    /// Rows at each grid point (a categorical input's strip).
    pub counts: &'a [usize],
}

/// The vertical range of `values`, padded; kept within 0 to 1 for chances.
fn value_range<'v>(values: impl Iterator<Item = &'v f64>, chances: bool) -> (f64, f64) {
    let (mut lo, mut hi) = (f64::MAX, f64::MIN);
    for &v in values.filter(|v| v.is_finite()) {
        lo = lo.min(v);
        hi = hi.max(v);
    }
    if lo > hi {
        return (0.0, 1.0);
    }
    let span = (hi - lo).max(hi.abs().max(1e-9) * 0.02);
    let (mut lo, mut hi) = (lo - 0.06 * span, hi + 0.06 * span);
    if chances {
        lo = lo.max(0.0);
        hi = hi.min(1.0);
    }
    (lo, hi)
}

/// The `p` quantile of ascending `sorted` (not empty), nearest order statistic.
fn nearest_quantile(sorted: &[f64], p: f64) -> f64 {
    sorted[((sorted.len() - 1) as f64 * p).round() as usize]
}

/// The chart of one input's effect as SVG text.
///
/// # Errors
/// A message when drawing fails.
pub fn curve_svg(c: &CurveChart<'_>) -> PlotResult<String> {
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, (860, 560)).into_drawing_area();
        let area = titled(&root, c.title, c.subtitle)?;
        let (main, strip) = area.split_vertically(560 - 64 - 130);
        let fmt = |v: f64| if c.chances { pct_short(v) } else { sig(v, 3) };
        let (y0, y1) = value_range(c.average.iter().chain(c.rows.iter().flatten()), c.chances);
        match c.categories {
            Some(labels) => categorical(c, labels, &main, &strip, (y0, y1), &fmt)?,
            None => numeric(c, &main, &strip, (y0, y1), &fmt)?,
        }
        root.present().map_err(err)?;
    }
    Ok(svg)
}

fn numeric(
    c: &CurveChart<'_>,
    main: &Area<'_>,
    strip: &Area<'_>,
    (y0, y1): (f64, f64),
    fmt: &dyn Fn(f64) -> String,
) -> PlotResult<()> {
    let mut sorted: Vec<f64> = c.values.iter().copied().filter(|v| v.is_finite()).collect();
    sorted.sort_by(f64::total_cmp);
    let g0 = c.grid.iter().copied().fold(f64::MAX, f64::min);
    let g1 = c.grid.iter().copied().fold(f64::MIN, f64::max);
    // The axis spans the grid and the data's middle 98%: far outliers would squeeze
    // the curve into a corner.
    let (mut x0, mut x1) = if sorted.is_empty() {
        (g0, g1)
    } else {
        (
            g0.min(nearest_quantile(&sorted, 0.01)),
            g1.max(nearest_quantile(&sorted, 0.99)),
        )
    };
    if x1 <= x0 {
        x0 -= 0.5;
        x1 += 0.5;
    }
    let mut chart = ChartBuilder::on(main)
        .margin_left(18)
        .margin_right(36)
        .margin_bottom(10)
        .x_label_area_size(0)
        .y_label_area_size(Y_LABELS)
        .build_cartesian_2d(x0..x1, y0..y1)
        .map_err(err)?;
    chart
        .configure_mesh()
        .light_line_style(WHITE)
        .bold_line_style(GRID)
        .axis_style(GREY)
        .y_desc(c.output)
        .y_label_formatter(&|v| fmt(*v))
        .label_style(("sans-serif", 13).into_font().color(&INK))
        .axis_desc_style(("sans-serif", 13).into_font().color(&GREY))
        .draw()
        .map_err(err)?;
    for r in c.rows {
        chart
            .draw_series(std::iter::once(PathElement::new(
                c.grid
                    .iter()
                    .copied()
                    .zip(r.iter().copied())
                    .collect::<Vec<_>>(),
                TEAL.mix(0.18).stroke_width(1),
            )))
            .map_err(err)?;
    }
    let avg: Vec<(f64, f64)> = c
        .grid
        .iter()
        .copied()
        .zip(c.average.iter().copied())
        .collect();
    chart
        .draw_series(std::iter::once(PathElement::new(
            avg.clone(),
            INK.stroke_width(3),
        )))
        .map_err(err)?;
    chart
        .draw_series(avg.iter().map(|&p| Circle::new(p, 3, INK.filled())))
        .map_err(err)?;

    // The histogram strip: bars of equal width across the axis.
    let width = (x1 - x0) / HISTOGRAM_BINS as f64;
    let mut bins = [0usize; HISTOGRAM_BINS];
    let (mut below, mut above) = (0, 0);
    for &v in &sorted {
        if v < x0 {
            below += 1;
        } else if v > x1 {
            above += 1;
        } else {
            bins[(((v - x0) / width) as usize).min(HISTOGRAM_BINS - 1)] += 1;
        }
    }
    let top = bins.iter().copied().max().unwrap_or(0).max(1) as f64;
    let outside = match (below, above) {
        (0, 0) => String::new(),
        _ => format!("; {below} below and {above} above the range shown"),
    };
    let mut hist = ChartBuilder::on(strip)
        .margin_left(18)
        .margin_right(36)
        .margin_top(10)
        .margin_bottom(8)
        .x_label_area_size(44)
        .y_label_area_size(Y_LABELS)
        .build_cartesian_2d(x0..x1, 0f64..top * 1.1)
        .map_err(err)?;
    hist.configure_mesh()
        .disable_mesh()
        .axis_style(GREY)
        .y_labels(2)
        .x_desc(format!(
            "{}  (bars: rows of the data at each value{outside})",
            c.input
        ))
        .x_label_formatter(&|v| plain(*v))
        .y_label_formatter(&|v| format!("{v:.0}"))
        .label_style(("sans-serif", 12).into_font().color(&INK))
        .axis_desc_style(("sans-serif", 13).into_font().color(&GREY))
        .draw()
        .map_err(err)?;
    hist.draw_series(
        bins.iter()
            .enumerate()
            .filter(|(_, &n)| n > 0)
            .map(|(i, &n)| {
                let a = x0 + i as f64 * width;
                Rectangle::new([(a, 0.0), (a + width, n as f64)], GREY.mix(0.45).filled())
            }),
    )
    .map_err(err)?;
    Ok(())
}

fn categorical(
    c: &CurveChart<'_>,
    labels: &[String],
    main: &Area<'_>,
    strip: &Area<'_>,
    (y0, y1): (f64, f64),
    fmt: &dyn Fn(f64) -> String,
) -> PlotResult<()> {
    let n = c.grid.len().max(1);
    let name = |i: i32| {
        c.grid
            .get(i as usize)
            .and_then(|&code| labels.get(code as usize))
            .cloned()
            .unwrap_or_default()
    };
    let y0 = if c.chances { 0.0 } else { y0 };
    let mut chart = ChartBuilder::on(main)
        .margin_left(18)
        .margin_right(36)
        .margin_bottom(10)
        .x_label_area_size(0)
        .y_label_area_size(Y_LABELS)
        .build_cartesian_2d((0..n as i32 - 1).into_segmented(), y0..y1)
        .map_err(err)?;
    chart
        .configure_mesh()
        .disable_x_mesh()
        .light_line_style(WHITE)
        .bold_line_style(GRID)
        .axis_style(GREY)
        .y_desc(c.output)
        .y_label_formatter(&|v| fmt(*v))
        .label_style(("sans-serif", 13).into_font().color(&INK))
        .axis_desc_style(("sans-serif", 13).into_font().color(&GREY))
        .draw()
        .map_err(err)?;
    for (i, &m) in c.average.iter().enumerate() {
        let slot = i as i32;
        let mut bar = Rectangle::new(
            [
                (SegmentValue::Exact(slot), y0),
                (SegmentValue::Exact(slot + 1), m),
            ],
            TEAL.mix(0.75).filled(),
        );
        bar.set_margin(0, 0, 14, 14);
        chart.draw_series(std::iter::once(bar)).map_err(err)?;
        // Each kept row's value in this category, spread across the bar.
        let k = c.rows.len().max(1) as i32;
        chart
            .draw_series(c.rows.iter().enumerate().map(|(r, row)| {
                let dx = -20 + (40 * r as i32) / k;
                EmptyElement::at((SegmentValue::CenterOf(slot), row[i]))
                    + Circle::new((dx, 0), 2, INK.mix(0.3).filled())
            }))
            .map_err(err)?;
        chart
            .draw_series(std::iter::once(
                EmptyElement::at((SegmentValue::CenterOf(slot), m))
                    + PathElement::new(vec![(-30, 0), (30, 0)], INK.stroke_width(3))
                    + Text::new(
                        fmt(m),
                        (-14, -20),
                        ("sans-serif", 12).into_font().color(&INK),
                    ),
            ))
            .map_err(err)?;
    }
    let top = c.counts.iter().copied().max().unwrap_or(0).max(1) as f64;
    let mut hist = ChartBuilder::on(strip)
        .margin_left(18)
        .margin_right(36)
        .margin_top(10)
        .margin_bottom(8)
        .x_label_area_size(44)
        .y_label_area_size(Y_LABELS)
        .build_cartesian_2d((0..n as i32 - 1).into_segmented(), 0f64..top * 1.1)
        .map_err(err)?;
    hist.configure_mesh()
        .disable_mesh()
        .axis_style(GREY)
        .y_labels(2)
        .x_labels(n)
        .x_desc(format!(
            "{}  (bars: rows of the data in each category)",
            c.input
        ))
        .x_label_formatter(&|v| match v {
            SegmentValue::CenterOf(i) => name(*i),
            _ => String::new(),
        })
        .y_label_formatter(&|v| format!("{v:.0}"))
        .label_style(("sans-serif", 12).into_font().color(&INK))
        .axis_desc_style(("sans-serif", 13).into_font().color(&GREY))
        .draw()
        .map_err(err)?;
    hist.draw_series(c.counts.iter().enumerate().map(|(i, &k)| {
        let mut r = Rectangle::new(
            [
                (SegmentValue::Exact(i as i32), 0.0),
                (SegmentValue::Exact(i as i32 + 1), k as f64),
            ],
            GREY.mix(0.45).filled(),
        );
        r.set_margin(0, 0, 14, 14);
        r
    }))
    .map_err(err)?;
    Ok(())
}

/// What a heat map of two inputs shows.
pub struct SurfaceChart<'a> {
    /// The title line.
    pub title: &'a str,
    /// The grey line under it.
    pub subtitle: &'a str,
    /// The inputs' names: the first down the side, the second along the bottom.
    pub inputs: [&'a str; 2],
    /// What the colours show.
    pub output: &'a str,
    /// Whether the outputs are chances (labelled as percentages).
    pub chances: bool,
    /// Each axis's labels, one per grid point.
    pub labels: [Vec<String>; 2],
    /// The average in each cell, `cells[i][j]` at the first input's point `i` and the
    /// second's `j`.
    pub cells: &'a [Vec<f64>],
    /// Data rows near each cell, in the same layout.
    pub counts: &'a [Vec<usize>],
}

/// The colour of `t` in [0, 1]: from a pale grey-teal to a dark teal.
fn shade(t: f64) -> RGBColor {
    let t = t.clamp(0.0, 1.0);
    let mix = |a: u8, b: u8| (f64::from(a) + t * (f64::from(b) - f64::from(a))).round() as u8;
    RGBColor(mix(240, 16), mix(246, 64), mix(246, 70))
}

/// The heat map of two inputs as SVG text.
///
/// # Errors
/// A message when drawing fails.
pub fn surface_svg(s: &SurfaceChart<'_>) -> PlotResult<String> {
    let (ga, gb) = (s.labels[0].len().max(1), s.labels[1].len().max(1));
    let (lo, hi) = {
        let all = s.cells.iter().flatten().copied().filter(|v| v.is_finite());
        let (mut lo, mut hi) = (f64::MAX, f64::MIN);
        for v in all {
            lo = lo.min(v);
            hi = hi.max(v);
        }
        if lo > hi {
            (0.0, 1.0)
        } else if hi - lo < 1e-12 {
            (lo - 0.5e-6, hi + 0.5e-6)
        } else {
            (lo, hi)
        }
    };
    let fmt = |v: f64| if s.chances { pct_short(v) } else { sig(v, 3) };
    let longest = s.labels[0]
        .iter()
        .map(|l| l.chars().count())
        .max()
        .unwrap_or(4);
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, (860, 600)).into_drawing_area();
        let area = titled(&root, s.title, s.subtitle)?;
        let (map, legend) = area.split_horizontally(860 - 130);
        let mut chart = ChartBuilder::on(&map)
            .margin_left(18)
            .margin_right(12)
            .margin_bottom(8)
            .x_label_area_size(56)
            .y_label_area_size((longest as u32 * 8 + 40).clamp(70, 220))
            .build_cartesian_2d(
                (0..gb as i32 - 1).into_segmented(),
                (0..ga as i32 - 1).into_segmented(),
            )
            .map_err(err)?;
        let label = |axis: usize, v: &SegmentValue<i32>| match v {
            SegmentValue::CenterOf(i) => {
                s.labels[axis].get(*i as usize).cloned().unwrap_or_default()
            }
            _ => String::new(),
        };
        chart
            .configure_mesh()
            .disable_mesh()
            .axis_style(GREY)
            .x_labels(gb)
            .y_labels(ga)
            .x_desc(s.inputs[1])
            .y_desc(s.inputs[0])
            .x_label_formatter(&|v| label(1, v))
            .y_label_formatter(&|v| label(0, v))
            .label_style(("sans-serif", 12).into_font().color(&INK))
            .axis_desc_style(("sans-serif", 13).into_font().color(&GREY))
            .draw()
            .map_err(err)?;
        for (i, row) in s.cells.iter().enumerate() {
            for (j, &v) in row.iter().enumerate() {
                let (x, y) = (j as i32, i as i32);
                chart
                    .draw_series(std::iter::once(Rectangle::new(
                        [
                            (SegmentValue::Exact(x), SegmentValue::Exact(y)),
                            (SegmentValue::Exact(x + 1), SegmentValue::Exact(y + 1)),
                        ],
                        shade((v - lo) / (hi - lo)).filled(),
                    )))
                    .map_err(err)?;
                if s.counts.get(i).and_then(|r| r.get(j)) == Some(&0) {
                    // No data row lies near this cell: the value there is the forest's
                    // extrapolation, so it is crossed out.
                    chart
                        .draw_series(std::iter::once(
                            EmptyElement::at((
                                SegmentValue::CenterOf(x),
                                SegmentValue::CenterOf(y),
                            )) + PathElement::new(vec![(-5, -5), (5, 5)], GREY.stroke_width(1))
                                + PathElement::new(vec![(-5, 5), (5, -5)], GREY.stroke_width(1)),
                        ))
                        .map_err(err)?;
                }
            }
        }
        // The legend: a column of the colours with the values they stand for.
        let mut key = ChartBuilder::on(&legend)
            .margin_top(20)
            .margin_bottom(64)
            .margin_right(58)
            .y_label_area_size(0)
            .right_y_label_area_size(52)
            .build_cartesian_2d(0f64..1f64, lo..hi)
            .map_err(err)?;
        key.configure_mesh()
            .disable_mesh()
            .disable_x_axis()
            .axis_style(GREY)
            .y_labels(6)
            .y_label_formatter(&|v| fmt(*v))
            .label_style(("sans-serif", 12).into_font().color(&INK))
            .draw()
            .map_err(err)?;
        let steps = 60;
        key.draw_series((0..steps).map(|k| {
            let a = lo + (hi - lo) * k as f64 / steps as f64;
            let b = lo + (hi - lo) * (k + 1) as f64 / steps as f64;
            Rectangle::new([(0.0, a), (1.0, b)], shade((a - lo) / (hi - lo)).filled())
        }))
        .map_err(err)?;
        legend
            .draw(&Text::new(
                s.output.to_string(),
                (4, 4),
                ("sans-serif", 12).into_font().color(&GREY),
            ))
            .map_err(err)?;
        root.present().map_err(err)?;
    }
    Ok(svg)
}
