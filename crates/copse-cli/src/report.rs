//! The printed reports, in copse's own layout: short capitalised section heads, aligned
//! label/value lines, a confusion table with the share wrong at the end of each row,
//! and an importance ranking with a bar per input. Every report ends with the caution
//! that a model supports, and does not replace, professional judgement.
use copse_forest::Forest as Model;
use copse_forest::Task;
use copse_forest::{
    mirrored_null_test, ClassMetrics, FeatureKind, Importance, Metrics, PermutationImportance,
    Sampling, Significance, SignificanceTest, ValueMetrics,
};
use std::fmt::Write;

/// The caution printed under every report.
pub const CAUTION: &str =
    "A model like this supports, and does not replace, engineering judgement, \
inspections, clinical or professional judgement and local regulations. Validate it on your own \
data before relying on it, do not use it as the sole basis for decisions about people or \
safety, check its errors for bias across the groups it affects, and defer to local codes and \
licensed professionals.";

/// Text styling: bold section heads when colour is allowed.
#[derive(Debug, Clone, Copy)]
pub struct Style {
    colour: bool,
}

impl Style {
    /// Plain or coloured.
    pub fn new(colour: bool) -> Self {
        Style { colour }
    }

    /// A heading, bold when colour is allowed.
    pub fn head(&self, text: &str) -> String {
        if self.colour {
            format!("\x1b[1m{text}\x1b[0m")
        } else {
            text.to_string()
        }
    }
}

/// A number to about `digits` significant digits, without exponent for everyday sizes.
pub fn sig(v: f64, digits: usize) -> String {
    if !v.is_finite() {
        return v.to_string();
    }
    if v == 0.0 {
        return "0".to_string();
    }
    let mag = v.abs().log10().floor() as i64;
    if !(-5..=12).contains(&mag) {
        return format!("{v:.*e}", digits.saturating_sub(1));
    }
    let decimals = (digits as i64 - 1 - mag).clamp(0, 12) as usize;
    format!("{v:.decimals$}")
}

/// A data value as written in a file: shortest form, rounded to six decimals.
pub fn plain(v: f64) -> String {
    format!("{}", (v * 1e6).round() / 1e6)
}

/// A share as a percentage with one decimal.
pub fn pct(v: f64) -> String {
    format!("{:.1}%", 100.0 * v)
}

/// Width of the label column in label/value lines.
pub const LABEL: usize = 24;

fn line(out: &mut String, label: &str, value: &str) {
    let _ = writeln!(out, "  {label:<LABEL$}{value}");
}

/// A number with at most `decimals` decimals and no trailing zeros.
pub fn trim_num(v: f64, decimals: usize) -> String {
    let s = format!("{v:.decimals$}");
    if s.contains('.') {
        s.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        s
    }
}

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

/// The data section.
pub fn data_section(out: &mut String, st: Style, model: &Model) {
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
    line(
        out,
        "inputs",
        &format!(
            "{}: {} numeric, {n_cat} categorical",
            model.meta().len(),
            model.meta().len() - n_cat
        ),
    );
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
        line(out, "", &format!("  {:<24}{kind}", f.name));
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
        let rule = model.card().features_rule.as_str();
        match rule {
            "auto" if classify => {
                "square root of the inputs, the usual choice for classes".to_string()
            }
            "auto" => "a third of the inputs, the usual choice for numbers".to_string(),
            "sqrt" => "square root of the inputs".to_string(),
            "log2" => "log2 of the inputs".to_string(),
            r if r.contains('.') => format!("fraction {r} of the inputs"),
            _ => "a fixed count".to_string(),
        }
    };
    line(out, "inputs per split", &format!("{k} of {p} ({kind})"));
    line(
        out,
        "rows per tree",
        &sampling_words(&s.sampling, s.balanced),
    );
    if model.task() == Task::Classify {
        line(
            out,
            "split measure",
            &format!("{:?}", s.tree.impurity).to_lowercase(),
        );
    } else {
        line(out, "split measure", "variance (squared error)");
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
        &format!("{} {rows}", trim_num(s.tree.min_leaf, 3)),
    );
    line(
        out,
        "numeric bins",
        &format!("at most {} per input", s.bins),
    );
    line(out, "seed", &s.seed.to_string());
    if let Some(draws) = f.draws() {
        line(
            out,
            "row draws kept",
            &format!(
                "yes, {} (for 'copse score --uncertainty')",
                bytes_words(draws.heap_bytes() as u64)
            ),
        );
    }
    if let Some(t) = threads {
        line(out, "threads", &t.to_string());
    }
    let _ = writeln!(out);
}

/// Class measures: headline lines and the confusion table.
pub fn class_block(out: &mut String, m: &ClassMetrics, classes: &[String], rows_label: &str) {
    line(out, rows_label, &m.rows.to_string());
    let wrong: u64 = m
        .confusion
        .iter()
        .enumerate()
        .map(|(c, r)| r.iter().sum::<u64>() - r.get(c).copied().unwrap_or(0))
        .sum();
    line(
        out,
        "misclassified",
        &format!("{} ({wrong} rows)", pct(m.error)),
    );
    line(out, "log loss", &sig(m.log_loss, 4));
    line(
        out,
        "Brier score",
        &format!("{} (0 best, 2 worst)", sig(m.brier, 4)),
    );
    if let Some(auc) = m.roc_auc {
        line(
            out,
            "ROC AUC",
            &format!(
                "{} ('{}' as the positive class)",
                sig(auc, 4),
                classes.get(1).map_or("", |s| s)
            ),
        );
    }
    let _ = writeln!(out);
    let _ = writeln!(
        out,
        "  rows: actual class; columns: predicted class; last column: share of the row predicted wrong"
    );
    let lw = classes.iter().map(|c| c.len()).max().unwrap_or(0).max(8);
    let cw = classes
        .iter()
        .map(|c| c.len())
        .chain(m.confusion.iter().flatten().map(|n| n.to_string().len()))
        .max()
        .unwrap_or(0)
        .max(5);
    let mut head = format!("  {:<lw$}", "");
    for c in classes {
        let _ = write!(head, "  {c:>cw$}");
    }
    let _ = write!(head, "  | wrong");
    let _ = writeln!(out, "{head}");
    for (i, c) in classes.iter().enumerate() {
        let mut row = format!("  {c:<lw$}");
        for n in m.confusion.get(i).map(|r| r.as_slice()).unwrap_or(&[]) {
            let _ = write!(row, "  {n:>cw$}");
        }
        let e = m
            .class_error
            .get(i)
            .copied()
            .flatten()
            .map_or("-".to_string(), pct);
        let _ = write!(row, "  | {e:>6}");
        let _ = writeln!(out, "{row}");
    }
}

/// Regression measures.
pub fn value_block(out: &mut String, m: &ValueMetrics, rows_label: &str) {
    line(out, rows_label, &m.rows.to_string());
    line(out, "mean squared error", &sig(m.mse, 4));
    line(out, "root mean sq. error", &sig(m.mse.sqrt(), 4));
    line(out, "mean absolute error", &sig(m.mae, 4));
    line(
        out,
        "variance explained",
        &m.variance_explained
            .map_or("- (target constant)".to_string(), pct),
    );
}

/// The out-of-bag section.
pub fn oob_section(out: &mut String, st: Style, model: &Model) {
    let f = model;
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
        }
        Some(Metrics::Classes(m)) => {
            class_block(out, m, f.classes(), "rows judged");
            if oob.rows_never_oob > 0 {
                let _ = writeln!(
                    out,
                    "  ({} rows were drawn by every tree and have no out-of-bag prediction)",
                    oob.rows_never_oob
                );
            }
        }
        Some(Metrics::Values(m)) => {
            value_block(out, m, "rows judged");
        }
    }
    let _ = writeln!(out);
}

pub use copse_forest::MIRROR_MIN_NULL;

/// A p-value as printed: three decimals, or `<0.001`.
pub fn p_text(p: f64) -> String {
    if p < 0.001 {
        "<0.001".to_string()
    } else {
        format!("{p:.3}")
    }
}

/// Column heading of a test's p-values.
pub fn p_head(test: SignificanceTest) -> &'static str {
    match test {
        SignificanceTest::MirroredNull => "p mirror",
        SignificanceTest::ResponsePermutation => "p shuffle",
    }
}

/// The importance ranking: one line per input with its mean rise, standard error, a
/// bar, and with `show_brier` (for classes) the rise in Brier score beside it. Per-tree
/// out-of-bag importance leaves the Brier column out: a fully grown tree's leaves are
/// pure, so its Brier rise is exactly twice its error rise and adds nothing. One
/// p-value column follows per test in `p` (p-values in input order).
pub fn importance_table(
    out: &mut String,
    imp: &PermutationImportance,
    show_brier: bool,
    p: &[&Significance],
) {
    let brier = if show_brier { imp.brier.as_ref() } else { None };
    let err = &imp.error;
    let ranked = err.ranked();
    let w = ranked
        .iter()
        .map(|f| f.name.len())
        .max()
        .unwrap_or(5)
        .max(5);
    let top = ranked.iter().map(|f| f.mean).fold(0.0f64, f64::max);
    let brier_of = |j: usize| brier.and_then(|b| b.features.get(j)).map(|b| b.mean);
    // One number of decimals for the whole column: four significant digits of the top.
    let dec = |top: f64| {
        if top > 0.0 {
            (3 - top.log10().floor() as i64).clamp(0, 10) as usize
        } else {
            4
        }
    };
    let d_err = dec(top);
    let top_brier = imp.brier.as_ref().map_or(0.0, |b| {
        b.features.iter().map(|f| f.mean).fold(0.0f64, f64::max)
    });
    let d_brier = dec(top_brier);
    let mut head = format!(
        "  {:>3}  {:<w$}  {:>11}  {:>9}",
        "#", "input", "rise", "± s.e."
    );
    if brier.is_some() {
        let _ = write!(head, "  {:>11}", "Brier rise");
    }
    for sig in p {
        let _ = write!(head, "  {:>9}", p_head(sig.test));
    }
    let _ = writeln!(out, "{head}");
    for f in ranked {
        let se = f
            .std_error
            .map_or("-".to_string(), |s| format!("{s:.d_err$}"));
        let mut row = format!(
            "  {:>3}  {:<w$}  {:>11}  {:>9}",
            f.rank,
            f.name,
            signed(f.mean, d_err),
            se
        );
        if let Some(b) = brier_of(f.feature) {
            let _ = write!(row, "  {:>11}", signed(b, d_brier));
        }
        for sig in p {
            let v = sig
                .p_values
                .get(f.feature)
                .map_or("-".to_string(), |&v| p_text(v));
            let _ = write!(row, "  {v:>9}");
        }
        let bar = if top > 0.0 && f.mean > 0.0 {
            "█".repeat(((f.mean / top) * 24.0).round() as usize)
        } else {
            String::new()
        };
        let _ = writeln!(out, "{row}  {bar}");
    }
}

fn signed(v: f64, decimals: usize) -> String {
    if v > 0.0 {
        format!("+{v:.decimals$}")
    } else {
        format!("{v:.decimals$}")
    }
}

/// Explains what an importance table measures.
pub fn importance_intro(imp: &Importance, held_out: bool) -> String {
    let what = imp.measure.to_string();
    let text = if held_out {
        format!(
            "Rise in the model's {what} on these rows when one input's values are shuffled \
             (mean of {} shuffles ± standard error). Near zero or below: no detectable effect.",
            imp.replicates
        )
    } else {
        format!(
            "Rise in out-of-bag {what} when one input's values are shuffled among a tree's \
             out-of-bag rows (mean over {} trees ± standard error). Near zero or below: no \
             detectable effect.",
            imp.replicates
        )
    };
    wrap(&text, 88)
        .iter()
        .map(|l| format!("  {l}"))
        .collect::<Vec<_>>()
        .join("\n")
}

/// The mirrored-null test of an importance, when its null sample is large enough to
/// show ([`MIRROR_MIN_NULL`]).
pub fn shown_mirror(imp: &Importance) -> Option<Significance> {
    mirrored_null_test(imp).filter(Significance::reportable)
}

/// The importance table with its p-value columns and, under it, what each p-value
/// means: the mirrored-null test when the importances allow it, and the shuffled-target
/// test when given. `hint` says how to get p-values when the mirrored test cannot give
/// them.
pub fn importance_with_tests(
    out: &mut String,
    imp: &PermutationImportance,
    show_brier: bool,
    shuffle: Option<&Significance>,
    hint: &str,
) {
    let mirror = mirrored_null_test(&imp.error);
    let mirror_shown = mirror.as_ref().filter(|s| s.reportable());
    let cols: Vec<&Significance> = mirror_shown.into_iter().chain(shuffle).collect();
    importance_table(out, imp, show_brier, &cols);
    let mut notes = Vec::new();
    match (&mirror, mirror_shown) {
        (Some(m), Some(_)) => notes.push(format!(
            "p mirror: the rises at or below zero and their mirror images stand in for inputs \
             that do not matter ({} values, so the smallest possible p is {}); p is the share \
             of them at least as large as the input's rise (mirrored-null test, Janitza, Celik \
             & Boulesteix 2018). It assumes most inputs do not matter.",
            m.null_size,
            p_text(1.0 / (1.0 + m.null_size as f64))
        )),
        _ => notes.push(format!(
            "No mirrored-null p-values: the rises at or below zero (and their mirror images) \
             give only {} null values, and the test needs at least {MIRROR_MIN_NULL}, that is \
             many inputs that do not matter{}",
            mirror.as_ref().map_or(0, |m| m.null_size),
            if shuffle.is_some() {
                ".".to_string()
            } else {
                format!("; {hint}")
            }
        )),
    }
    if let Some(s) = shuffle {
        notes.push(format!(
            "p shuffle: the target was shuffled {} times and a forest trained on each; p is \
             the share of those forests, counting the real one, that give the input at least \
             this rise (Altmann, Tolosi, Sander & Lengauer 2010); smallest possible p {}.",
            s.null_size,
            p_text(1.0 / (1.0 + s.null_size as f64))
        ));
    }
    for n in notes {
        let _ = writeln!(out);
        for l in wrap(&n, 88) {
            let _ = writeln!(out, "  {l}");
        }
    }
}

/// The out-of-bag importance section of a model.
pub fn importance_section(out: &mut String, st: Style, model: &Model) {
    importance_section_with(out, st, model, None);
}

/// [`importance_section`] with the p-values of a shuffled-target test, if one was run.
pub fn importance_section_with(
    out: &mut String,
    st: Style,
    model: &Model,
    shuffle: Option<&Significance>,
) {
    let _ = writeln!(out, "{}", st.head("WHICH INPUTS MATTER"));
    match model.oob_importance() {
        Some(imp) => {
            let _ = writeln!(out, "{}", importance_intro(&imp.error, false));
            let _ = writeln!(out);
            importance_with_tests(
                out,
                imp,
                false,
                shuffle,
                "train with --null-permutations 199 for p-values from a shuffled target.",
            );
        }
        None => {
            let _ = writeln!(
                out,
                "  not available: no tree had out-of-bag rows; run 'copse importance' on held-out data"
            );
        }
    }
    let _ = writeln!(out);
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
        let err = m.class_error.get(c).copied().flatten().unwrap_or(0.0);
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

/// The caution block.
pub fn caution(out: &mut String, st: Style) {
    let _ = writeln!(out, "{}", st.head("CAUTION"));
    for l in wrap(CAUTION, 88) {
        let _ = writeln!(out, "  {l}");
    }
}

/// Greedy word wrap.
pub fn wrap(text: &str, width: usize) -> Vec<String> {
    let mut lines = Vec::new();
    let mut cur = String::new();
    for word in text.split_whitespace() {
        if !cur.is_empty() && cur.len() + 1 + word.len() > width {
            lines.push(std::mem::take(&mut cur));
        }
        if !cur.is_empty() {
            cur.push(' ');
        }
        cur.push_str(word);
    }
    if !cur.is_empty() {
        lines.push(cur);
    }
    lines
}

/// Bytes in words.
pub fn bytes_words(n: u64) -> String {
    if n < 10_000 {
        format!("{n} bytes")
    } else if n < 10_000_000 {
        format!("{:.1} kB", n as f64 / 1e3)
    } else {
        format!("{:.1} MB", n as f64 / 1e6)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn significant_digits() {
        assert_eq!(sig(0.012345, 3), "0.0123");
        assert_eq!(sig(1234.5, 3), "1234");
        assert_eq!(sig(-2.5, 2), "-2.5");
        assert_eq!(sig(0.0, 3), "0");
    }

    #[test]
    fn wrap_keeps_words_whole() {
        let w = wrap("aa bb cc dd", 5);
        assert_eq!(w, vec!["aa bb", "cc dd"]);
    }
}
