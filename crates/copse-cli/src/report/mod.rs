//! The reports every command prints, as typed values: each command builds one view
//! (a `#[derive(Serialize)]` struct made from the engine's results), and the printed
//! text, the JSON object (`--json`) and the charts are all read from it. The printed
//! layout is copse's own: short capitalised section heads, aligned label/value lines,
//! the headline figures before the confusion table and the share of each class
//! predicted wrong under it, and an importance ranking with a bar per input. Every report ends with the caution that a model
//! supports, and does not replace, professional judgement.
//!
//! The JSON objects list their keys in alphabetical order at every level, as they
//! always have: [`print_json`] prints a view through a JSON map, which keeps its keys
//! sorted, so a view's fields can be laid out for reading and the model summary shared
//! by flattening.
pub mod brier_ranking;
pub mod contribution;
pub mod decision;
pub mod effect;
pub mod evaluate;
pub mod figures;
pub mod groups;
pub mod html;
pub mod importance;
pub mod inspect;
pub mod judged;
pub mod measures;
pub mod model;
pub mod notices;
pub mod pooled;
pub mod ranking;
pub mod sections;
pub mod stability;
pub mod train;
pub mod tune;

use crate::error::{CliError, CliResult};
use copse_forest::{ImportanceMeasure, Task};
use serde::Serialize;
use std::fmt::Write;

/// The caution printed under every report.
pub const CAUTION: &str =
    "A model like this supports, and does not replace, engineering judgement, \
inspections, clinical or professional judgement and local regulations. Validate it on your own \
data before relying on it, do not use it as the sole basis for decisions about people or \
safety, check its errors for bias across the groups it affects, and defer to local codes and \
licensed professionals.";

/// Width of the label column in label/value lines.
pub const LABEL: usize = 24;

/// Width that running text is wrapped to.
pub const WIDTH: usize = 88;

/// Text styling: bold section heads when colour is allowed.
#[derive(Debug, Clone, Copy)]
pub struct Style {
    colour: bool,
}

impl Style {
    /// Plain or coloured.
    pub fn new(colour: bool) -> Self {
        Style { colour }
    }

    /// A heading, bold when colour is allowed.
    pub fn head(&self, text: &str) -> String {
        if self.colour {
            format!("\x1b[1m{text}\x1b[0m")
        } else {
            text.to_string()
        }
    }
}

/// One label/value line, the label in a column of [`LABEL`] characters.
pub fn line(out: &mut String, label: &str, value: &str) {
    let _ = writeln!(out, "  {label:<LABEL$}{value}");
}

/// Running text wrapped to [`WIDTH`], each line indented by two spaces.
pub fn paragraph(out: &mut String, text: &str) {
    for l in wrap(text, WIDTH) {
        let _ = writeln!(out, "  {l}");
    }
}

/// Greedy word wrap.
pub fn wrap(text: &str, width: usize) -> Vec<String> {
    let mut lines = Vec::new();
    let mut cur = String::new();
    for word in text.split_whitespace() {
        if !cur.is_empty() && cur.len() + 1 + word.len() > width {
            lines.push(std::mem::take(&mut cur));
        }
        if !cur.is_empty() {
            cur.push(' ');
        }
        cur.push_str(word);
    }
    if !cur.is_empty() {
        lines.push(cur);
    }
    lines
}

/// The caution block.
pub fn caution(out: &mut String, st: Style) {
    let _ = writeln!(out, "{}", st.head("CAUTION"));
    paragraph(out, CAUTION);
}

/// The error measure of a task, whose words the engine gives: the misclassification
/// rate for classes, the mean squared error for numbers.
pub fn error_measure(task: Task) -> ImportanceMeasure {
    match task {
        Task::Classify => ImportanceMeasure::Misclassification,
        Task::Regress => ImportanceMeasure::MeanSquaredError,
    }
}

/// Prints a report view as one line of JSON on standard output, its keys in
/// alphabetical order at every level (see the module notes).
///
/// # Errors
/// A write failure, or a quiet stop when the reader has gone.
pub fn print_json(view: &impl Serialize) -> CliResult<()> {
    use std::io::Write;
    let text = json_text(view)?;
    let mut out = std::io::stdout().lock();
    writeln!(out, "{text}")
        .and_then(|()| out.flush())
        .map_err(|e| CliError::write("standard output", &e))
}

/// A report view as one line of JSON, its keys in alphabetical order at every level.
///
/// # Errors
/// An internal failure when the view cannot be written as JSON.
pub fn json_text(view: &impl Serialize) -> CliResult<String> {
    let internal = |e: serde_json::Error| CliError::failure(format!("internal: {e}"));
    let value = serde_json::to_value(view).map_err(internal)?;
    serde_json::to_string(&value).map_err(internal)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn wrap_keeps_words_whole() {
        let w = wrap("aa bb cc dd", 5);
        assert_eq!(w, vec!["aa bb", "cc dd"]);
    }

    #[derive(Serialize)]
    struct Inner {
        zeta: u32,
        alpha: Option<f64>,
    }

    #[derive(Serialize)]
    struct Outer {
        name: &'static str,
        #[serde(flatten)]
        inner: Inner,
        count: f64,
    }

    #[test]
    fn json_keys_come_in_alphabetical_order_at_every_level() {
        let v = vec![Outer {
            name: "a",
            inner: Inner {
                zeta: 2,
                alpha: None,
            },
            count: 1.0,
        }];
        assert_eq!(
            json_text(&v).unwrap(),
            r#"[{"alpha":null,"count":1.0,"name":"a","zeta":2}]"#
        );
    }
}
