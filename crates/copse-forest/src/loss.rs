//! Loss of a prediction against a known outcome, as the permutation importances
//! measure it: misclassification and Brier score for classes, squared error for values.
use crate::metrics::{brier_row, predicted_class};
use crate::outcome::Outcome;

/// Loss of predictions on a set of rows: (error, Brier), Brier 0 for regression.
#[derive(Debug, Clone, Copy, Default)]
pub(crate) struct Loss {
    pub(crate) error: f64,
    pub(crate) brier: f64,
}

/// Loss of one row's prediction `pred` against row `i` of `outcome` (which is known).
#[inline]
pub(crate) fn row_loss(outcome: &Outcome, i: usize, pred: &[f64]) -> Loss {
    match outcome {
        Outcome::Classes { codes, .. } => {
            let y = codes[i] as usize;
            Loss {
                error: f64::from(u8::from(predicted_class(pred) != y)),
                brier: brier_row(pred, y),
            }
        }
        Outcome::Values(v) => {
            let e = pred[0] - v[i];
            Loss {
                error: e * e,
                brier: 0.0,
            }
        }
    }
}
