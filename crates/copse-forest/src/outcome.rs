//! The outcome a forest models, owned: class codes with their labels, or real values.
use crate::error::{Error, ErrorKind, Result};
use copse_tree::outcome::MISSING_CLASS;
use copse_tree::OutcomeView;
use std::cmp::Ordering;

/// Class code that marks a missing outcome.
pub const MISSING: u32 = MISSING_CLASS;

/// Natural order of labels: finite numbers by value first, then text in byte order.
/// Both the engine ([`Outcome::from_labels`]) and the data layer list classes and
/// categories in this order, so codes never depend on row order.
///
/// # Example
/// ```
/// let mut v = vec!["10", "b", "2", "a", "1.5"];
/// v.sort_by(|a, b| copse_forest::natural_order(a, b));
/// assert_eq!(v, ["1.5", "2", "10", "a", "b"]);
/// ```
pub fn natural_order(a: &str, b: &str) -> Ordering {
    let number = |s: &str| s.parse::<f64>().ok().filter(|v| v.is_finite());
    match (number(a), number(b)) {
        (Some(x), Some(y)) => x.total_cmp(&y).then_with(|| a.cmp(b)),
        (Some(_), None) => Ordering::Less,
        (None, Some(_)) => Ordering::Greater,
        (None, None) => a.cmp(b),
    }
}

/// The outcome, one entry per row.
#[derive(Debug, Clone, PartialEq)]
pub enum Outcome {
    /// Classification: a code per row indexing `labels` ([`MISSING`] when unknown).
    /// The order of `labels` becomes the model's class order.
    Classes {
        /// One code per row.
        codes: Vec<u32>,
        /// Class labels, in code order; labels must be distinct.
        labels: Vec<String>,
    },
    /// Regression: one value per row; NaN when unknown.
    Values(Vec<f64>),
}

impl Outcome {
    /// Class outcome from one optional label per row; the classes are the distinct
    /// labels in [`natural_order`] (numbers by value, then text), the same order the
    /// data layer gives a class column read from a file, so the class order does not
    /// depend on row order or on how the labels arrived.
    pub fn from_labels<I, S>(labels: I) -> Outcome
    where
        I: IntoIterator<Item = Option<S>>,
        S: AsRef<str>,
    {
        let raw: Vec<Option<String>> = labels
            .into_iter()
            .map(|l| l.map(|s| s.as_ref().to_string()))
            .collect();
        let mut classes: Vec<String> = raw.iter().flatten().cloned().collect();
        classes.sort_by(|a, b| natural_order(a, b));
        classes.dedup();
        let codes = raw
            .iter()
            .map(|l| match l {
                Some(s) => classes
                    .binary_search_by(|c| natural_order(c, s))
                    .map_or(MISSING, |k| k as u32),
                None => MISSING,
            })
            .collect();
        Outcome::Classes {
            codes,
            labels: classes,
        }
    }

    /// Number of rows.
    pub fn len(&self) -> usize {
        match self {
            Outcome::Classes { codes, .. } => codes.len(),
            Outcome::Values(v) => v.len(),
        }
    }

    /// True when there are no rows.
    pub fn is_empty(&self) -> bool {
        self.len() == 0
    }

    /// True for a class outcome.
    pub fn is_classes(&self) -> bool {
        matches!(self, Outcome::Classes { .. })
    }

    /// True when row `i`'s outcome is missing.
    pub fn is_missing(&self, i: usize) -> bool {
        match self {
            Outcome::Classes { codes, .. } => codes[i] == MISSING,
            Outcome::Values(v) => v[i].is_nan(),
        }
    }

    /// Number of rows whose outcome is known.
    pub fn n_labelled(&self) -> usize {
        (0..self.len()).filter(|&i| !self.is_missing(i)).count()
    }

    /// Checks codes are in range, labels distinct and values finite or NaN.
    ///
    /// # Errors
    /// `InvalidSetting` for duplicate labels or no classes, `OutcomeMismatch` for a
    /// code out of range, `BadValue` for an infinite value.
    pub fn validate(&self) -> Result<()> {
        match self {
            Outcome::Classes { codes, labels } => {
                if labels.is_empty() {
                    return Err(Error::new(
                        ErrorKind::InvalidSetting,
                        "a class outcome needs at least one class label",
                    ));
                }
                let mut sorted: Vec<&String> = labels.iter().collect();
                sorted.sort();
                if let Some(w) = sorted.windows(2).find(|w| w[0] == w[1]) {
                    return Err(Error::new(
                        ErrorKind::InvalidSetting,
                        format!(
                            "class label '{}' is listed twice; labels must be distinct",
                            w[0]
                        ),
                    ));
                }
                if let Some((i, c)) = codes
                    .iter()
                    .enumerate()
                    .find(|(_, &c)| c != MISSING && c as usize >= labels.len())
                {
                    return Err(Error::new(
                        ErrorKind::OutcomeMismatch,
                        format!(
                            "row {i}: class code {c} is not below the number of labels {}",
                            labels.len()
                        ),
                    ));
                }
                Ok(())
            }
            Outcome::Values(v) => match v.iter().position(|x| x.is_infinite()) {
                Some(i) => Err(Error::new(
                    ErrorKind::BadValue,
                    format!(
                        "row {i}: the outcome is infinite; use a finite number or leave it empty"
                    ),
                )),
                None => Ok(()),
            },
        }
    }

    /// The borrowed view the tree core grows on.
    pub(crate) fn view(&self) -> Result<OutcomeView<'_>> {
        Ok(match self {
            Outcome::Classes { codes, labels } => OutcomeView::classes(codes, labels.len())?,
            Outcome::Values(v) => OutcomeView::values(v)?,
        })
    }
}
