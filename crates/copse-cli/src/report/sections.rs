//! The printed sections about a model that several reports share: the training data,
//! the settings, the out-of-bag check, and advice when a rare class is mostly missed.
use super::measures::{class_block, value_block};
use super::model::impurity_name;
use super::{line, Style};
use crate::numbers::{count, decimal_bytes, pct, pct_short, plain, sig, trim_num};
use copse_forest::{FeatureKind, FeaturesPerSplit, Forest as Model, Metrics, Sampling, Task};
use std::fmt::Write;

/// Word for a sampling scheme.
pub fn sampling_words(s: &Sampling, balanced: bool) -> String {
    let base = match s {
        Sampling::Bootstrap => "bootstrap (n draws with replacement)".to_string(),
        Sampling::Subsample(f) => format!("subsample of {} without replacement", pct(*f)),
        Sampling::Whole => "every row in every tree (no out-of-bag rows)".to_string(),
    };
    if balanced {
        format!("{base}, same count from each class")
    } else {
        base
    }
}

/// The data section; `missing` gives each input's missing cells among the rows used,
/// when the training table is at hand (the model file does not keep them).
pub fn data_section(out: &mut String, st: Style, model: &Model, missing: Option<&[usize]>) {
    let t = model.card();
    let _ = writeln!(out, "{}", st.head("DATA"));
    line(out, "source", &t.source);
    let used = t.rows_read.saturating_sub(t.rows_without_outcome);
    line(
        out,
        "rows",
        &format!(
            "{} read, {used} used ({} without a target value)",
            t.rows_read, t.rows_without_outcome
        ),
    );
    match model.task() {
        Task::Classify => {
            line(
                out,
                "target",
                &format!(
                    "{} (classification, {} classes)",
                    t.target,
                    model.classes().len()
                ),
            );
            let total: u64 = t.class_counts.iter().sum::<u64>().max(1);
            let w = model.classes().iter().map(|c| c.len()).max().unwrap_or(0);
            for (c, n) in model.classes().iter().zip(&t.class_counts) {
                line(
                    out,
                    "",
                    &format!("  {c:<w$}  {n:>8}  {:>6}", pct(*n as f64 / total as f64)),
                );
            }
        }
        Task::Regress => {
            let range = t
                .value_range
                .map(|[lo, mean, hi]| {
                    format!(
                        ", from {} to {}, mean {}",
                        sig(lo, 4),
                        sig(hi, 4),
                        sig(mean, 4)
                    )
                })
                .unwrap_or_default();
            line(out, "target", &format!("{} (regression{range})", t.target));
        }
    }
    let n_cat = model.meta().iter().filter(|f| f.is_categorical()).count();
    let used = t.rows_read.saturating_sub(t.rows_without_outcome);
    line(
        out,
        "inputs",
        &format!(
            "{}: {} numeric, {n_cat} categorical{}",
            model.meta().len(),
            model.meta().len() - n_cat,
            if missing.is_some() {
                format!("; last column: missing cells of the {used} rows used")
            } else {
                String::new()
            }
        ),
    );
    let mut kinds = Vec::new();
    for (j, f) in model.meta().iter().enumerate().take(40) {
        let kind = match (&f.kind, model.bins().get(j)) {
            (FeatureKind::Categorical { levels }, _) => {
                format!("categorical, {} categories", levels.len())
            }
            (_, Some(b)) if b.n_bins > 0 => format!(
                "numeric, {} to {} in {} bins",
                plain(b.lo[0]),
                plain(b.hi[b.n_bins - 1]),
                b.n_bins
            ),
            _ => "numeric, no values".to_string(),
        };
        kinds.push((
            f.name.as_str(),
            kind,
            missing.and_then(|m| m.get(j).copied()),
        ));
    }
    let kw = kinds
        .iter()
        .map(|(_, k, _)| k.chars().count())
        .max()
        .unwrap_or(0);
    let nw = missing.map_or(1, |m| {
        m.iter().map(|n| n.to_string().len()).max().unwrap_or(1)
    });
    for (name, kind, gone) in kinds {
        match gone {
            Some(n) => line(
                out,
                "",
                &format!("  {name:<24}{kind:<kw$}  {n:>nw$} missing"),
            ),
            None => line(out, "", &format!("  {name:<24}{kind}")),
        }
    }
    if model.meta().len() > 40 {
        line(
            out,
            "",
            &format!("  ... and {} more", model.meta().len() - 40),
        );
    }
    if !t.ignored.is_empty() {
        line(out, "left out", &t.ignored.join(", "));
    }
    if let Some(w) = &t.weights {
        let zero = match w.zero_rows {
            0 => String::new(),
            z => format!("; {} of weight 0, never drawn", count(z, "row", "rows")),
        };
        line(
            out,
            "case weights",
            &format!(
                "'{}', adding up to {}{zero}; trees draw rows in proportion to them and every \
                 figure weighs rows by them",
                w.column,
                sig(w.total, 6)
            ),
        );
    }
    if let Some(g) = &t.groups {
        line(
            out,
            "row groups",
            &format!(
                "'{}': {} of {}; trees draw whole groups, and a row is judged out of bag \
                 only by trees that saw none of its group",
                g.column,
                count(g.groups, "group", "groups"),
                if g.smallest == g.largest {
                    format!("{} each", count(g.largest, "row", "rows"))
                } else {
                    format!("{} to {} rows", g.smallest, g.largest)
                }
            ),
        );
    }
    let _ = writeln!(out);
}

/// The settings section.
pub fn settings_section(out: &mut String, st: Style, model: &Model, threads: Option<usize>) {
    let f = model;
    let s = f.settings();
    let _ = writeln!(out, "{}", st.head("SETTINGS"));
    line(out, "trees", &s.trees.to_string());
    let p = f.n_features();
    let k = f.features_per_split();
    let classify = model.task() == Task::Classify;
    let kind = if k >= p {
        "every input: bagged trees".to_string()
    } else {
        match s.features_per_split {
            FeaturesPerSplit::Default if classify => {
                "square root of the inputs, the usual choice for classes".to_string()
            }
            FeaturesPerSplit::Default => {
                "a third of the inputs, the usual choice for numbers".to_string()
            }
            FeaturesPerSplit::Root => "square root of the inputs".to_string(),
            FeaturesPerSplit::Log => "log2 of the inputs".to_string(),
            rule @ FeaturesPerSplit::Share(_) => format!("{rule} of the inputs"),
            FeaturesPerSplit::Every | FeaturesPerSplit::Count(_) => "a fixed count".to_string(),
        }
    };
    let kind = if s.features_per_split.default_raised(p, classify) {
        format!("{kind}, raised to 2: one input per split chooses blindly")
    } else {
        kind
    };
    line(out, "inputs per split", &format!("{k} of {p} ({kind})"));
    line(
        out,
        "rows per tree",
        &sampling_words(&s.sampling, s.balanced),
    );
    let measure = match model.task() {
        Task::Classify => impurity_name(model),
        Task::Regress => format!("{} (squared error)", impurity_name(model)),
    };
    line(out, "split measure", &measure);
    if s.tree.cuts == copse_forest::CutChoice::Random {
        line(
            out,
            "cut points",
            "one drawn at random per input tried, the best of those kept (randomized cut points)",
        );
    }
    line(
        out,
        "depth limit",
        &s.tree
            .max_depth
            .map_or("none".to_string(), |d| d.to_string()),
    );
    let rows = if s.tree.min_leaf == 1.0 {
        "row"
    } else {
        "rows"
    };
    line(
        out,
        "smallest leaf",
        &format!(
            "{} {rows} (counted with their draws: a row drawn twice counts 2)",
            trim_num(s.tree.min_leaf, 3)
        ),
    );
    line(
        out,
        "numeric bins",
        &format!("at most {} per input", s.bins),
    );
    match model.pool_record() {
        // A pooled model's first partition's seed is not the seed of its trees.
        Some(_) => line(
            out,
            "seeds",
            "one per partition (listed with the partitions)",
        ),
        None => line(out, "seed", &s.seed.to_string()),
    }
    if let Some(draws) = f.draws() {
        line(
            out,
            "row draws kept",
            &format!(
                "yes, {} (for 'copse score --uncertainty')",
                decimal_bytes(draws.heap_bytes() as u64)
            ),
        );
    }
    if let Some(rows) = f.leaf_rows() {
        line(
            out,
            "leaf rows kept",
            &format!(
                "yes, {} (for 'copse score --interval')",
                decimal_bytes(rows.heap_bytes() as u64)
            ),
        );
    }
    if let Some(t) = threads {
        line(out, "threads", &t.to_string());
    }
    let _ = writeln!(out);
}

/// The out-of-bag section.
pub fn oob_section(out: &mut String, st: Style, model: &Model) {
    let f = model;
    if f.pool_record().is_some() {
        super::pooled::pooled_section(out, st, f);
        return;
    }
    let oob = f.oob();
    let _ = writeln!(
        out,
        "{}",
        st.head("OUT-OF-BAG CHECK (each row judged only by the trees that never saw it)")
    );
    match &oob.metrics {
        None => {
            let _ = writeln!(
                out,
                "  no row was left out of any tree, so there is no out-of-bag estimate;\n  \
                 use --sampling bootstrap or subsample:F, or check the model with 'copse evaluate'"
            );
            if f.settings().tree.cuts == copse_forest::CutChoice::Random {
                let _ = writeln!(
                    out,
                    "  (randomized cut points grow every tree on every row unless told otherwise;\n   \
                     'copse tune' judges them with bootstrap samples)"
                );
            }
        }
        Some(Metrics::Classes(m)) => {
            class_block(out, m, f.classes(), "rows judged");
            if oob.rows_never_oob > 0 {
                let _ = writeln!(
                    out,
                    "  ({} drawn by every tree and {} no out-of-bag prediction)",
                    count(oob.rows_never_oob, "row was", "rows were"),
                    if oob.rows_never_oob == 1 {
                        "has"
                    } else {
                        "have"
                    }
                );
            }
            let _ = writeln!(
                out,
                "  (a row's class probabilities are the mean of its trees' leaf class shares, a \
                 soft vote;\n   its class is the most probable one, ties going to the first in \
                 the list)"
            );
        }
        Some(Metrics::Values(m)) => {
            value_block(out, m, "rows judged");
            range_check(out, f);
        }
    }
    let _ = writeln!(out);
}

/// With kept leaf rows, how often training outcomes fell inside their out-of-bag range.
fn range_check(out: &mut String, model: &Model) {
    let Some(c) = model.leaf_rows().and_then(|r| r.oob_check()) else {
        return;
    };
    line(
        out,
        &format!("{} ranges", pct_short(c.level)),
        &format!(
            "{} of {} inside their out-of-bag range, mean width {}",
            pct(c.share_inside()),
            count(c.rows, "row", "rows"),
            sig(c.mean_width, 4)
        ),
    );
    let _ = writeln!(
        out,
        "  (a range runs from the {} to the {} quantile of the training outcomes sharing the\n   \
         row's leaves in the trees that left it out; coverage holds on average over rows, not\n   \
         for each row)",
        pct_short((1.0 - c.level) / 2.0),
        pct_short((1.0 + c.level) / 2.0)
    );
}

/// Advice when a rare class is mostly missed at the plain majority vote.
pub fn rare_class_advice(model: &Model) -> Option<String> {
    let Some(Metrics::Classes(m)) = &model.oob().metrics else {
        return None;
    };
    let total: u64 = model.card().class_counts.iter().sum();
    if total == 0 {
        return None;
    }
    for (c, label) in model.classes().iter().enumerate() {
        let share = model.card().class_counts.get(c).copied().unwrap_or(0) as f64 / total as f64;
        let err = m
            .wrong_share_by_class
            .get(c)
            .copied()
            .flatten()
            .unwrap_or(0.0);
        if share < 0.25 && err > 0.5 {
            return Some(format!(
                "  '{label}' is rare ({} of rows) and most of its rows are predicted as another class\n  \
                 when each row simply gets its most probable class. To find such rows, rank them by\n  \
                 prob_{label} from 'copse score' and inspect from the top, or retrain with --balanced.",
                pct(share)
            ));
        }
    }
    None
}
