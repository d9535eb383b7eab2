//! SVG charts in copse's own look: a white page, a left-aligned title with a grey
//! subtitle, thin light grid lines, teal marks and dark whiskers.
//! - importance: one horizontal bar per input, most important on top, a whisker of
//!   plus and minus one standard error, and a dark line at zero;
//! - out-of-bag error against the number of trees, with the final value marked.
use copse_forest::Importance;
use plotters::coord::ranged1d::SegmentValue;
use plotters::prelude::*;

const TEAL: RGBColor = RGBColor(38, 120, 128);
const INK: RGBColor = RGBColor(33, 37, 41);
const GREY: RGBColor = RGBColor(110, 117, 125);
const GRID: RGBColor = RGBColor(228, 231, 235);

type PlotResult<T> = Result<T, String>;

/// An axis number without float noise or needless zeros (`150000`, `0.095`).
fn tick(v: f64) -> String {
    crate::report::plain(v)
}

fn err<E: std::fmt::Display>(e: E) -> String {
    e.to_string()
}

/// Draws the title block and returns the area below it.
fn titled<'a>(
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

/// The importance chart of `imp` as SVG text.
///
/// # Errors
/// A message when drawing fails.
pub fn importance_svg(imp: &Importance, title: &str, subtitle: &str) -> PlotResult<String> {
    let ranked = imp.ranked();
    let n = ranked.len().max(1);
    let names: Vec<String> = ranked.iter().map(|f| f.name.clone()).collect();
    let longest = names.iter().map(|s| s.chars().count()).max().unwrap_or(5);
    let (mut lo, mut hi) = (0.0f64, 0.0f64);
    for f in &ranked {
        let se = f.std_error.unwrap_or(0.0);
        lo = lo.min(f.mean - se);
        hi = hi.max(f.mean + se);
    }
    if hi - lo <= 0.0 {
        hi = lo + 1e-6;
    }
    let pad = 0.06 * (hi - lo);
    let (lo, hi) = (if lo < 0.0 { lo - pad } else { 0.0 }, hi + pad);
    let height = 150 + 30 * n as u32;
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, (860, height)).into_drawing_area();
        let area = titled(&root, title, subtitle)?;
        let mut chart = ChartBuilder::on(&area)
            .margin_left(18)
            .margin_right(28)
            .margin_bottom(10)
            .x_label_area_size(40)
            .y_label_area_size((longest as u32 * 8 + 24).min(320))
            .build_cartesian_2d(lo..hi, (0..n as i32 - 1).into_segmented())
            .map_err(err)?;
        chart
            .configure_mesh()
            .disable_y_mesh()
            .light_line_style(WHITE)
            .bold_line_style(GRID)
            .axis_style(GREY)
            .y_labels(n)
            .y_label_formatter(&|v| match v {
                // Segment 0 is drawn at the bottom; the top one is rank 1.
                SegmentValue::CenterOf(i) if (*i as usize) < n => {
                    names.get(n - 1 - *i as usize).cloned().unwrap_or_default()
                }
                _ => String::new(),
            })
            .x_desc("rise when the input is shuffled (whiskers: ± one standard error)")
            .x_label_formatter(&|v| tick(*v))
            .label_style(("sans-serif", 13).into_font().color(&INK))
            .axis_desc_style(("sans-serif", 13).into_font().color(&GREY))
            .draw()
            .map_err(err)?;
        for (pos, f) in ranked.iter().enumerate() {
            let slot = (n - 1 - pos) as i32;
            let (a, b) = if f.mean >= 0.0 {
                (0.0, f.mean)
            } else {
                (f.mean, 0.0)
            };
            let mut bar = Rectangle::new(
                [
                    (a, SegmentValue::Exact(slot)),
                    (b, SegmentValue::Exact(slot + 1)),
                ],
                TEAL.mix(0.85).filled(),
            );
            bar.set_margin(6, 6, 0, 0);
            chart.draw_series(std::iter::once(bar)).map_err(err)?;
            if let Some(se) = f.std_error {
                let y = SegmentValue::CenterOf(slot);
                let style = INK.stroke_width(2);
                chart
                    .draw_series(std::iter::once(PathElement::new(
                        vec![(f.mean - se, y.clone()), (f.mean + se, y.clone())],
                        style,
                    )))
                    .map_err(err)?;
                for end in [f.mean - se, f.mean + se] {
                    chart
                        .draw_series(std::iter::once(
                            EmptyElement::at((end, y.clone()))
                                + PathElement::new(vec![(0, -6), (0, 6)], style),
                        ))
                        .map_err(err)?;
                }
            }
        }
        // The zero line: bars left of it are inputs whose shuffling helped.
        chart
            .draw_series(std::iter::once(PathElement::new(
                vec![
                    (0.0, SegmentValue::Exact(0)),
                    (0.0, SegmentValue::Exact(n as i32)),
                ],
                INK.stroke_width(1),
            )))
            .map_err(err)?;
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
            .y_label_formatter(&|v| tick(*v))
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
                        format!("{} with {} trees", crate::report::sig(last_y, 3), last_x),
                        (-170, 10),
                        ("sans-serif", 13).into_font().color(&INK),
                    ),
            ))
            .map_err(err)?;
        root.present().map_err(err)?;
    }
    Ok(svg)
}
