//! Catch by rank: with budget to inspect only the top rows by score, how many of the
//! positive class are among them.
use super::interval::{wilson, Interval};
use serde::{Deserialize, Serialize};

/// The top shares every catch table reports: 1, 2, 5, 10, 20 and 50% of the rows.
pub const STANDARD_TOP_SHARES: [f64; 6] = [0.01, 0.02, 0.05, 0.10, 0.20, 0.50];

/// One row of a catch table.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct CatchPoint {
    /// Rows inspected, from the top by score.
    pub top_rows: usize,
    /// Those rows as a share of all scored rows.
    pub top_share: f64,
    /// Positive rows among them.
    pub caught: usize,
    /// Caught as a share of all positive rows (the recall at this depth).
    pub caught_share: f64,
    /// 95% Wilson interval of `caught_share`.
    pub caught_interval: Option<Interval>,
    /// How many times better than inspecting rows at random: `caught_share /
    /// top_share` (the lift).
    pub lift: f64,
}

/// A catch table.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct CatchByRank {
    /// Rows with a score.
    pub rows: usize,
    /// Positive rows among them.
    pub positives: usize,
    /// One point per requested depth, shallowest first.
    pub points: Vec<CatchPoint>,
}

/// The share of positive rows caught in the top `shares` of rows by score (each share
/// rounded up to whole rows), and in the top `budget` rows when given. Rows are ranked
/// by score, highest first; rows with equal scores keep their input order, so a tie
/// at the edge of a depth is settled by row order (stated because an inspector takes
/// whole rows). `None` when no row has a score or no row is positive.
///
/// # Example
/// ```
/// use copse_forest::decision::catch_by_rank;
/// let scores = [0.9, 0.1, 0.8, 0.2, 0.3];
/// let positive = [true, false, false, true, false];
/// let t = catch_by_rank(&scores, &positive, &[0.2, 0.4], None).expect("positives");
/// assert_eq!((t.points[0].top_rows, t.points[0].caught), (1, 1)); // 0.9 is positive
/// assert_eq!((t.points[1].top_rows, t.points[1].caught), (2, 1)); // then 0.8 is not
/// ```
pub fn catch_by_rank(
    scores: &[f64],
    positive: &[bool],
    shares: &[f64],
    budget: Option<usize>,
) -> Option<CatchByRank> {
    let mut rows = super::scored(scores, positive);
    let n = rows.len();
    let positives = rows.iter().filter(|r| r.1).count();
    if n == 0 || positives == 0 {
        return None;
    }
    // Stable sort: equal scores keep input order.
    rows.sort_by(|a, b| b.0.total_cmp(&a.0));
    let mut caught_by_depth = Vec::with_capacity(n + 1);
    caught_by_depth.push(0usize);
    for r in &rows {
        let last = caught_by_depth[caught_by_depth.len() - 1];
        caught_by_depth.push(last + usize::from(r.1));
    }
    let point = |top: usize| {
        let top = top.clamp(1, n);
        let caught = caught_by_depth[top];
        let caught_share = caught as f64 / positives as f64;
        let top_share = top as f64 / n as f64;
        CatchPoint {
            top_rows: top,
            top_share,
            caught,
            caught_share,
            caught_interval: wilson(caught, positives),
            lift: caught_share / top_share,
        }
    };
    let mut points: Vec<CatchPoint> = shares
        .iter()
        .map(|&s| point((s * n as f64).ceil() as usize))
        .collect();
    if let Some(b) = budget {
        points.push(point(b));
        points.sort_by_key(|p| p.top_rows);
        points.dedup_by_key(|p| p.top_rows);
    }
    Some(CatchByRank {
        rows: n,
        positives,
        points,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    /// By hand: scores ranked 0.9 (pos), 0.8, 0.7 (pos), 0.7, 0.1 (pos); the 0.7 tie
    /// keeps input order (the positive came first). Top 40% = 2 rows: 1 of 3 caught;
    /// top 60% = 3 rows: 2 of 3; a budget of 5 rows: all 3, lift 1.
    #[test]
    fn catch_counts_match_a_hand_ranking() {
        let scores = [0.7, 0.9, 0.1, 0.8, 0.7];
        let positive = [true, true, true, false, false];
        let t = catch_by_rank(&scores, &positive, &[0.4, 0.6], Some(5)).expect("positives");
        let got: Vec<(usize, usize)> = t.points.iter().map(|p| (p.top_rows, p.caught)).collect();
        assert_eq!(got, vec![(2, 1), (3, 2), (5, 3)]);
        assert_eq!(t.points[2].lift, 1.0);
        assert!((t.points[1].lift - (2.0 / 3.0) / 0.6).abs() < 1e-12);
    }

    #[test]
    fn no_positive_rows_give_no_table() {
        assert!(catch_by_rank(&[0.5, 0.4], &[false, false], &[0.5], None).is_none());
    }
}
