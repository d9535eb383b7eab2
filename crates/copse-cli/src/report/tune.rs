//! The report of `copse tune`: every setting tried with its out-of-bag figures and its
//! difference from the default (paired by row, with two standard errors), the
//! recommendation and the rule it follows, the `copse train` line to use, and the
//! caution that the best of many settings looks better than it is.
use super::{caution, paragraph, Style, CAUTION};
use crate::args::{ColumnRoles, CsvArgs, DecimalArg, DelimiterArg, ImpurityArg, TaskArg};
use crate::numbers::{fixed, signed, trim_num};
use copse_data::TrainingTable;
use copse_forest::tune::{TuneReport, TuneRow};
use copse_forest::Sampling;
use serde::Serialize;
use std::fmt::Write;

/// What the `copse train` line repeats from the tune command.
pub struct TrainLine<'a> {
    /// The data as given.
    pub data: &'a str,
    /// The column roles as given.
    pub roles: &'a ColumnRoles,
    /// How the CSV was read.
    pub csv: &'a CsvArgs,
    /// The impurity measure.
    pub impurity: ImpurityArg,
    /// The depth limit.
    pub max_depth: Option<u32>,
    /// Value bins.
    pub bins: u32,
    /// Seed.
    pub seed: u64,
    /// Sampling while judging.
    pub sampling: Sampling,
}

/// The tune report.
#[derive(Serialize)]
pub struct TuneView<'a> {
    command: &'static str,
    copse_version: &'static str,
    task: &'static str,
    target: &'a str,
    source: &'a str,
    rows: usize,
    inputs: usize,
    trees: usize,
    sampling: String,
    seed: u64,
    judged_by: &'static str,
    margin: f64,
    settings: &'a [TuneRow],
    default_setting: usize,
    recommended_setting: Option<usize>,
    selection_optimism: f64,
    train_line: String,
    notes: Vec<String>,
    caution: &'static str,
    #[serde(skip)]
    report: &'a TuneReport,
}

impl<'a> TuneView<'a> {
    /// The report of `r`, tuned on `data`, with what the train line repeats.
    pub fn new(r: &'a TuneReport, data: &'a TrainingTable, line: &TrainLine<'_>) -> Self {
        let chosen = r.recommended.map(|i| &r.rows[i]);
        let mut notes = vec![format!(
            "Picking the best of {} settings by out-of-bag figures flatters the one picked: were \
             none truly better than the default, the best would still look better by about {} \
             ({}). Check the chosen setting on rows kept out of training ('copse evaluate') \
             before relying on the gain.",
            r.rows.len(),
            fixed(r.selection_optimism, 4),
            loss_name(r.judged_by)
        )];
        if let Some(row) = chosen {
            if -row.loss_difference < 2.0 * r.selection_optimism {
                notes.push(format!(
                    "The recommended setting's gain ({}) is less than twice that flattery: treat \
                     it as a hint, and confirm it on held-out rows.",
                    fixed(-row.loss_difference, 4)
                ));
            }
        }
        if r.rows.iter().any(|row| row.cuts == "random") {
            notes.push(
                "Randomized cut points were judged with the same resamples as the rest (without \
                 resampling there is no out-of-bag error). Grown on every row, the usual way \
                 ('--sampling none'), they often do as well or a little better, but only held-out \
                 rows can tell."
                    .to_string(),
            );
        }
        TuneView {
            command: "tune",
            copse_version: env!("CARGO_PKG_VERSION"),
            task: data.task.name(),
            target: &data.target,
            source: &data.source,
            rows: data.outcome.n_labelled(),
            inputs: data.features.len(),
            trees: r.trees,
            sampling: r.sampling.to_string(),
            seed: line.seed,
            judged_by: r.judged_by,
            margin: r.margin,
            settings: &r.rows,
            default_setting: r.default,
            recommended_setting: r.recommended,
            selection_optimism: r.selection_optimism,
            train_line: train_line(line, chosen, data.features.len()),
            notes,
            caution: CAUTION,
            report: r,
        }
    }

    /// The settings tried, for the chart.
    pub fn rows(&self) -> &[TuneRow] {
        self.settings
    }

    /// The recommended setting's index, if any.
    pub fn recommended(&self) -> Option<usize> {
        self.recommended_setting
    }

    /// The loss the settings are judged by, in words.
    pub fn loss_words(&self) -> &'static str {
        loss_name(self.judged_by)
    }

    /// The line under the chart's title.
    pub fn subtitle(&self) -> String {
        format!(
            "{} rows of {}, target '{}'; {} trees a forest, {} samples, seed {}",
            self.rows, self.source, self.target, self.trees, self.sampling, self.seed
        )
    }

    /// The printed report.
    pub fn text(&self, st: Style) -> String {
        let r = self.report;
        let mut out = String::new();
        let classes = r.judged_by == "brier";
        let _ = writeln!(
            out,
            "{}",
            st.head(&format!(
                "SETTINGS TRIED ({} forests of {} trees on {} rows of {}, {} samples, seed {})",
                r.rows.len(),
                r.trees,
                self.rows,
                self.source,
                self.sampling,
                self.seed
            ))
        );
        let loss_head = if classes { "Brier" } else { "sq. error" };
        let _ = writeln!(
            out,
            "  {:>12}  {:>13}  {:<6}  {:>9}  {:>9}  {:>22}",
            "inputs/split",
            "smallest leaf",
            "cuts",
            if classes { "error" } else { "" },
            loss_head,
            "vs default (2 s.e.)"
        );
        let decimals = if classes {
            4
        } else {
            crate::numbers::column_decimals(r.rows.iter().map(|x| x.loss).fold(0.0, f64::max))
        };
        for (i, row) in r.rows.iter().enumerate() {
            let diff = if row.is_default {
                "(default)".to_string()
            } else {
                format!(
                    "{} ± {}",
                    signed(row.loss_difference, decimals),
                    fixed(r.margin * row.loss_difference_se, decimals)
                )
            };
            let mark = if Some(i) == r.recommended {
                "  <- recommended"
            } else {
                ""
            };
            let _ = writeln!(
                out,
                "  {:>12}  {:>13}  {:<6}  {:>9}  {:>9}  {:>22}{mark}",
                row.features_per_split,
                trim_num(row.min_leaf, 3),
                row.cuts,
                if classes {
                    fixed(row.error, 4)
                } else {
                    String::new()
                },
                fixed(row.loss, decimals),
                diff
            );
        }
        let _ = writeln!(
            out,
            "  (out of bag: each row judged only by the trees that never saw it; the difference \
             is\n   paired row by row with the default, negative is better)"
        );
        let _ = writeln!(out);
        let _ = writeln!(out, "{}", st.head("RECOMMENDATION"));
        match r.recommended.map(|i| &r.rows[i]) {
            Some(row) => paragraph(
                &mut out,
                &format!(
                    "{} inputs per split, smallest leaf {}, {}: out-of-bag {} {} against the \
                     default's {}, lower by {} ({} standard errors of the difference).",
                    row.features_per_split,
                    trim_num(row.min_leaf, 3),
                    cut_words(row.cuts),
                    self.loss_words(),
                    fixed(row.loss, decimals),
                    fixed(r.rows[r.default].loss, decimals),
                    fixed(-row.loss_difference, decimals),
                    trim_num(-row.loss_difference / row.loss_difference_se, 1)
                ),
            ),
            None => paragraph(
                &mut out,
                &format!(
                    "Keep the default: no setting beats it by more than {} standard errors of \
                     the difference, so any gain seen is within noise.",
                    trim_num(r.margin, 1)
                ),
            ),
        }
        paragraph(
            &mut out,
            &format!(
                "Rule: a setting is recommended only when its out-of-bag {} is below the \
                 default's by more than {} standard errors of their row-by-row difference; \
                 among those, the lowest.",
                self.loss_words(),
                trim_num(r.margin, 1)
            ),
        );
        let _ = writeln!(out, "  To train it:");
        let _ = writeln!(out, "    {}", self.train_line);
        let _ = writeln!(out);
        let _ = writeln!(out, "{}", st.head("READ THIS BEFORE USING THE RESULT"));
        for n in &self.notes {
            paragraph(&mut out, n);
        }
        let _ = writeln!(out);
        caution(&mut out, st);
        out
    }
}

fn loss_name(judged_by: &str) -> &'static str {
    if judged_by == "brier" {
        "Brier score"
    } else {
        "mean squared error"
    }
}

fn cut_words(cuts: &str) -> &'static str {
    if cuts == "random" {
        "randomized cut points"
    } else {
        "best cut points"
    }
}

/// The `copse train` line for `chosen` (the default when `None`), repeating how the
/// data were read and the settings tune held fixed.
fn train_line(l: &TrainLine<'_>, chosen: Option<&TuneRow>, p: usize) -> String {
    let mut w: Vec<String> = vec!["copse".into(), "train".into()];
    let mut opt = |name: &str, value: String| {
        w.push(format!("--{name}"));
        if !value.is_empty() {
            w.push(quoted(&value));
        }
    };
    opt("data", l.data.to_string());
    opt("target", l.roles.target.clone());
    opt("out", "model.copse".into());
    for (name, list) in [
        ("ignore", &l.roles.ignore),
        ("categorical", &l.roles.categorical),
        ("numeric", &l.roles.numeric),
    ] {
        if !list.is_empty() {
            opt(name, list.join(","));
        }
    }
    if let Some(t) = l.roles.task {
        opt(
            "task",
            if t == TaskArg::Classify {
                "classify"
            } else {
                "regress"
            }
            .into(),
        );
    }
    if l.csv.delimiter != DelimiterArg::Comma {
        let d = match l.csv.delimiter {
            DelimiterArg::Tab => "tab",
            _ => "semicolon",
        };
        opt("delimiter", d.into());
    }
    if let Some(m) = &l.csv.missing {
        opt("missing", m.clone());
    }
    if l.csv.decimal == Some(DecimalArg::Comma) {
        opt("decimal", "comma".into());
    }
    if let Some(row) = chosen {
        if row.features_per_split == p {
            opt("features-per-split", "every".into());
        } else {
            opt("features-per-split", row.features_per_split.to_string());
        }
        if row.min_leaf != 1.0 {
            opt("min-leaf", trim_num(row.min_leaf, 3));
        }
        if row.cuts == "random" {
            opt("cuts", "random".into());
            // As it was judged: with resamples.
            opt("sampling", l.sampling.to_string());
        } else if l.sampling != Sampling::Bootstrap {
            opt("sampling", l.sampling.to_string());
        }
    } else if l.sampling != Sampling::Bootstrap {
        opt("sampling", l.sampling.to_string());
    }
    if l.impurity == ImpurityArg::Entropy {
        opt("impurity", "entropy".into());
    }
    if let Some(d) = l.max_depth {
        opt("max-depth", d.to_string());
    }
    if l.bins != 255 {
        opt("bins", l.bins.to_string());
    }
    if l.seed != 1 {
        opt("seed", l.seed.to_string());
    }
    w.join(" ")
}

/// A word as a POSIX shell reads it: as it is when it holds only safe characters, else
/// in single quotes.
fn quoted(s: &str) -> String {
    let safe = |c: char| c.is_ascii_alphanumeric() || "_./,:%=+-@".contains(c);
    if !s.is_empty() && s.chars().all(safe) {
        s.to_string()
    } else {
        format!("'{}'", s.replace('\'', r"'\''"))
    }
}
