//! The outcome a tree models, borrowed: class codes (classification) or real values
//! (regression). copse-forest owns the outcome (`Outcome`) and lends this view.
use crate::error::{Error, ErrorKind, Result};

/// Marker for a missing class code.
pub const MISSING_CLASS: u32 = u32::MAX;

/// Most classes a target may have. Split search keeps one histogram cell per bin and
/// class, and every leaf stores one probability per class, so the class count must stay
/// modest; beyond this a caller almost surely passed a wrong count.
pub const MAX_CLASSES: usize = 65_535;

/// The outcome, one entry per row. A missing outcome is [`MISSING_CLASS`] for classes
/// and NaN for values; such rows are left out of growing (the grower gives them no
/// weight), never guessed.
#[derive(Debug, Clone, Copy)]
pub enum OutcomeView<'a> {
    /// Class codes `0..n_classes`.
    Classes {
        /// One code per row.
        codes: &'a [u32],
        /// Number of classes.
        n_classes: usize,
    },
    /// Real values (regression).
    Values(&'a [f64]),
}

impl<'a> OutcomeView<'a> {
    /// Class codes in `0..n_classes` (or [`MISSING_CLASS`]).
    ///
    /// # Errors
    /// `InvalidSetting` when `n_classes` is 0, `TooLarge` above [`MAX_CLASSES`],
    /// `BadCategory` when a code is out of range.
    ///
    /// # Example
    /// ```
    /// use copse_tree::outcome::{OutcomeView, MISSING_CLASS};
    ///
    /// let codes = [0, 2, MISSING_CLASS, 1];
    /// let target = OutcomeView::classes(&codes, 3)?;
    /// assert_eq!(target.n_outputs(), 3);
    /// assert!(target.is_missing(2));
    /// assert!(OutcomeView::classes(&codes, 2).is_err()); // code 2 needs three classes
    /// # Ok::<(), copse_tree::Error>(())
    /// ```
    pub fn classes(codes: &'a [u32], n_classes: usize) -> Result<Self> {
        if n_classes == 0 {
            return Err(Error::new(
                ErrorKind::InvalidSetting,
                "a classification target needs at least one class",
            ));
        }
        if n_classes > MAX_CLASSES {
            return Err(Error::new(
                ErrorKind::TooLarge,
                format!("{n_classes} classes; at most {MAX_CLASSES} are supported"),
            ));
        }
        if let Some((i, c)) = codes
            .iter()
            .enumerate()
            .find(|(_, &c)| c != MISSING_CLASS && c as usize >= n_classes)
        {
            return Err(Error::new(
                ErrorKind::BadCategory,
                format!("row {i}: class code {c} is not below the number of classes {n_classes}"),
            ));
        }
        Ok(OutcomeView::Classes { codes, n_classes })
    }

    /// Real-valued target; NaN marks a missing value.
    ///
    /// # Errors
    /// `NonFinite` when a value is infinite.
    ///
    /// # Example
    /// ```
    /// use copse_tree::OutcomeView;
    ///
    /// let y = [1.5, f64::NAN, 3.0];
    /// let target = OutcomeView::values(&y)?;
    /// assert_eq!(target.n_outputs(), 1);
    /// assert!(target.is_missing(1));
    /// assert!(OutcomeView::values(&[f64::INFINITY]).is_err());
    /// # Ok::<(), copse_tree::Error>(())
    /// ```
    pub fn values(values: &'a [f64]) -> Result<Self> {
        if let Some(i) = values.iter().position(|v| v.is_infinite()) {
            return Err(Error::new(
                ErrorKind::NonFinite,
                format!(
                    "row {i}: the target value is infinite; use a finite number or leave it empty"
                ),
            ));
        }
        Ok(OutcomeView::Values(values))
    }

    /// Number of rows.
    pub fn len(&self) -> usize {
        match self {
            OutcomeView::Classes { codes, .. } => codes.len(),
            OutcomeView::Values(v) => v.len(),
        }
    }

    /// True when there are no rows.
    pub fn is_empty(&self) -> bool {
        self.len() == 0
    }

    /// Width of a leaf's output: number of classes, or 1 for regression.
    pub fn n_outputs(&self) -> usize {
        match self {
            OutcomeView::Classes { n_classes, .. } => *n_classes,
            OutcomeView::Values(_) => 1,
        }
    }

    /// True when row `i`'s outcome is missing.
    pub fn is_missing(&self, i: usize) -> bool {
        match self {
            OutcomeView::Classes { codes, .. } => codes[i] == MISSING_CLASS,
            OutcomeView::Values(v) => v[i].is_nan(),
        }
    }
}
