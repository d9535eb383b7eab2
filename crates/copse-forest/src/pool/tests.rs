//! The pieces of pooling that need no data set: the union of bin ranges and the
//! impurity importance pooled from per-model means and standard errors.
use super::*;
use crate::importance::{ImportanceMeasure, ImportanceMethod};

fn bins(r: &[(f64, f64)]) -> FeatureBins {
    FeatureBins {
        n_bins: r.len(),
        lo: r.iter().map(|x| x.0).collect(),
        hi: r.iter().map(|x| x.1).collect(),
        categorical: false,
    }
}

/// Ranges that overlap join; others stay apart, in order; the ends are the lowest
/// and highest of all.
#[test]
fn bins_join_where_ranges_overlap() {
    let a = bins(&[(1.0, 2.0), (5.0, 6.0)]);
    let b = bins(&[(0.5, 1.5), (3.0, 3.0), (5.5, 9.0)]);
    let u = union_bins(&[&a, &b]);
    assert_eq!(u.lo, vec![0.5, 3.0, 5.0]);
    assert_eq!(u.hi, vec![2.0, 3.0, 9.0]);
    assert_eq!(u.n_bins, 3);
    assert_eq!(union_bins(&[&bins(&[]), &bins(&[])]).n_bins, 0);
}

/// Importance pooled from two groups' means and standard errors equals the mean and
/// standard error over all replicates at once (the within/between decomposition of
/// the sum of squares).
#[test]
fn pooled_importance_is_that_of_all_trees() {
    let meta = vec![FeatureMeta::numeric("a"), FeatureMeta::numeric("b")];
    let reps: Vec<Vec<f64>> = (0..17)
        .map(|i| vec![(i as f64 * 0.37).sin().abs(), (i * i % 7) as f64 / 10.0])
        .collect();
    let imp = |r: &[Vec<f64>]| {
        Importance::from_replicates(
            ImportanceMethod::ImpurityDecrease,
            ImportanceMeasure::Gini,
            &meta,
            r,
        )
    };
    let all = imp(&reps);
    let (a, b, c) = (imp(&reps[..5]), imp(&reps[5..6]), imp(&reps[6..]));
    let pooled = pooled_importance(&[&a, &b, &c], &meta);
    assert_eq!(pooled.replicates, 17);
    for (p, w) in pooled.features.iter().zip(&all.features) {
        assert!((p.mean - w.mean).abs() < 1e-12, "{p:?} {w:?}");
        let (ps, ws) = (
            p.std_error.expect("the step succeeds"),
            w.std_error.expect("the step succeeds"),
        );
        assert!((ps - ws).abs() < 1e-12, "{ps} {ws}");
        assert_eq!(p.rank, w.rank);
    }
}
