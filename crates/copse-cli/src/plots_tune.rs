//! The chart of `copse tune`: one bar per setting tried, its out-of-bag loss minus the
//! default's (negative is better), a whisker of plus and minus two standard errors of
//! that paired difference, and a dark line at zero; the recommended setting in amber.
use crate::numbers::trim_num;
use crate::plots::{ranked_page, PlotResult, TEAL};
use crate::plots_ranked::{label_width, padded_range, Layout, RankedBar, RankedFrame};
use crate::report::tune::TuneView;
use plotters::style::RGBColor;

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
    let bars: Vec<RankedBar> = rows
        .iter()
        .enumerate()
        .map(|(pos, r)| RankedBar {
            label: format!(
                "{} per split, leaf {}, {} cuts{}",
                r.features_per_split,
                trim_num(r.min_leaf, 3),
                r.cuts,
                if r.is_default { " (default)" } else { "" }
            ),
            value: r.loss_difference,
            whisker: (!r.is_default).then_some(margin * r.loss_difference_se),
            colour: if view.recommended() == Some(pos) {
                AMBER
            } else {
                TEAL
            },
        })
        .collect();
    let range = padded_range(
        rows.iter().map(|r| {
            let w = margin * r.loss_difference_se;
            (r.loss_difference - w, r.loss_difference + w)
        }),
        false,
    );
    let frame = RankedFrame {
        layout: Layout::Page,
        axis: Some(
            "setting minus default, row by row (left is better; whiskers: ± two standard errors)",
        ),
        label_size: 12,
        label_width: label_width(bars.iter().map(|b| b.label.as_str()), 7, 24, 360),
        ticks: None,
        caps: true,
    };
    ranked_page(
        (900, 150 + 26 * n as u32),
        &format!(
            "Settings against the default: change in out-of-bag {}",
            view.loss_words()
        ),
        &view.subtitle(),
        &frame,
        range,
        &bars,
    )
}
