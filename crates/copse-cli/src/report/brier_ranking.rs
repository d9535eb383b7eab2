//! Importance for classes led by a measure that sees probabilities: inputs ranked by
//! the rise in Brier score when shuffled, with the rise in misclassification beside
//! each. With a rare class almost every row is predicted as the common class whatever
//! one input says, so the misclassification ranking is nearly all zeros while the
//! probabilities still move; the Brier score sees that.
use crate::numbers::{column_decimals, signed};
use copse_forest::PermutationImportance;
use std::fmt::Write;

/// The Brier-led table of `imp`, or `None` without a Brier ranking (numbers).
pub fn brier_led_table(imp: &PermutationImportance) -> Option<String> {
    let brier = imp.brier.as_ref()?;
    let err = &imp.error;
    let ranked = brier.ranked();
    let w = ranked
        .iter()
        .map(|f| f.name.len())
        .max()
        .unwrap_or(5)
        .max(5);
    let top = |v: &[f64]| v.iter().copied().fold(0.0f64, f64::max);
    let d_b = column_decimals(top(&brier
        .features
        .iter()
        .map(|f| f.mean)
        .collect::<Vec<_>>()));
    let d_e = column_decimals(top(&err
        .features
        .iter()
        .map(|f| f.mean)
        .collect::<Vec<_>>()));
    let top_b = ranked.first().map_or(0.0, |f| f.mean);
    let mut out = String::new();
    let _ = writeln!(
        out,
        "  {:>3}  {:<w$}  {:>11}  {:>9}  {:>13}  {:>6}",
        "#", "input", "Brier rise", "± s.e.", "misclass rise", "(rank)"
    );
    for f in ranked {
        let e = err.features.get(f.feature);
        let se = f
            .std_error
            .map_or("-".to_string(), |s| format!("{s:.d_b$}"));
        let bar = if top_b > 0.0 && f.mean > 0.0 {
            "█".repeat(((f.mean / top_b) * 20.0).round() as usize)
        } else {
            String::new()
        };
        let _ = writeln!(
            out,
            "  {:>3}  {:<w$}  {:>11}  {:>9}  {:>13}  {:>6}  {bar}",
            f.rank,
            f.name,
            signed(f.mean, d_b),
            se,
            e.map_or("-".to_string(), |e| signed(e.mean, d_e)),
            e.map_or("-".to_string(), |e| format!("({})", e.rank)),
        );
    }
    Some(out)
}

#[cfg(test)]
mod tests {
    use super::*;
    use copse_forest::{FeatureImportance, Importance, ImportanceMeasure, ImportanceMethod};

    fn table(measure: ImportanceMeasure, means: &[f64]) -> Importance {
        let mut order: Vec<usize> = (0..means.len()).collect();
        order.sort_by(|&a, &b| means[b].total_cmp(&means[a]));
        Importance {
            method: ImportanceMethod::HeldOutPermutation,
            measure,
            replicates: 3,
            features: means
                .iter()
                .enumerate()
                .map(|(j, &m)| FeatureImportance {
                    feature: j,
                    name: format!("x{j}"),
                    mean: m,
                    std_error: Some(0.0001),
                    rank: order.iter().position(|&o| o == j).unwrap_or(0) + 1,
                })
                .collect(),
        }
    }

    /// The rare-class case: misclassification cannot tell the inputs apart, the Brier
    /// rise can, and the table follows the Brier rise.
    #[test]
    fn the_table_follows_the_brier_rise() {
        let imp = PermutationImportance {
            error: table(ImportanceMeasure::Misclassification, &[0.0, 0.0, -0.0003]),
            brier: Some(table(ImportanceMeasure::Brier, &[0.0001, 0.0040, 0.0013])),
        };
        let t = brier_led_table(&imp).unwrap();
        let order: Vec<&str> = t
            .lines()
            .skip(1)
            .filter_map(|l| l.split_whitespace().nth(1))
            .collect();
        assert_eq!(order, ["x1", "x2", "x0"]);
    }
}
