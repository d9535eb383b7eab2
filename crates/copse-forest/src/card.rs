//! The model card: what a model file records about how the model was made, beside the
//! trees (the outcome column's name, the missing-value tokens new files are read with,
//! the training source and its row counts, the class counts or value range, the decimal
//! mark of its numbers, the case weights and row groups trained with, the copse
//! version). No clock times, so the same run gives the same file byte for byte.
use crate::case_weights::{GroupsRecord, WeightsRecord};
use crate::error::{Error, ErrorKind, Result};
use crate::metrics::Metrics;
use crate::oob_summary::OobSummary;
use crate::outcome::Outcome;
use serde::{Deserialize, Serialize};

/// Cell texts that mean "missing" when none are given (an empty cell always does):
/// the general conventions `NA` and `NaN`. Any other token can be given instead.
pub const STANDARD_MISSING_TOKENS: [&str; 2] = ["NA", "NaN"];

/// The decimal mark numbers in a CSV file are written with.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
pub enum DecimalMark {
    /// `5.1` (the default).
    #[default]
    Point,
    /// `5,1`, usual where fields are separated by semicolons.
    Comma,
}

impl DecimalMark {
    /// The name used on the command line.
    pub fn name(self) -> &'static str {
        match self {
            DecimalMark::Point => "point",
            DecimalMark::Comma => "comma",
        }
    }
}

/// A record of how a model was made, stored in its file.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ModelCard {
    /// Version of copse that trained it.
    pub copse_version: String,
    /// Name of the outcome column (`outcome` when trained from an array).
    pub target: String,
    /// Cell texts read as missing, besides an empty cell, when new files are read.
    pub missing_tokens: Vec<String>,
    /// Where the training rows came from (a file name as given, or `array`).
    pub source: String,
    /// Data rows read from the source, including rows left out for a missing outcome.
    pub rows_read: usize,
    /// Rows left out because their outcome was missing.
    pub rows_without_outcome: usize,
    /// Columns of the source left out by the user.
    pub ignored: Vec<String>,
    /// Rows per class among the training rows (classification; model class order).
    pub class_counts: Vec<u64>,
    /// Smallest, mean and largest outcome value (regression).
    pub value_range: Option<[f64; 3]>,
    /// The rule for inputs per split as given (its display form).
    pub features_rule: String,
    /// Remarks about the training data that the reports repeat (how the outcome was
    /// read, inputs that cannot help, rows left out).
    pub notes: Vec<String>,
    /// The decimal mark of the training file's numbers; new files are read with it
    /// unless told otherwise.
    pub decimal_mark: DecimalMark,
    /// The case weights training used, if any ([`crate::case_weights`]); `None` also
    /// for weights that were all 1 when trained from an array.
    pub weights: Option<WeightsRecord>,
    /// The row groups resampling drew whole, if any.
    pub groups: Option<GroupsRecord>,
}

impl ModelCard {
    /// The card the engine writes for a model trained on `outcome` directly (from an
    /// array): every row counted as read, standard missing tokens, target `outcome`.
    /// The data layer replaces the source fields with the file's own.
    pub fn for_outcome(outcome: &Outcome, features_rule: String) -> ModelCard {
        let (class_counts, value_range) = match outcome {
            Outcome::Classes { codes, labels } => {
                let mut counts = vec![0u64; labels.len()];
                for &c in codes {
                    if let Some(n) = counts.get_mut(c as usize) {
                        *n += 1;
                    }
                }
                (counts, None)
            }
            Outcome::Values(v) => {
                let known = v.iter().copied().filter(|x| !x.is_nan());
                let (mut lo, mut hi, mut sum, mut n) = (f64::INFINITY, f64::NEG_INFINITY, 0.0, 0);
                for x in known {
                    lo = lo.min(x);
                    hi = hi.max(x);
                    sum += x;
                    n += 1;
                }
                (Vec::new(), Some([lo, sum / n.max(1) as f64, hi]))
            }
        };
        ModelCard {
            copse_version: env!("CARGO_PKG_VERSION").to_string(),
            target: "outcome".to_string(),
            missing_tokens: STANDARD_MISSING_TOKENS
                .iter()
                .map(|t| t.to_string())
                .collect(),
            source: "array".to_string(),
            rows_read: outcome.len(),
            rows_without_outcome: outcome.len() - outcome.n_labelled(),
            ignored: Vec::new(),
            class_counts,
            value_range,
            features_rule,
            notes: Vec::new(),
            decimal_mark: DecimalMark::Point,
            weights: None,
            groups: None,
        }
    }

    /// Checks the card's counts fit the model and its out-of-bag summary: nothing
    /// counts more rows than were read, and per-class tables have one entry per class
    /// (the reports subtract and add these counts, so a damaged file must not reach
    /// them).
    pub(crate) fn check(&self, n_classes: usize, oob: &OobSummary) -> Result<()> {
        let read = self.rows_read as u64;
        let within = |n: usize| n as u64 <= read;
        // The sum of `v` when it does not overflow and stays within the rows read.
        fn total(mut v: impl Iterator<Item = u64>, read: u64) -> Option<u64> {
            v.try_fold(0u64, |a, b| a.checked_add(b))
                .filter(|&s| s <= read)
        }
        let bad = |what: &str| Err(Error::new(ErrorKind::InvalidModel, what.to_string()));
        if !within(self.rows_without_outcome) {
            return bad("its record leaves out more rows than it read");
        }
        if let Some(w) = &self.weights {
            if !(within(w.zero_rows) && w.total.is_finite() && w.total >= 0.0) {
                return bad("its record of case weights does not fit its rows");
            }
        }
        if let Some(g) = &self.groups {
            if !within(g.groups) || g.smallest > g.largest || !within(g.largest) {
                return bad("its record of row groups does not fit its rows");
            }
        }
        if self.class_counts.len() != n_classes
            || total(self.class_counts.iter().copied(), read).is_none()
        {
            return bad("its class counts do not fit its classes and rows");
        }
        let counts = [
            oob.rows_labelled,
            oob.rows_never_oob,
            oob.rows_missing_outcome,
        ];
        if !counts.iter().all(|&n| within(n)) {
            return bad("its out-of-bag summary counts more rows than were read");
        }
        match &oob.metrics {
            Some(Metrics::Classes(m)) => {
                let k = n_classes;
                let square = m.confusion.len() == k && m.confusion.iter().all(|r| r.len() == k);
                if !square
                    || total(m.confusion.iter().flatten().copied(), read).is_none()
                    || m.wrong_share_by_class.len() != k
                    || !within(m.rows)
                {
                    return bad("its out-of-bag confusion table does not fit its classes and rows");
                }
            }
            Some(Metrics::Values(m)) if !within(m.rows) => {
                return bad("its out-of-bag summary counts more rows than were read");
            }
            _ => {}
        }
        Ok(())
    }
}
