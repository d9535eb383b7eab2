//! Summaries of a stability study over its seeds, per kind of model.
//!
//! Per kind: the mean, sample standard deviation, smallest and
//! largest error; the prediction change, averaged over all pairs of seeds (classes:
//! the share of rows whose held-out predicted class differs; values: the root mean
//! squared difference of the held-out predictions divided by the standard deviation of
//! the outcome); and the mean over pairs of seeds of Kendall's tau-b between the
//! importance values (Kendall 1945, "The treatment of ties in ranking problems",
//! Biometrika 33:239-251), 1 meaning the same order.
use super::{KindStability, ModelKind, Run};
use crate::outcome::Outcome;

/// Misclassification rate or mean squared error of held-out predictions over `rows`.
pub(super) fn held_out_error(outcome: &Outcome, held_out: &[f64], rows: &[usize]) -> f64 {
    let (mut sum, mut count) = (0.0, 0usize);
    for &i in rows {
        let h = held_out[i];
        if h.is_nan() {
            continue;
        }
        count += 1;
        sum += match outcome {
            Outcome::Classes { codes, .. } => f64::from(u8::from(h as u32 != codes[i])),
            Outcome::Values(y) => (h - y[i]) * (h - y[i]),
        };
    }
    if count == 0 {
        f64::NAN
    } else {
        sum / count as f64
    }
}

/// Standard deviation of the known values (n - 1 denominator); 1 when it is 0.
pub(super) fn outcome_sd(outcome: &Outcome, rows: &[usize]) -> f64 {
    let Outcome::Values(y) = outcome else {
        return 1.0;
    };
    let n = rows.len() as f64;
    let mean = rows.iter().map(|&i| y[i]).sum::<f64>() / n;
    let ss = rows.iter().map(|&i| (y[i] - mean).powi(2)).sum::<f64>();
    let sd = (ss / (n - 1.0).max(1.0)).sqrt();
    if sd > 0.0 {
        sd
    } else {
        1.0
    }
}

/// The summary of one kind's `runs` (one per seed) over the labelled `rows`;
/// `scale` divides each value prediction change (the outcome's standard deviation).
pub(super) fn summarise(
    kind: ModelKind,
    runs: &[Run],
    rows: &[usize],
    classes: bool,
    scale: f64,
) -> KindStability {
    let errors: Vec<f64> = runs.iter().map(|r| r.error).collect();
    let s = errors.len() as f64;
    let error_mean = errors.iter().sum::<f64>() / s;
    let error_sd =
        (errors.iter().map(|e| (e - error_mean).powi(2)).sum::<f64>() / (s - 1.0).max(1.0)).sqrt();
    let error_min = errors.iter().copied().fold(f64::INFINITY, f64::min);
    let error_max = errors.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    let (mut change_sum, mut change_pairs) = (0.0, 0usize);
    let (mut tau_sum, mut tau_pairs) = (0.0, 0usize);
    for a in 0..runs.len() {
        for b in a + 1..runs.len() {
            if let Some(c) = prediction_change(&runs[a].held_out, &runs[b].held_out, rows, classes)
            {
                change_sum += c / scale;
                change_pairs += 1;
            }
            if let Some(t) = kendall_tau_b(&runs[a].importance, &runs[b].importance) {
                tau_sum += t;
                tau_pairs += 1;
            }
        }
    }
    KindStability {
        kind,
        errors,
        error_mean,
        error_sd,
        error_min,
        error_max,
        prediction_change: (change_pairs > 0).then(|| change_sum / change_pairs as f64),
        rank_tau: (tau_pairs > 0).then(|| tau_sum / tau_pairs as f64),
        importance: runs.iter().map(|r| r.importance.clone()).collect(),
    }
}

/// Share of `rows` whose class differs (classes), or the root mean squared difference
/// (values), over rows predicted in both; `None` when there is no such row.
fn prediction_change(a: &[f64], b: &[f64], rows: &[usize], classes: bool) -> Option<f64> {
    let (mut sum, mut count) = (0.0, 0usize);
    for &i in rows {
        let (u, v) = (a[i], b[i]);
        if u.is_nan() || v.is_nan() {
            continue;
        }
        count += 1;
        sum += if classes {
            f64::from(u8::from(u != v))
        } else {
            (u - v) * (u - v)
        };
    }
    (count > 0).then(|| {
        let m = sum / count as f64;
        if classes {
            m
        } else {
            m.sqrt()
        }
    })
}

/// Kendall's tau-b between two equally long vectors: `(C - D) / sqrt((P - Tx)(P - Ty))`
/// with `C`, `D` the concordant and discordant pairs, `P` all pairs, `Tx`, `Ty` the
/// pairs tied in each vector. `None` when either vector is all ties (or shorter than 2).
pub fn kendall_tau_b(x: &[f64], y: &[f64]) -> Option<f64> {
    let n = x.len().min(y.len());
    let (mut conc, mut disc, mut tx, mut ty) = (0i64, 0i64, 0i64, 0i64);
    for i in 0..n {
        for j in i + 1..n {
            let dx = x[i].total_cmp(&x[j]) as i64;
            let dy = y[i].total_cmp(&y[j]) as i64;
            if dx == 0 {
                tx += 1;
            }
            if dy == 0 {
                ty += 1;
            }
            match dx * dy {
                1 => conc += 1,
                -1 => disc += 1,
                _ => {}
            }
        }
    }
    let pairs = (n * n.saturating_sub(1) / 2) as i64;
    let denom = ((pairs - tx) as f64 * (pairs - ty) as f64).sqrt();
    (denom > 0.0).then(|| (conc - disc) as f64 / denom)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn kendall_tau_b_on_small_cases() {
        // Computed by hand from the definition.
        assert_eq!(kendall_tau_b(&[1.0, 2.0, 3.0], &[1.0, 2.0, 3.0]), Some(1.0));
        assert_eq!(
            kendall_tau_b(&[1.0, 2.0, 3.0], &[3.0, 2.0, 1.0]),
            Some(-1.0)
        );
        // x = (1,2,3,4), y = (1,3,2,4): C = 5, D = 1, no ties: 4/6.
        let t = kendall_tau_b(&[1.0, 2.0, 3.0, 4.0], &[1.0, 3.0, 2.0, 4.0]).expect("defined");
        assert!((t - 4.0 / 6.0).abs() < 1e-12);
        // x = (1,1,2), y = (1,2,3): P = 3, Tx = 1, C = 2, D = 0: 2 / sqrt(2 * 3).
        let t = kendall_tau_b(&[1.0, 1.0, 2.0], &[1.0, 2.0, 3.0]).expect("defined");
        assert!((t - 2.0 / 6f64.sqrt()).abs() < 1e-12);
        assert_eq!(kendall_tau_b(&[1.0, 1.0], &[1.0, 2.0]), None);
    }
}
