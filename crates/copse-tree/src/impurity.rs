//! Impurity measures and the split scores derived from them.
//!
//! Every score here is `-w * i(node)` up to terms that cancel between a parent and its
//! two children, so the weighted impurity decrease of a split is simply
//! `score(left) + score(right) - score(parent)` (Breiman, Friedman, Olshen & Stone 1984,
//! CART, section 4.1: the decrease `i(t) - pL i(tL) - pR i(tR)`, multiplied by the node
//! weight).
use serde::{Deserialize, Serialize};

/// Impurity measure for classification trees. Regression always uses variance.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize, Default)]
pub enum Impurity {
    /// Gini index `1 - sum p_k^2`.
    #[default]
    Gini,
    /// Shannon entropy `-sum p_k log2 p_k`, in bits.
    Entropy,
}

/// Gini index of weighted class counts: `1 - sum (c_k / w)^2`. Zero for an empty node.
///
/// # Example
/// ```
/// use copse_tree::impurity::gini;
///
/// assert_eq!(gini(&[5.0, 5.0]), 0.5);
/// assert_eq!(gini(&[4.0, 0.0]), 0.0);
/// ```
pub fn gini(counts: &[f64]) -> f64 {
    let w: f64 = counts.iter().sum();
    if w <= 0.0 {
        return 0.0;
    }
    1.0 - counts.iter().map(|c| (c / w) * (c / w)).sum::<f64>()
}

/// Entropy in bits of weighted class counts: `-sum p_k log2 p_k`. Zero for an empty node.
///
/// # Example
/// ```
/// use copse_tree::impurity::entropy;
///
/// assert_eq!(entropy(&[5.0, 5.0]), 1.0);
/// assert_eq!(entropy(&[1.0, 1.0, 1.0, 1.0]), 2.0);
/// ```
pub fn entropy(counts: &[f64]) -> f64 {
    let w: f64 = counts.iter().sum();
    if w <= 0.0 {
        return 0.0;
    }
    -counts
        .iter()
        .filter(|&&c| c > 0.0)
        .map(|c| (c / w) * (c / w).log2())
        .sum::<f64>()
}

impl Impurity {
    /// The impurity of weighted class counts under this measure.
    pub fn of(self, counts: &[f64]) -> f64 {
        match self {
            Impurity::Gini => gini(counts),
            Impurity::Entropy => entropy(counts),
        }
    }

    /// Split score of weighted class counts: `-w * i` up to terms that cancel.
    /// Gini: `-w G = sum c^2 / w - w`, and `w` cancels, so `sum c^2 / w`.
    /// Entropy: `-w H = sum c log2 c - w log2 w`.
    #[inline]
    pub(crate) fn score(self, counts: &[f64], w: f64) -> f64 {
        if w <= 0.0 {
            return 0.0;
        }
        match self {
            Impurity::Gini => counts.iter().map(|c| c * c).sum::<f64>() / w,
            Impurity::Entropy => {
                counts
                    .iter()
                    .filter(|&&c| c > 0.0)
                    .map(|c| c * c.log2())
                    .sum::<f64>()
                    - w * w.log2()
            }
        }
    }
}

/// Regression split score from weight `w` and weighted sum `s` of the outcome:
/// `-SSE = s^2 / w - sum w y^2`, and the last term cancels, so `s^2 / w`.
#[inline]
pub(crate) fn variance_score(w: f64, s: f64) -> f64 {
    if w <= 0.0 {
        0.0
    } else {
        s * s / w
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn maxima_are_the_textbook_values() {
        // Facts of the trade (common practice): Gini max (M-1)/M, entropy max log2 M.
        for m in 2..8usize {
            let even = vec![1.0; m];
            assert!((gini(&even) - (m as f64 - 1.0) / m as f64).abs() < 1e-12);
            assert!((entropy(&even) - (m as f64).log2()).abs() < 1e-12);
        }
        assert_eq!(gini(&[5.0, 0.0]), 0.0);
        assert_eq!(entropy(&[0.0, 5.0]), 0.0);
    }

    #[test]
    fn scores_give_the_weighted_decrease() {
        let parent = [9.0, 5.0];
        let (l, r) = ([6.0, 1.0], [3.0, 4.0]);
        for imp in [Impurity::Gini, Impurity::Entropy] {
            let direct = 14.0 * imp.of(&parent) - 7.0 * imp.of(&l) - 7.0 * imp.of(&r);
            let via = imp.score(&l, 7.0) + imp.score(&r, 7.0) - imp.score(&parent, 14.0);
            assert!((direct - via).abs() < 1e-12, "{imp:?}: {direct} vs {via}");
        }
    }
}
