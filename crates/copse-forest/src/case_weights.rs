//! Case weights and row groups given to training ([`crate::TrainOptions`]): their
//! checks, and what a model card records of them.
//!
//! A case weight counts cases: a row of weight 3 stands for three identical rows, so
//! each tree draws as many cases as the weights add up to (rounded), each draw taking
//! row `i` with chance `w_i / sum(w)`. Drawing in proportion to
//! the weights, rather than drawing rows evenly and multiplying their counts by the
//! weights, keeps a tree's case weights whole numbers of draws: the tree core's rules
//! (the smallest leaf counted in draws, the two-class engine's integer counts) work as
//! for unweighted data, and whole-number weights give trees distributed exactly as
//! trees grown on the rows repeated. Weights that are not counts (lengths, exposures)
//! should be scaled to average about 1.
//!
//! A row group is a set of rows that are not independent cases (visits of one
//! patient, inspections of one segment): resampling then draws whole groups with
//! replacement (a cluster bootstrap), and a row is out of bag only for trees that drew
//! no row of its group.
use crate::error::{Error, ErrorKind, Result};
use crate::outcome::Outcome;
use serde::{Deserialize, Serialize};

/// Largest sum of case weights training accepts: each tree draws that many cases.
pub const MAX_WEIGHT_TOTAL: f64 = 1e9;

/// What a model card records of the case weights a model was trained with.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct WeightsRecord {
    /// The column they were read from (`weights` when given as an array).
    pub column: String,
    /// Sum of the weights of the rows with a known outcome.
    pub total: f64,
    /// Rows with a known outcome and weight 0 (never drawn, measured with weight 0).
    pub zero_rows: usize,
}

/// What a model card records of the row groups a model was trained with.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct GroupsRecord {
    /// The column they were read from (`group` when given as an array).
    pub column: String,
    /// Groups with at least one row with a known outcome.
    pub groups: usize,
    /// Rows with a known outcome in the smallest group.
    pub smallest: usize,
    /// Rows with a known outcome in the largest group.
    pub largest: usize,
}

/// Checks case weights against `outcome`: one per row, finite and not negative on
/// every row with a known outcome, not all zero. `Ok(None)` when there are none or
/// they are all exactly 1 (which is no weighting at all, so the model is the same
/// as without them, byte for byte); otherwise the weights and their record.
pub(crate) fn checked_weights<'a>(
    weights: Option<&'a [f64]>,
    outcome: &Outcome,
) -> Result<Option<(&'a [f64], WeightsRecord)>> {
    let Some(w) = weights else {
        return Ok(None);
    };
    if w.len() != outcome.len() {
        return Err(Error::new(
            ErrorKind::LengthMismatch,
            format!(
                "{} case weights for {} rows; give one weight per row",
                w.len(),
                outcome.len()
            ),
        ));
    }
    let labelled = || (0..w.len()).filter(|&i| !outcome.is_missing(i));
    if let Some(i) = labelled().find(|&i| !(w[i].is_finite() && w[i] >= 0.0)) {
        return Err(Error::new(
            ErrorKind::BadValue,
            format!(
                "the case weight of row {} is {}; weights must be finite numbers of 0 or more",
                i + 1,
                w[i]
            ),
        ));
    }
    if labelled().all(|i| w[i] == 1.0) {
        return Ok(None);
    }
    let total: f64 = labelled().map(|i| w[i]).sum();
    if total <= 0.0 {
        return Err(Error::new(
            ErrorKind::NoTargets,
            "every row with a known outcome has case weight 0; nothing can be learned",
        ));
    }
    if total > MAX_WEIGHT_TOTAL {
        return Err(Error::new(
            ErrorKind::InvalidSetting,
            format!(
                "the case weights add up to {total:e}, and each tree draws that many cases; \
                 weights count cases, so scale them down (to average about 1 unless they are \
                 counts)"
            ),
        ));
    }
    let zero_rows = labelled().filter(|&i| w[i] == 0.0).count();
    Ok(Some((
        w,
        WeightsRecord {
            column: "weights".to_string(),
            total,
            zero_rows,
        },
    )))
}

/// The rows with a known outcome of each group, in order of group number, empty
/// groups left out; with their record. `Ok(None)` without groups.
///
/// # Errors
/// `LengthMismatch` for a wrong length; `NoTargets` with fewer than two groups.
pub(crate) fn checked_groups(
    groups: Option<&[u32]>,
    outcome: &Outcome,
) -> Result<Option<(Vec<Vec<u32>>, GroupsRecord)>> {
    let Some(g) = groups else {
        return Ok(None);
    };
    if g.len() != outcome.len() {
        return Err(Error::new(
            ErrorKind::LengthMismatch,
            format!(
                "{} group numbers for {} rows; give one per row",
                g.len(),
                outcome.len()
            ),
        ));
    }
    let mut order: Vec<u32> = (0..g.len() as u32)
        .filter(|&i| !outcome.is_missing(i as usize))
        .collect();
    order.sort_by_key(|&i| (g[i as usize], i));
    let mut clusters: Vec<Vec<u32>> = Vec::new();
    let mut last = None;
    for i in order {
        if last != Some(g[i as usize]) {
            clusters.push(Vec::new());
            last = Some(g[i as usize]);
        }
        if let Some(c) = clusters.last_mut() {
            c.push(i);
        }
    }
    if clusters.len() < 2 {
        return Err(Error::new(
            ErrorKind::NoTargets,
            format!(
                "{} of rows with a known outcome; drawing whole groups needs at least two",
                if clusters.is_empty() {
                    "no group"
                } else {
                    "a single group"
                }
            ),
        ));
    }
    let record = GroupsRecord {
        column: "group".to_string(),
        groups: clusters.len(),
        smallest: clusters.iter().map(Vec::len).min().unwrap_or(0),
        largest: clusters.iter().map(Vec::len).max().unwrap_or(0),
    };
    Ok(Some((clusters, record)))
}

/// Cross-validation folds of the stability report's single tree: the fold of each
/// position of `order`: positions `f, f + folds, ...` form fold `f`;
/// with `groups`, the groups in order of first appearance do, so a fold holds whole
/// groups.
pub(crate) fn folds_of(
    order: &[usize],
    groups: Option<&[u32]>,
    folds: usize,
) -> Result<Vec<usize>> {
    let Some(g) = groups else {
        return Ok((0..order.len()).map(|pos| pos % folds).collect());
    };
    let mut rank = std::collections::HashMap::new();
    let fold_of = order
        .iter()
        .map(|&i| {
            let next = rank.len();
            *rank.entry(g[i]).or_insert(next) % folds
        })
        .collect();
    if rank.len() < folds {
        return Err(Error::new(
            ErrorKind::InvalidSetting,
            format!(
                "{folds} folds of whole groups need at least {folds} groups; the rows with an \
             outcome form {}",
                rank.len()
            ),
        ));
    }
    Ok(fold_of)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn unit_weights_are_no_weights_and_bad_ones_are_named() {
        let outcome = Outcome::Values(vec![1.0, 2.0, f64::NAN, 4.0]);
        let ones = [1.0, 1.0, -5.0, 1.0];
        // The row without an outcome is never drawn, so its weight is not looked at.
        assert!(checked_weights(Some(&ones), &outcome).unwrap().is_none());
        let bad = [1.0, -0.5, 1.0, 1.0];
        let e = checked_weights(Some(&bad), &outcome).unwrap_err();
        assert_eq!(e.kind(), ErrorKind::BadValue);
        assert!(e.message().contains("row 2"), "{}", e.message());
        let nan = [1.0, 1.0, 1.0, f64::NAN];
        assert!(checked_weights(Some(&nan), &outcome).is_err());
        let zero = [0.0, 0.0, 1.0, 0.0];
        assert_eq!(
            checked_weights(Some(&zero), &outcome).unwrap_err().kind(),
            ErrorKind::NoTargets
        );
        let some = [2.0, 0.0, 1.0, 1.5];
        let (_, r) = checked_weights(Some(&some), &outcome).unwrap().unwrap();
        assert_eq!((r.total, r.zero_rows), (3.5, 1));
    }

    #[test]
    fn groups_are_counted_over_rows_with_an_outcome() {
        let outcome = Outcome::Values(vec![1.0, 2.0, f64::NAN, 4.0, 5.0]);
        let (clusters, r) = checked_groups(Some(&[7, 3, 9, 7, 7]), &outcome)
            .unwrap()
            .unwrap();
        assert_eq!(clusters, vec![vec![1], vec![0, 3, 4]]);
        assert_eq!((r.groups, r.smallest, r.largest), (2, 1, 3));
        assert!(checked_groups(Some(&[1, 1, 2, 1, 1]), &outcome).is_err());
    }
}
