//! The chart of `copse tune`: one bar per setting tried, its out-of-bag loss minus the
//! default's (negative is better), a whisker of plus and minus two standard errors of
//! that paired difference, and a dark line at zero; the recommended setting in amber.
use crate::numbers::{plain, trim_num};
use crate::plots::{draw_rise, draw_zero_line, err, titled, PlotResult, GREY, GRID, INK, TEAL};
use crate::report::tune::TuneView;
use plotters::coord::ranged1d::SegmentValue;
use plotters::prelude::*;

/// The recommended setting's colour.
const AMBER: RGBColor = RGBColor(191, 120, 32);

/// The tuning chart as SVG text.
///
/// # Errors
/// A message when drawing fails.
pub fn tune_svg(view: &TuneView<'_>) -> PlotResult<String> {
    let rows = view.rows();
    let margin = 2.0;
    let n = rows.len().max(1);
    let names: Vec<String> = rows
        .iter()
        .map(|r| {
            let mut s = format!(
                "{} per split, leaf {}, {} cuts",
                r.features_per_split,
                trim_num(r.min_leaf, 3),
                r.cuts
            );
            if r.is_default {
                s.push_str(" (default)");
            }
            s
        })
        .collect();
    let longest = names.iter().map(|s| s.chars().count()).max().unwrap_or(5);
    let (mut lo, mut hi) = (0.0f64, 0.0f64);
    for r in rows {
        let w = margin * r.loss_difference_se;
        lo = lo.min(r.loss_difference - w);
        hi = hi.max(r.loss_difference + w);
    }
    if hi - lo <= 0.0 {
        hi = lo + 1e-6;
    }
    let pad = 0.06 * (hi - lo);
    let (lo, hi) = (lo - pad, hi + pad);
    let height = 150 + 26 * n as u32;
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, (900, height)).into_drawing_area();
        let area = titled(
            &root,
            &format!(
                "Settings against the default: change in out-of-bag {}",
                view.loss_words()
            ),
            &view.subtitle(),
        )?;
        let mut chart = ChartBuilder::on(&area)
            .margin_left(18)
            .margin_right(28)
            .margin_bottom(10)
            .x_label_area_size(40)
            .y_label_area_size((longest as u32 * 7 + 24).min(360))
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
                // Segment 0 is drawn at the bottom; the first setting is on top.
                SegmentValue::CenterOf(i) if (*i as usize) < n => {
                    names.get(n - 1 - *i as usize).cloned().unwrap_or_default()
                }
                _ => String::new(),
            })
            .x_desc("setting minus default, row by row (left is better; whiskers: ± two standard errors)")
            .x_label_formatter(&|v| plain(*v))
            .label_style(("sans-serif", 12).into_font().color(&INK))
            .axis_desc_style(("sans-serif", 13).into_font().color(&GREY))
            .draw()
            .map_err(err)?;
        for (pos, r) in rows.iter().enumerate() {
            let slot = (n - 1 - pos) as i32;
            let colour = if view.recommended() == Some(pos) {
                AMBER
            } else {
                TEAL
            };
            let se = (!r.is_default).then_some(margin * r.loss_difference_se);
            draw_rise(&mut chart, slot, r.loss_difference, se, colour, true)?;
        }
        draw_zero_line(&mut chart, n)?;
        root.present().map_err(err)?;
    }
    Ok(svg)
}
