//! The charts' shared basics: copse's colours (teal marks, dark ink, grey text, light
//! grid) and the result type every drawing function returns.
use plotters::style::RGBColor;

pub(crate) const TEAL: RGBColor = RGBColor(38, 120, 128);
pub(crate) const INK: RGBColor = RGBColor(33, 37, 41);
pub(crate) const GREY: RGBColor = RGBColor(110, 117, 125);
pub(crate) const GRID: RGBColor = RGBColor(228, 231, 235);

/// A drawing's result: the SVG text, or the drawing library's message.
pub(crate) type PlotResult<T> = Result<T, String>;

/// The drawing library's error as a message.
pub(crate) fn err<E: std::fmt::Display>(e: E) -> String {
    e.to_string()
}
