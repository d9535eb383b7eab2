//! What a model without skill scores, printed beside every figure: always the most
//! common class, or always the training mean.
use serde::{Deserialize, Serialize};

/// The no-skill figures for classes.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ClassBaseline {
    /// The most common class (index in model order).
    pub most_common: usize,
    /// Error of always predicting it: 1 - its share.
    pub error: f64,
    /// Brier score (all-class form, 0 best and 2 worst) of always forecasting the
    /// class shares themselves: 1 - Σ share².
    pub brier: f64,
}

/// No-skill figures from the class counts of the judged rows (ties for most common go
/// to the first class). `None` when there is no row.
///
/// # Example
/// ```
/// let b = copse_forest::decision::class_baseline(&[90, 10]).expect("rows");
/// assert!((b.error - 0.10).abs() < 1e-12 && (b.brier - 0.18).abs() < 1e-12);
/// ```
pub fn class_baseline(counts: &[u64]) -> Option<ClassBaseline> {
    let total: u64 = counts.iter().sum();
    if total == 0 {
        return None;
    }
    let (most_common, &top) = counts
        .iter()
        .enumerate()
        .max_by(|a, b| a.1.cmp(b.1).then(b.0.cmp(&a.0)))?;
    let t = total as f64;
    Some(ClassBaseline {
        most_common,
        error: 1.0 - top as f64 / t,
        brier: 1.0 - counts.iter().map(|&c| (c as f64 / t).powi(2)).sum::<f64>(),
    })
}

/// The no-skill figures for numbers.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ValueBaseline {
    /// The value predicted for every row.
    pub mean: f64,
    /// Root mean squared error of predicting it.
    pub rmse: f64,
    /// Mean absolute error of predicting it.
    pub mae: f64,
}

/// No-skill figures for `truth` when every row is predicted `mean` (the training mean,
/// or the judged rows' own mean). `None` without a finite outcome.
pub fn value_baseline(truth: &[f64], mean: f64) -> Option<ValueBaseline> {
    let known: Vec<f64> = truth.iter().copied().filter(|y| y.is_finite()).collect();
    if known.is_empty() {
        return None;
    }
    let n = known.len() as f64;
    Some(ValueBaseline {
        mean,
        rmse: (known.iter().map(|y| (y - mean).powi(2)).sum::<f64>() / n).sqrt(),
        mae: known.iter().map(|y| (y - mean).abs()).sum::<f64>() / n,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Common practice: the base-rate Brier score of K equal classes is 1 - 1/K, and
    /// ties for the most common class go to the first.
    #[test]
    fn equal_classes_give_the_textbook_baseline() {
        let b = class_baseline(&[5, 5, 5, 5]).expect("rows");
        assert_eq!(b.most_common, 0);
        assert!((b.brier - 0.75).abs() < 1e-12 && (b.error - 0.75).abs() < 1e-12);
        let v = value_baseline(&[1.0, 3.0, f64::NAN], 2.0).expect("values");
        assert_eq!((v.rmse, v.mae), (1.0, 1.0));
    }
}
