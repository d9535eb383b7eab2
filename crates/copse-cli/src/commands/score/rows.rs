//! The output rows of a block: the block's predictions (and standard errors and
//! outcome ranges) from the model, written as CSV text in parallel pieces that go out in order.
use super::blocks::Block;
use crate::error::{forest_error, CliError, CliResult};
use crate::numbers::{fixed_into, value_decimals, PROBABILITY_DECIMALS};
use copse_forest::leaf_masks::LeafMasks;
use copse_forest::Forest;
use ndarray::ArrayView2;
use rayon::prelude::*;

/// Output rows whose text one task makes (the text of a block is made in parallel).
const TEXT_ROWS: usize = 2048;

/// What each output row holds, and how it is written.
pub(crate) struct RowWriter<'a> {
    /// The model.
    pub(crate) forest: &'a Forest,
    /// The forest laid out for scoring by leaf masks, when that beats the node walk
    /// (`LeafMasks::for_scoring`); the predictions are the same to the bit.
    pub(crate) masks: Option<&'a LeafMasks>,
    /// The input's name, for messages.
    pub(crate) source: &'a str,
    /// The input columns kept, by position.
    pub(crate) keep: &'a [usize],
    /// Whether standard errors are written.
    pub(crate) uncertainty: bool,
    /// The coverage of the outcome ranges written, if any.
    pub(crate) interval: Option<f64>,
    /// The CSV delimiter.
    pub(crate) delimiter: u8,
    /// With JSON lines, each output column's name (as JSON text) and kind; `None`
    /// for CSV.
    pub(crate) json: Option<&'a [(String, Cell)]>,
}

/// What an output column holds, for JSON lines: text (kept cells, class labels), a
/// number, or a yes/no flag. An empty cell is `null`.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum Cell {
    /// A string.
    Text,
    /// A number, written as in the CSV output.
    Number,
    /// `true` for 1, `false` for 0.
    Flag,
}

/// One JSON object on one line from the row's cells.
fn json_line(out: &mut Vec<u8>, columns: &[(String, Cell)], fields: &csv::StringRecord) {
    out.push(b'{');
    for (j, ((name, kind), cell)) in columns.iter().zip(fields.iter()).enumerate() {
        if j > 0 {
            out.push(b',');
        }
        out.extend_from_slice(name.as_bytes());
        out.push(b':');
        match kind {
            _ if cell.is_empty() => out.extend_from_slice(b"null"),
            Cell::Text => {
                let quoted = serde_json::to_string(cell).unwrap_or_else(|_| "null".into());
                out.extend_from_slice(quoted.as_bytes());
            }
            Cell::Number => out.extend_from_slice(cell.as_bytes()),
            Cell::Flag => out.extend_from_slice(if cell == "1" { b"true" } else { b"false" }),
        }
    }
    out.extend_from_slice(b"}\n");
}

impl RowWriter<'_> {
    /// Scores the rows of `b` and makes their text, in pieces to write in order;
    /// returns the pieces and the number of standard errors that could not be
    /// estimated. With `unfamiliar` (one flag per row of the block), each row ends
    /// with 1 or 0.
    ///
    /// # Errors
    /// A model that cannot score the rows (an internal fault).
    pub(crate) fn block_text(
        &self,
        b: &Block,
        unfamiliar: Option<&[bool]>,
    ) -> CliResult<(Vec<CliResult<Vec<u8>>>, usize)> {
        let forest = self.forest;
        let classes = forest.classes();
        let m = b.m;
        let p = forest.n_features();
        let x = ArrayView2::from_shape((m, p), &b.x[..m * p])
            .map_err(|e| CliError::failure(format!("internal: {e}")))?;
        let fail =
            |e: copse_forest::Error| forest_error(&e, &format!("cannot score {}", self.source));
        // One precision per output column: six decimals for probabilities, six
        // significant digits of the largest training value for values.
        let d = if classes.is_empty() {
            value_decimals(target_size(forest))
        } else {
            PROBABILITY_DECIMALS
        };
        let mut clamped = 0;
        let (preds, se) = if self.uncertainty {
            let u = forest.prediction_uncertainty(x).map_err(fail)?;
            clamped = u.clamped;
            // A standard error the engine could not estimate stays an empty cell.
            let se = u.std_errors().mapv(|s| s.unwrap_or(f64::NAN));
            (u.predictions, Some(se))
        } else {
            let preds = match self.masks {
                Some(masks) => forest.predict_by_masks(masks, x),
                None => forest.predict(x),
            };
            (preds.map_err(fail)?, None)
        };
        let ranges = match self.interval {
            Some(c) => Some(forest.outcome_intervals(x, c).map_err(fail)?),
            None => None,
        };
        // Prediction columns per row: the prediction, plus one probability per class.
        let out_fields = if classes.is_empty() {
            1
        } else {
            classes.len() + 1
        };
        let texts = (0..m.div_ceil(TEXT_ROWS))
            .into_par_iter()
            .map(|c| {
                let part = c * TEXT_ROWS..((c + 1) * TEXT_ROWS).min(m);
                let mut lines = Vec::new();
                let text = csv_text(self.delimiter, part.len() * 64, |w| {
                    // Fields gather in one reused record, numbers through one reused
                    // buffer: no text is allocated per cell.
                    let mut fields = csv::StringRecord::new();
                    let mut cell = String::with_capacity(32);
                    let mut probs: Vec<f64> = Vec::with_capacity(classes.len());
                    for i in part {
                        fields.clear();
                        for c in 0..self.keep.len() {
                            fields.push_field(b.kept[i].get(c).unwrap_or(""));
                        }
                        if b.blank[i] {
                            // An empty prediction and empty probabilities: the row is
                            // kept in its place, never dropped.
                            for _ in 0..out_fields {
                                fields.push_field("");
                            }
                        } else if classes.is_empty() {
                            fixed_into(&mut cell, preds[[i, 0]], d);
                            fields.push_field(&cell);
                        } else {
                            probs.clear();
                            probs.extend(preds.row(i).iter());
                            fields.push_field(forest.class_label(&probs).unwrap_or(""));
                            for &v in &probs {
                                fixed_into(&mut cell, v, d);
                                fields.push_field(&cell);
                            }
                        }
                        if let Some(se) = &se {
                            for &v in se.row(i) {
                                // An unscorable row gets no standard error either.
                                cell.clear();
                                if !b.blank[i] {
                                    fixed_into(&mut cell, v, d);
                                }
                                fields.push_field(&cell);
                            }
                        }
                        if let Some(ranges) = &ranges {
                            for &v in ranges.row(i) {
                                // An unscorable row gets no range either.
                                cell.clear();
                                if !b.blank[i] {
                                    fixed_into(&mut cell, v, d);
                                }
                                fields.push_field(&cell);
                            }
                        }
                        if let Some(flags) = unfamiliar {
                            // An unscorable row was not judged: its cell stays empty.
                            fields.push_field(match (b.blank[i], flags[i]) {
                                (true, _) => "",
                                (false, true) => "1",
                                (false, false) => "0",
                            });
                        }
                        match self.json {
                            Some(columns) => json_line(&mut lines, columns, &fields),
                            None => w.write_record(&fields)?,
                        }
                    }
                    Ok(())
                });
                if self.json.is_some() {
                    text.map(|_| lines)
                } else {
                    text
                }
            })
            .collect();
        Ok((texts, clamped))
    }
}

/// The largest size of the training target's values (0 when the model has none).
pub(crate) fn target_size(forest: &Forest) -> f64 {
    forest
        .card()
        .value_range
        .map_or(0.0, |[lo, _, hi]| lo.abs().max(hi.abs()))
}

/// The CSV text of what `write` puts out, with `delimiter` and quoting as needed.
///
/// # Errors
/// None in practice (the text goes to memory); a failure of the CSV writer is reported
/// as an internal fault.
pub(crate) fn csv_text(
    delimiter: u8,
    capacity: usize,
    write: impl FnOnce(&mut csv::Writer<Vec<u8>>) -> csv::Result<()>,
) -> CliResult<Vec<u8>> {
    let mut w = csv::WriterBuilder::new()
        .delimiter(delimiter)
        .from_writer(Vec::with_capacity(capacity));
    write(&mut w).map_err(|e| CliError::failure(format!("internal: {e}")))?;
    w.into_inner()
        .map_err(|e| CliError::failure(format!("internal: {}", e.error())))
}
