//! SVG charts in copse's own look: a white page, a left-aligned title with a grey
//! subtitle, thin light grid lines, teal marks and dark whiskers.
//! - importance: one horizontal bar per input, most important on top, a whisker of
//!   plus and minus one standard error, and a dark line at zero;
//! - contributions: the same bars for the mean absolute contribution, without whiskers;
//! - out-of-bag error against the number of trees, with the final value marked;
//! - stability: three small panels side by side (error per seed, share of answers that
//!   change between seeds, agreement of importance rankings), one column per kind of
//!   model.
use crate::numbers::{p_value, pct_short, plain, sig};
use crate::plots_ranked::{draw_ranked, label_width, padded_range, Layout, RankedBar, RankedFrame};
use copse_forest::{Importance, KindStability, Significance, StabilityReport};
use plotters::coord::ranged1d::SegmentValue;
use plotters::prelude::*;

pub(crate) use crate::plots_palette::{err, PlotResult, GREY, GRID, INK, TEAL};

/// Draws the title block and returns the area below it.
pub(crate) fn titled<'a>(
    root: &DrawingArea<SVGBackend<'a>, plotters::coord::Shift>,
    title: &str,
    subtitle: &str,
) -> PlotResult<DrawingArea<SVGBackend<'a>, plotters::coord::Shift>> {
    root.fill(&WHITE).map_err(err)?;
    let (top, rest) = root.split_vertically(64);
    top.draw(&Text::new(
        title.to_string(),
        (18, 14),
        ("sans-serif", 20)
            .into_font()
            .style(FontStyle::Bold)
            .color(&INK),
    ))
    .map_err(err)?;
    top.draw(&Text::new(
        subtitle.to_string(),
        (18, 40),
        ("sans-serif", 13).into_font().color(&GREY),
    ))
    .map_err(err)?;
    Ok(rest)
}

/// The importance chart of `imp` as SVG text, with each input's p-value (from `p`, in
/// input order) written after its name when given.
///
/// # Errors
/// A message when drawing fails.
pub fn importance_svg(
    imp: &Importance,
    p: Option<&Significance>,
    title: &str,
    subtitle: &str,
) -> PlotResult<String> {
    let ranked = imp.ranked();
    let bars: Vec<RankedBar> = ranked
        .iter()
        .map(|f| RankedBar {
            label: match p.and_then(|s| s.p_values.get(f.feature)) {
                Some(&v) => format!("{} (p = {})", f.name, p_value(v)),
                None => f.name.clone(),
            },
            value: f.mean,
            whisker: f.std_error,
            colour: TEAL,
        })
        .collect();
    let range = padded_range(
        ranked.iter().map(|f| {
            let se = f.std_error.unwrap_or(0.0);
            (f.mean - se, f.mean + se)
        }),
        true,
    );
    let frame = RankedFrame {
        layout: Layout::Page,
        axis: Some("rise when the input is shuffled (whiskers: ± one standard error)"),
        label_size: 13,
        label_width: label_width(bars.iter().map(|b| b.label.as_str()), 8, 24, 320),
        ticks: None,
        caps: true,
    };
    ranked_page(
        (860, 150 + 30 * bars.len().max(1) as u32),
        title,
        subtitle,
        &frame,
        range,
        &bars,
    )
}

/// The mean-absolute-contribution chart as SVG text: one bar per `(name, mean)` in the
/// order given (the largest first, drawn on top), in the importance chart's look.
///
/// # Errors
/// A message when drawing fails.
pub fn contribution_svg(
    ranked: &[(&str, f64)],
    measure: &str,
    title: &str,
    subtitle: &str,
) -> PlotResult<String> {
    let top = ranked.iter().map(|r| r.1).fold(0.0f64, f64::max);
    let hi = if top > 0.0 { 1.06 * top } else { 1e-6 };
    let bars: Vec<RankedBar> = ranked
        .iter()
        .map(|&(name, value)| RankedBar {
            label: name.to_string(),
            value,
            whisker: None,
            colour: TEAL,
        })
        .collect();
    let frame = RankedFrame {
        layout: Layout::Page,
        axis: Some(measure),
        label_size: 13,
        label_width: label_width(ranked.iter().map(|r| r.0), 8, 24, 320),
        ticks: None,
        caps: false,
    };
    ranked_page(
        (860, 150 + 30 * bars.len().max(1) as u32),
        title,
        subtitle,
        &frame,
        (0.0, hi),
        &bars,
    )
}

/// A ranked chart filling a page of `size` pixels below its title block, as SVG text.
pub(crate) fn ranked_page(
    size: (u32, u32),
    title: &str,
    subtitle: &str,
    frame: &RankedFrame<'_>,
    range: (f64, f64),
    bars: &[RankedBar],
) -> PlotResult<String> {
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, size).into_drawing_area();
        let area = titled(&root, title, subtitle)?;
        draw_ranked(&area, frame, range, bars)?;
        root.present().map_err(err)?;
    }
    Ok(svg)
}

/// The out-of-bag error curve as SVG text; `curve[k]` is the error with `k + 1` trees.
///
/// # Errors
/// A message when drawing fails or no point has a value.
pub fn oob_curve_svg(curve: &[Option<f64>], measure: &str, subtitle: &str) -> PlotResult<String> {
    let points: Vec<(f64, f64)> = curve
        .iter()
        .enumerate()
        .filter_map(|(k, v)| v.map(|v| ((k + 1) as f64, v)))
        .filter(|(_, v)| v.is_finite())
        .collect();
    let Some(&(last_x, last_y)) = points.last() else {
        return Err("no out-of-bag error to draw (no row was left out of any tree)".into());
    };
    // Skip the first few trees when scaling: with one or two trees the estimate rests
    // on few rows and would flatten the rest of the curve.
    let settle = points.len().min(5);
    let tail = &points[points.len().min(settle)..];
    let scale_from = if tail.is_empty() { &points[..] } else { tail };
    let hi = scale_from.iter().map(|p| p.1).fold(f64::MIN, f64::max);
    let lo = scale_from.iter().map(|p| p.1).fold(f64::MAX, f64::min);
    let span = (hi - lo).max(hi.abs() * 0.05).max(1e-9);
    let (y0, y1) = ((lo - 0.15 * span).max(0.0), hi + 0.15 * span);
    let x1 = (curve.len() as f64).max(2.0);
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, (860, 480)).into_drawing_area();
        let area = titled(
            &root,
            &format!("Out-of-bag {measure} as trees are added"),
            subtitle,
        )?;
        let mut chart = ChartBuilder::on(&area)
            .margin_left(18)
            .margin_right(36)
            .margin_bottom(10)
            .x_label_area_size(40)
            .y_label_area_size(70)
            .build_cartesian_2d(1f64..x1, y0..y1)
            .map_err(err)?;
        chart
            .configure_mesh()
            .light_line_style(WHITE)
            .bold_line_style(GRID)
            .axis_style(GREY)
            .x_desc("number of trees")
            .y_desc(measure)
            .x_label_formatter(&|v| format!("{v:.0}"))
            .y_label_formatter(&|v| plain(*v))
            .label_style(("sans-serif", 13).into_font().color(&INK))
            .axis_desc_style(("sans-serif", 13).into_font().color(&GREY))
            .draw()
            .map_err(err)?;
        let visible: Vec<(f64, f64)> = points.iter().map(|&(x, y)| (x, y.clamp(y0, y1))).collect();
        chart
            .draw_series(LineSeries::new(visible, TEAL.stroke_width(2)))
            .map_err(err)?;
        chart
            .draw_series(std::iter::once(PathElement::new(
                vec![(1.0, last_y), (x1, last_y)],
                GREY.stroke_width(1),
            )))
            .map_err(err)?;
        chart
            .draw_series(std::iter::once(Circle::new(
                (last_x, last_y),
                4,
                INK.filled(),
            )))
            .map_err(err)?;
        chart
            .draw_series(std::iter::once(
                EmptyElement::at((last_x, last_y))
                    + Text::new(
                        format!("{} with {} trees", sig(last_y, 3), last_x),
                        (-170, 10),
                        ("sans-serif", 13).into_font().color(&INK),
                    ),
            ))
            .map_err(err)?;
        root.present().map_err(err)?;
    }
    Ok(svg)
}

/// One panel of the stability chart: a column per kind of model; `values(k)` gives the
/// points drawn for kind `k` (one dot each) and `bar(k)` the height of its bar, if any.
#[allow(clippy::too_many_arguments)]
fn stability_panel(
    area: &DrawingArea<SVGBackend<'_>, plotters::coord::Shift>,
    kinds: &[KindStability],
    caption: &str,
    axis: &str,
    y_range: (f64, f64),
    values: &dyn Fn(&KindStability) -> Vec<f64>,
    bar: &dyn Fn(&KindStability) -> Option<f64>,
    label: &dyn Fn(f64) -> String,
) -> PlotResult<()> {
    let n = kinds.len().max(1);
    let mut chart = ChartBuilder::on(area)
        .caption(caption, ("sans-serif", 14).into_font().color(&INK))
        .margin(10)
        .x_label_area_size(34)
        .y_label_area_size(56)
        .build_cartesian_2d((0..n as i32 - 1).into_segmented(), y_range.0..y_range.1)
        .map_err(err)?;
    chart
        .configure_mesh()
        .disable_x_mesh()
        .light_line_style(WHITE)
        .bold_line_style(GRID)
        .axis_style(GREY)
        .x_labels(n)
        .x_label_formatter(&|v| match v {
            SegmentValue::CenterOf(i) => kinds
                .get(*i as usize)
                .map_or(String::new(), |k| k.kind.to_string()),
            _ => String::new(),
        })
        .y_desc(axis)
        .y_label_formatter(&|v| label(*v))
        .label_style(("sans-serif", 12).into_font().color(&INK))
        .axis_desc_style(("sans-serif", 12).into_font().color(&GREY))
        .draw()
        .map_err(err)?;
    for (i, k) in kinds.iter().enumerate() {
        let slot = i as i32;
        if let Some(h) = bar(k) {
            let (a, b) = if h >= 0.0 { (0.0, h) } else { (h, 0.0) };
            let mut r = Rectangle::new(
                [
                    (SegmentValue::Exact(slot), a),
                    (SegmentValue::Exact(slot + 1), b),
                ],
                TEAL.mix(0.85).filled(),
            );
            r.set_margin(0, 0, 22, 22);
            chart.draw_series(std::iter::once(r)).map_err(err)?;
            chart
                .draw_series(std::iter::once(
                    EmptyElement::at((SegmentValue::CenterOf(slot), h))
                        + Text::new(
                            label(h),
                            (-14, if h >= 0.0 { -18 } else { 4 }),
                            ("sans-serif", 12).into_font().color(&INK),
                        ),
                ))
                .map_err(err)?;
        }
        let pts = values(k);
        if !pts.is_empty() {
            // Dots spread across the column so equal values stay visible, and a dark
            // tick at their mean.
            let m = pts.len();
            for (s, &v) in pts.iter().enumerate() {
                let dx = if m > 1 {
                    -24 + (48 * s as i32) / (m as i32 - 1)
                } else {
                    0
                };
                chart
                    .draw_series(std::iter::once(
                        EmptyElement::at((SegmentValue::CenterOf(slot), v))
                            + Circle::new((dx, 0), 4, TEAL.mix(0.9).filled()),
                    ))
                    .map_err(err)?;
            }
            let mean = pts.iter().sum::<f64>() / m as f64;
            chart
                .draw_series(std::iter::once(
                    EmptyElement::at((SegmentValue::CenterOf(slot), mean))
                        + PathElement::new(vec![(-34, 0), (34, 0)], INK.stroke_width(2)),
                ))
                .map_err(err)?;
        }
    }
    Ok(())
}

/// The stability chart as SVG text: error per seed (dots, with a tick at the mean),
/// the share of held-out answers that change between seeds, and the agreement of the
/// importance rankings between seeds, one column per kind of model.
///
/// # Errors
/// A message when drawing fails.
pub fn stability_svg(r: &StabilityReport, subtitle: &str) -> PlotResult<String> {
    let errors: Vec<f64> = r
        .kinds
        .iter()
        .flat_map(|k| k.errors.iter().copied())
        .filter(|v| v.is_finite())
        .collect();
    let top = errors.iter().copied().fold(0.0f64, f64::max).max(1e-9);
    let change_top = r
        .kinds
        .iter()
        .filter_map(|k| k.prediction_change)
        .fold(0.0f64, f64::max)
        .max(1e-9);
    let tau_low = r
        .kinds
        .iter()
        .filter_map(|k| k.rank_tau)
        .fold(0.0f64, f64::min);
    let (err_axis, change_axis, change_caption) = if r.classes {
        (
            "misclassification rate",
            "share of rows",
            "Answers that change between seeds",
        )
    } else {
        (
            "mean squared error",
            "RMS change / sd of target",
            "Shift of answers between seeds",
        )
    };
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, (960, 460)).into_drawing_area();
        let area = titled(
            &root,
            "How much each kind of model moves when only the seed changes",
            subtitle,
        )?;
        let panels = area.split_evenly((1, 3));
        let num = |v: f64| sig(v, 3);
        let err_label: &dyn Fn(f64) -> String = if r.classes { &pct_short } else { &num };
        stability_panel(
            &panels[0],
            &r.kinds,
            "Error, one dot per seed",
            err_axis,
            (0.0, top * 1.15),
            &|k| k.errors.iter().copied().filter(|v| v.is_finite()).collect(),
            &|_| None,
            err_label,
        )?;
        stability_panel(
            &panels[1],
            &r.kinds,
            change_caption,
            change_axis,
            (0.0, change_top * 1.2),
            &|_| Vec::new(),
            &|k| k.prediction_change,
            &pct_short,
        )?;
        stability_panel(
            &panels[2],
            &r.kinds,
            "Agreement of importance rankings",
            "Kendall's tau (1 = same order)",
            (tau_low.min(0.0), 1.1),
            &|_| Vec::new(),
            &|k| k.rank_tau,
            &|v| sig(v, 2),
        )?;
        root.present().map_err(err)?;
    }
    Ok(svg)
}
