//! Reading new rows the way the training rows were read: columns matched to the
//! model's inputs by name (any order, extra columns ignored), numbers parsed, category
//! labels turned into the model's codes. A category the model never saw is treated as
//! missing and counted, so the caller can warn about it.
use crate::cells::{clip, looks_decimal_comma, parse_number, read_number, Missing};
use crate::csv_input::CsvInput;
use crate::error::{Error, ErrorKind, Result};
use crate::place::Place;
use copse_forest::{DecimalMark, FeatureKind, Forest, Outcome, Task, MISSING};
use ndarray::Array2;
use std::collections::HashMap;

/// Turns CSV records into rows of model inputs.
pub struct RowEncoder {
    place: Place,
    names: Vec<String>,
    cols: Vec<usize>,
    lookups: Vec<Option<HashMap<String, u32>>>,
    target: Option<(usize, String)>,
    class_lookup: HashMap<String, u32>,
    classes: Vec<String>,
    missing: Missing,
    decimal: DecimalMark,
    unseen: UnseenTally,
}

/// Cells holding a category the model never saw, per input: how many, and the first
/// three distinct ones as a message shows them. A tally of rows read apart (on other
/// threads) joins the encoder's own with [`RowEncoder::add_tally`], in file order,
/// with the same result as reading those rows through the encoder itself.
#[derive(Debug, Clone, Default)]
pub struct UnseenTally {
    counts: Vec<u64>,
    examples: Vec<Vec<String>>,
    total: u64,
}

impl UnseenTally {
    /// Most examples kept per input.
    const EXAMPLES: usize = 3;

    /// Unseen cells over every input.
    pub fn total(&self) -> u64 {
        self.total
    }

    /// Counts an unseen `cell` of input `k`.
    fn add(&mut self, k: usize, cell: &str) {
        self.counts[k] += 1;
        self.total += 1;
        let ex = &mut self.examples[k];
        if ex.len() < Self::EXAMPLES {
            let shown = clip(cell);
            if !ex.contains(&shown) {
                ex.push(shown);
            }
        }
    }
}

impl RowEncoder {
    /// Matches `input`'s columns to `model`'s inputs (and its outcome column when
    /// `need_target`); `missing` gives the cells read as missing (usually the
    /// model's own, [`Missing::of_model`]); numbers are read with `input`'s decimal
    /// mark ([`CsvInput::with_decimal`]; usually the model's, its card's
    /// `decimal_mark`).
    ///
    /// # Errors
    /// `Columns`, naming every column the model needs that the file lacks.
    pub fn new(
        input: &CsvInput,
        model: &Forest,
        missing: Missing,
        need_target: bool,
    ) -> Result<Self> {
        let target = &model.card().target;
        let mut absent: Vec<&str> = model
            .meta()
            .iter()
            .map(|f| f.name.as_str())
            .filter(|n| input.column(n).is_none())
            .collect();
        let target_col = input.column(target);
        if need_target && target_col.is_none() {
            absent.push(target);
        }
        if !absent.is_empty() {
            let list = absent
                .iter()
                .map(|a| format!("'{a}'"))
                .collect::<Vec<_>>()
                .join(", ");
            let (noun, verb) = if absent.len() == 1 {
                ("column", "it")
            } else {
                ("columns", "them")
            };
            let mut msg = format!(
                "{} has no {noun} {list}, which the model needs; add {verb} (matched by name in the header, \
                 any order) or use a model trained without {verb}",
                input.name()
            );
            if let Some(hint) = input.delimiter_hint() {
                msg.push_str("; ");
                msg.push_str(&hint);
            }
            return Err(Error::new(ErrorKind::Columns, msg));
        }
        let cols = model
            .meta()
            .iter()
            .map(|f| input.column(&f.name).unwrap_or(0))
            .collect();
        let lookups = model
            .meta()
            .iter()
            .map(|f| match &f.kind {
                FeatureKind::Categorical { levels } => Some(
                    levels
                        .iter()
                        .enumerate()
                        .map(|(i, l)| (l.clone(), i as u32))
                        .collect(),
                ),
                FeatureKind::Numeric => None,
            })
            .collect();
        let classes = model.classes().to_vec();
        let class_lookup = classes
            .iter()
            .enumerate()
            .map(|(i, l)| (l.clone(), i as u32))
            .collect();
        let p = model.n_features();
        Ok(RowEncoder {
            place: input.place().clone(),
            names: model.meta().iter().map(|f| f.name.clone()).collect(),
            cols,
            lookups,
            target: if need_target {
                target_col.map(|c| (c, target.clone()))
            } else {
                None
            },
            class_lookup,
            classes,
            missing,
            decimal: input.decimal(),
            unseen: UnseenTally {
                counts: vec![0; p],
                examples: vec![Vec::new(); p],
                total: 0,
            },
        })
    }

    /// An empty tally for rows encoded apart ([`RowEncoder::encode_tallied`]).
    pub fn new_tally(&self) -> UnseenTally {
        UnseenTally {
            counts: vec![0; self.names.len()],
            examples: vec![Vec::new(); self.names.len()],
            total: 0,
        }
    }

    /// Joins `tally` (rows read after every row counted so far) to the encoder's own
    /// count of unseen categories.
    pub fn add_tally(&mut self, tally: &UnseenTally) {
        for (k, &n) in tally.counts.iter().enumerate() {
            self.unseen.counts[k] += n;
        }
        self.unseen.total += tally.total;
        for (k, more) in tally.examples.iter().enumerate() {
            let ex = &mut self.unseen.examples[k];
            for e in more {
                if ex.len() < UnseenTally::EXAMPLES && !ex.contains(e) {
                    ex.push(e.clone());
                }
            }
        }
    }

    /// Encodes `record`'s inputs into `out` (one value per model input).
    ///
    /// # Errors
    /// An input error naming the line and column when a numeric input holds text.
    pub fn encode(&mut self, record: &csv::StringRecord, out: &mut [f64]) -> Result<()> {
        let mut tally = std::mem::take(&mut self.unseen);
        let result = self.encode_tallied(record, out, &mut tally);
        self.unseen = tally;
        result
    }

    /// Encodes like [`RowEncoder::encode`], counting unseen categories in `tally`
    /// instead of the encoder (so that rows can be encoded on several threads).
    ///
    /// # Errors
    /// As [`RowEncoder::encode`].
    pub fn encode_tallied(
        &self,
        record: &csv::StringRecord,
        out: &mut [f64],
        tally: &mut UnseenTally,
    ) -> Result<()> {
        for (k, o) in out.iter_mut().enumerate() {
            let cell = record.get(self.cols[k]).unwrap_or("").trim();
            if self.missing.is_missing(cell) {
                *o = f64::NAN;
                continue;
            }
            *o = match &self.lookups[k] {
                Some(codes) => match codes.get(cell) {
                    Some(&c) => f64::from(c),
                    None => {
                        tally.add(k, cell);
                        f64::NAN
                    }
                },
                None => match read_number(cell, self.decimal) {
                    Some(v) => v,
                    None => {
                        let line = record.position().map_or(0, |p| p.line());
                        return Err(Error::new(ErrorKind::BadValue, format!(
                            "{}, column '{}': '{}' is not a finite number, but the model was \
                             trained with '{}' as a numeric input; fix the value, or list it as missing with --missing{}",
                            self.place.at(line),
                            self.names[k],
                            clip(cell),
                            self.names[k],
                            self.mark_hint(cell)
                        )));
                    }
                },
            };
        }
        Ok(())
    }

    /// The outcome of `record` as a class code (or [`MISSING`]).
    ///
    /// # Errors
    /// An input error naming the line when the label is not one of the model's classes.
    pub fn class(&self, record: &csv::StringRecord) -> Result<u32> {
        let Some((col, name)) = &self.target else {
            return Ok(MISSING);
        };
        let cell = record.get(*col).unwrap_or("").trim();
        if self.missing.is_missing(cell) {
            return Ok(MISSING);
        }
        self.class_lookup.get(cell).copied().ok_or_else(|| {
            let line = record.position().map_or(0, |p| p.line());
            Error::new(ErrorKind::BadValue, format!(
                "{}, column '{name}': class '{}' is not one the model knows ({}); \
                 a model cannot be judged on a class it never saw: remove those rows or retrain with them",
                self.place.at(line),
                clip(cell),
                self.classes.join(", ")
            ))
        })
    }

    /// The outcome of `record` as a number (NaN when missing).
    ///
    /// # Errors
    /// An input error naming the line when the cell is not a number.
    pub fn value(&self, record: &csv::StringRecord) -> Result<f64> {
        let Some((col, name)) = &self.target else {
            return Ok(f64::NAN);
        };
        let cell = record.get(*col).unwrap_or("").trim();
        if self.missing.is_missing(cell) {
            return Ok(f64::NAN);
        }
        read_number(cell, self.decimal).ok_or_else(|| {
            let line = record.position().map_or(0, |p| p.line());
            Error::new(
                ErrorKind::BadValue,
                format!(
                "{}, column '{name}': '{}' is not a finite number, and the model predicts numbers; \
                 fix the value or leave it empty{}",
                self.place.at(line),
                clip(cell),
                self.mark_hint(cell)
            ),
            )
        })
    }

    /// A hint for a cell that is a number with the other decimal mark.
    fn mark_hint(&self, cell: &str) -> &'static str {
        match self.decimal {
            DecimalMark::Point if looks_decimal_comma(cell) => {
                "; if the file writes numbers with a decimal comma, add --decimal comma"
            }
            DecimalMark::Comma if parse_number(cell).is_some() => {
                "; numbers are read with a decimal comma (the model's training file had them); \
                 if this file writes a decimal point, add --decimal point"
            }
            _ => "",
        }
    }

    /// Cells whose category the model never saw, per input, for a warning; `None` when
    /// there were none.
    pub fn unseen_warning(&self) -> Option<String> {
        let total = self.unseen.total();
        if total == 0 {
            return None;
        }
        let parts: Vec<String> = self
            .unseen
            .counts
            .iter()
            .enumerate()
            .filter(|(_, &n)| n > 0)
            .map(|(k, &n)| {
                let ex: Vec<String> = self.unseen.examples[k]
                    .iter()
                    .map(|e| format!("'{e}'"))
                    .collect();
                format!("{n} in '{}' (such as {})", self.names[k], ex.join(", "))
            })
            .collect();
        let (cells, were) = if total == 1 {
            ("cell of {} holds a category", "it was")
        } else {
            ("cells of {} hold categories", "they were")
        };
        Some(format!(
            "{total} {} the model never saw in training; {were} treated as missing: {}",
            cells.replace("{}", self.place.name()),
            parts.join("; ")
        ))
    }

    /// Unseen-category counts per input, in model order.
    pub fn unseen_counts(&self) -> &[u64] {
        &self.unseen.counts
    }
}

/// A labelled file read whole with a model's schema.
pub struct Labelled {
    /// Inputs, rows by model inputs.
    pub x: Array2<f64>,
    /// Outcome in the model's class order.
    pub outcome: Outcome,
    /// Rows read.
    pub rows: usize,
    /// The encoder, for its unseen-category counts.
    pub encoder: RowEncoder,
    /// Remarks about the file for the user (blank lines passed over).
    pub notes: Vec<String>,
    /// Each row's case weight, read from the model's case weights column
    /// ([`copse_forest::ModelCard::weights`]) when the model has one and the file
    /// holds it (0 on rows without a target, which no figure counts); else `None`.
    pub weights: Option<Vec<f64>>,
}

/// A file of input rows read whole with a model's schema; an outcome column, if
/// present, is not read.
pub struct InputRows {
    /// Inputs, rows by model inputs.
    pub x: Array2<f64>,
    /// The encoder, for its unseen-category counts.
    pub encoder: RowEncoder,
    /// Remarks about the file for the user (blank lines passed over).
    pub notes: Vec<String>,
}

/// Reads every row of `input` for `model`, inputs only (for effect curves, which
/// need the rows in memory but not their outcomes).
///
/// # Errors
/// As for [`RowEncoder::new`] and [`RowEncoder::encode`], and `NoRows` for a file
/// with no data rows.
pub fn read_inputs(mut input: CsvInput, model: &Forest, missing: Missing) -> Result<InputRows> {
    let mut enc = RowEncoder::new(&input, model, missing, false)?;
    let p = model.n_features();
    let mut values: Vec<f64> = Vec::new();
    let mut row = vec![0.0; p];
    let mut record = csv::StringRecord::new();
    let mut rows = 0usize;
    while input.read(&mut record)? {
        enc.encode(&record, &mut row)?;
        values.extend_from_slice(&row);
        rows += 1;
    }
    if rows == 0 {
        return Err(Error::new(
            ErrorKind::NoRows,
            format!(
                "{} has a header but no data rows; add rows to read",
                input.name()
            ),
        ));
    }
    let x = Array2::from_shape_fn((rows, p), |(i, j)| values[i * p + j]);
    Ok(InputRows {
        x,
        encoder: enc,
        notes: input.blank_lines_note().into_iter().collect(),
    })
}

/// Reads every row of `input` for `model`, including the outcome column.
///
/// # Errors
/// As for [`RowEncoder::new`], [`RowEncoder::encode`] and the outcome readers, and
/// `NoRows` for a file with no data rows.
pub fn read_labelled(input: CsvInput, model: &Forest, missing: Missing) -> Result<Labelled> {
    read_labelled_with_column(input, model, missing, None).map(|(l, _)| l)
}

/// The cells of one column, one per row (`None` for a cell read as missing).
pub type ColumnCells = Vec<Option<String>>;

/// Reads every row of `input` for `model`, as [`read_labelled`], and also the text of
/// column `extra` in each row (trimmed; `None` for a cell read as missing), for
/// grouping rows by a column that need not be an input.
///
/// # Errors
/// As for [`read_labelled`], and `Columns` when the file has no column `extra`.
pub fn read_labelled_with_column(
    mut input: CsvInput,
    model: &Forest,
    missing: Missing,
    extra: Option<&str>,
) -> Result<(Labelled, Option<ColumnCells>)> {
    let extra_col = match extra {
        None => None,
        Some(name) => Some(input.column(name).ok_or_else(|| {
            Error::new(
                ErrorKind::Columns,
                format!(
                    "{} has no column '{}'; its columns are {}",
                    input.name(),
                    clip(name),
                    input.headers().join(", ")
                ),
            )
        })?),
    };
    let mut cells: Vec<Option<String>> = Vec::new();
    let extra_missing = missing.clone();
    let weights_col = model
        .card()
        .weights
        .as_ref()
        .and_then(|w| input.column(&w.column).map(|j| (j, w.column.clone())));
    let mut weights: Vec<f64> = Vec::new();
    let (place, mark) = (input.place().clone(), input.decimal());
    let mut enc = RowEncoder::new(&input, model, missing, true)?;
    let p = model.n_features();
    let mut values: Vec<f64> = Vec::new();
    let mut codes: Vec<u32> = Vec::new();
    let mut ys: Vec<f64> = Vec::new();
    let mut row = vec![0.0; p];
    let mut record = csv::StringRecord::new();
    let mut rows = 0usize;
    while input.read(&mut record)? {
        enc.encode(&record, &mut row)?;
        values.extend_from_slice(&row);
        if let Some(c) = extra_col {
            let cell = record.get(c).unwrap_or("").trim();
            cells.push((!extra_missing.is_missing(cell)).then(|| cell.to_string()));
        }
        let known = match model.task() {
            Task::Classify => {
                let c = enc.class(&record)?;
                codes.push(c);
                c != copse_forest::MISSING
            }
            Task::Regress => {
                let y = enc.value(&record)?;
                ys.push(y);
                !y.is_nan()
            }
        };
        if let Some((j, name)) = &weights_col {
            weights.push(if known {
                crate::row_roles::read_weight(&place, &record, *j, name, &extra_missing, mark)?
            } else {
                0.0
            });
        }
        rows += 1;
    }
    if rows == 0 {
        return Err(Error::new(
            ErrorKind::NoRows,
            format!(
                "{} has a header but no data rows; add the labelled rows to check the model on",
                input.name()
            ),
        ));
    }
    let x = Array2::from_shape_fn((rows, p), |(i, j)| values[i * p + j]);
    let outcome = match model.task() {
        Task::Classify => Outcome::Classes {
            codes,
            labels: model.classes().to_vec(),
        },
        Task::Regress => Outcome::Values(ys),
    };
    let labelled = Labelled {
        x,
        outcome,
        rows,
        encoder: enc,
        notes: input.blank_lines_note().into_iter().collect(),
        weights: weights_col.map(|_| weights),
    };
    Ok((labelled, extra_col.map(|_| cells)))
}
