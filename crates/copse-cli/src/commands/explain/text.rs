//! The output rows of `copse explain`: which outputs are explained, the column names,
//! and each block's rows as CSV text (parts as numbers, reasons in words), made in
//! parallel pieces that go out in order.
use crate::commands::score::blocks::Block;
use crate::commands::score::rows::csv_text;
use crate::commands::score::target_size;
use crate::error::{forest_error, CliError, CliResult};
use crate::numbers::{fixed, plain, sig, value_decimals, PROBABILITY_DECIMALS};
use copse_forest::{predicted_class, FeatureKind, Forest};
use ndarray::{ArrayView2, Axis};
use rayon::prelude::*;

/// Output rows whose text one task makes.
const TEXT_ROWS: usize = 256;

/// What each output row holds.
pub(super) struct Layout<'a> {
    forest: &'a Forest,
    /// Outputs explained, in order: the value, the second of two classes, or every
    /// class.
    explained: Vec<usize>,
    /// Reasons in words per row.
    top: usize,
    /// Kept columns (count).
    kept: usize,
    header: Vec<String>,
    /// Decimals of probabilities or values.
    decimals: usize,
}

impl<'a> Layout<'a> {
    /// The layout for `forest`, with the `keep` columns first and `top` reasons.
    ///
    /// # Errors
    /// An input error when two columns would have the same name.
    pub(super) fn new(forest: &'a Forest, keep: &[String], top: usize) -> CliResult<Self> {
        let classes = forest.classes();
        let inputs: Vec<&str> = forest.meta().iter().map(|f| f.name.as_str()).collect();
        let explained: Vec<usize> = match classes.len() {
            0 => vec![0],
            2 => vec![1],
            k => (0..k).collect(),
        };
        let top = top.min(inputs.len());
        let mut header: Vec<String> = keep.to_vec();
        header.push("prediction".to_string());
        if classes.is_empty() {
            header.push("base".to_string());
            header.extend(inputs.iter().map(|i| format!("part_{i}")));
        } else {
            for &c in &explained {
                let c = &classes[c];
                header.push(format!("prob_{c}"));
                header.push(format!("base_{c}"));
                header.extend(inputs.iter().map(|i| format!("part_{c}_{i}")));
            }
        }
        header.extend((1..=top).map(|r| format!("reason_{r}")));
        for (i, h) in header.iter().enumerate() {
            if header[..i].contains(h) {
                return Err(CliError::input(format!(
                    "the output would have two columns named '{h}'; drop '{h}' from --keep"
                )));
            }
        }
        let decimals = if classes.is_empty() {
            value_decimals(target_size(forest))
        } else {
            PROBABILITY_DECIMALS
        };
        Ok(Self {
            forest,
            explained,
            top,
            kept: keep.len(),
            header,
            decimals,
        })
    }

    /// The column names.
    pub(super) fn header(&self) -> &[String] {
        &self.header
    }

    /// Explains the rows of `b` and makes their text, in pieces to write in order.
    ///
    /// # Errors
    /// A model that cannot explain the rows (an internal fault).
    pub(super) fn block_text(
        &self,
        b: &Block,
        delimiter: u8,
        source: &str,
    ) -> CliResult<Vec<CliResult<Vec<u8>>>> {
        let forest = self.forest;
        let (m, p) = (b.m, forest.n_features());
        let x = ArrayView2::from_shape((m, p), &b.x[..m * p])
            .map_err(|e| CliError::failure(format!("internal: {e}")))?;
        let fail = |e: copse_forest::Error| forest_error(&e, &format!("cannot explain {source}"));
        let preds = forest.predict(x).map_err(fail)?;
        let c = forest.contributions(x).map_err(fail)?;
        let d = self.decimals;
        let classes = forest.classes();
        let texts = (0..m.div_ceil(TEXT_ROWS))
            .into_par_iter()
            .map(|piece| {
                let part = piece * TEXT_ROWS..((piece + 1) * TEXT_ROWS).min(m);
                csv_text(delimiter, part.len() * 32 * self.header.len(), |w| {
                    let mut fields = csv::StringRecord::new();
                    let mut order: Vec<usize> = (0..p).collect();
                    for i in part {
                        fields.clear();
                        for k in 0..self.kept {
                            fields.push_field(b.kept[i].get(k).unwrap_or(""));
                        }
                        if b.blank[i] {
                            // A row that could not be read keeps its place, empty.
                            for _ in self.kept..self.header.len() {
                                fields.push_field("");
                            }
                            w.write_record(&fields)?;
                            continue;
                        }
                        let probs = preds.row(i);
                        let parts = c.values.index_axis(Axis(0), i);
                        if classes.is_empty() {
                            fields.push_field(&fixed(probs[0], d));
                        } else {
                            let label = forest.class_label(probs.as_slice().unwrap_or(&[]));
                            fields.push_field(label.unwrap_or(""));
                        }
                        for &o in &self.explained {
                            if !classes.is_empty() {
                                fields.push_field(&fixed(probs[o], d));
                            }
                            fields.push_field(&fixed(c.base[o], d));
                            for j in 0..p {
                                fields.push_field(&fixed(parts[[j, o]], d));
                            }
                        }
                        if self.top > 0 {
                            // Reasons speak of one output: the value, the second of two
                            // classes, or the predicted class of several.
                            let o = match classes.len() {
                                0 => 0,
                                2 => 1,
                                _ => predicted_class(probs.as_slice().unwrap_or(&[])),
                            };
                            order.sort_by(|&a, &b| {
                                parts[[b, o]].abs().total_cmp(&parts[[a, o]].abs())
                            });
                            let row = x.row(i);
                            for &j in &order[..self.top] {
                                let v = parts[[j, o]];
                                // A part too small to print says nothing.
                                if prints_as_zero(v, d) {
                                    fields.push_field("");
                                } else {
                                    fields.push_field(&self.reason(j, row[j], v, o));
                                }
                            }
                        }
                        w.write_record(&fields)?;
                    }
                    Ok(())
                })
            })
            .collect();
        Ok(texts)
    }

    /// One reason in words: the input, its value as read, which way it moved output
    /// `o` and by how much.
    fn reason(&self, j: usize, value: f64, part: f64, o: usize) -> String {
        let forest = self.forest;
        let meta = &forest.meta()[j];
        let shown = if value.is_nan() {
            format!("{} missing", meta.name)
        } else {
            match &meta.kind {
                FeatureKind::Categorical { levels } => {
                    let label = levels.get(value as usize).map_or("?", String::as_str);
                    format!("{} = {label}", meta.name)
                }
                FeatureKind::Numeric => format!("{} = {}", meta.name, plain(value)),
            }
        };
        let way = if part > 0.0 { "raised" } else { "lowered" };
        let target = &forest.card().target;
        let what = match forest.classes().get(o) {
            Some(class) => format!("the chance that {target} is {class}"),
            None => format!("the predicted {target}"),
        };
        format!("{shown} {way} {what} by {}", sig(part.abs(), 2))
    }
}

/// Whether `v` prints as zero with `d` decimals.
fn prints_as_zero(v: f64, d: usize) -> bool {
    fixed(v.abs(), d).trim_start_matches(['0', '.']).is_empty()
}

#[cfg(test)]
mod tests {
    use super::prints_as_zero;

    #[test]
    fn a_part_that_prints_as_zero_gives_no_reason() {
        let cases = [
            (0.0, 6, true),
            (-4e-7, 6, true),
            (6e-7, 6, false),
            (0.4, 0, true),
            (12.0, 0, false),
            (-0.05, 2, false),
        ];
        for (v, d, zero) in cases {
            assert_eq!(prints_as_zero(v, d), zero, "{v} with {d} decimals");
        }
    }
}
