//! The decision sections of `copse train` (out-of-bag scores) and `copse evaluate`
//! (held-out scores) for one class against the rest: how many of the positive class
//! are caught in the top rows by score, what a cut-off does, the cut-off a stated cost
//! ratio calls for, and whether the probabilities mean what they say. The figures come
//! from `copse_forest::decision`, whose tests check them against their published
//! formulas; this module picks the scores, lays out the view (JSON key `decision`) and
//! prints it.
use super::{line, paragraph, Style};
use crate::decision_args::DecisionArgs;
use crate::error::{CliError, CliResult};
use crate::numbers::{pct, sig, trim_num};
use copse_forest::decision::{
    at_cutoff, catch_by_rank, cost_cutoff, reliability, CatchByRank, CutoffTable, Interval,
    Reliability, STANDARD_TOP_SHARES,
};
use copse_forest::ndarray::ArrayView2;
use copse_forest::{Forest, Task, MISSING};
use serde::Serialize;
use std::fmt::Write;

/// Bins of the reliability table: ten of equal row count.
pub const RELIABILITY_BINS: usize = 10;

/// The positive class's score of every row (NaN when the row has no score or no
/// known class) and whether the row is of that class.
#[derive(Debug, Clone)]
pub struct PositiveScores {
    /// The positive class (index in model order).
    pub class: usize,
    /// Its label.
    pub label: String,
    /// Each row's probability of the positive class; NaN when unknown.
    pub scores: Vec<f64>,
    /// Whether each row is of the positive class.
    pub positive: Vec<bool>,
}

impl PositiveScores {
    /// The scores of `class` in `probs` (rows by classes) against `codes`.
    pub fn new(model: &Forest, class: usize, probs: ArrayView2<'_, f64>, codes: &[u32]) -> Self {
        let scores = probs
            .rows()
            .into_iter()
            .zip(codes)
            .map(|(r, &c)| if c == MISSING { f64::NAN } else { r[class] })
            .collect();
        let positive = codes.iter().map(|&c| c as usize == class).collect();
        PositiveScores {
            class,
            label: model.classes()[class].clone(),
            scores,
            positive,
        }
    }
}

/// The positive class the decision tables use: `--positive` when given (it must be one
/// of the model's classes), else the second class of a two-class model; `None` for a
/// regression or for more than two classes without `--positive`.
///
/// # Errors
/// An input error when `--positive` names no class of the model, or the model predicts
/// numbers.
pub fn positive_class(model: &Forest, args: &DecisionArgs) -> CliResult<Option<usize>> {
    if model.task() == Task::Regress {
        if let Some(p) = &args.positive {
            return Err(CliError::input(format!(
                "--positive {p} names a class, but the model predicts numbers; drop --positive"
            )));
        }
        return Ok(None);
    }
    let classes = model.classes();
    match &args.positive {
        Some(p) => classes
            .iter()
            .position(|c| c == p)
            .map(Some)
            .ok_or_else(|| {
                CliError::input(format!(
                    "--positive {p} is not a class of the model; its classes are {}",
                    classes.join(", ")
                ))
            }),
        None => Ok((classes.len() == 2).then_some(1)),
    }
}

/// The cut-off that the cost ratio calls for, with what it does.
#[derive(Debug, Serialize)]
pub struct CostView {
    /// Cost of a false alarm, as given.
    pub false_alarm_cost: f64,
    /// Cost of a miss, as given.
    pub miss_cost: f64,
    /// p* = false_alarm_cost / (false_alarm_cost + miss_cost) (Elkan 2001, Theorem 1).
    pub cutoff: f64,
    /// The confusion table and rates at p*.
    pub table: CutoffTable,
    /// Mean cost per row at p*.
    pub cost_per_row: f64,
    /// Mean cost per row at the chosen cut-off (`--cutoff`).
    pub cost_per_row_at_chosen_cutoff: f64,
    /// Mean cost per row when every row is called negative (no inspection).
    pub cost_per_row_calling_none: f64,
    /// Mean cost per row when every row is called positive (inspect everything).
    pub cost_per_row_calling_all: f64,
}

/// The decision tables of one set of scores.
#[derive(Debug, Serialize)]
pub struct DecisionView {
    /// The class the tables look for.
    pub positive_class: String,
    /// Where the scores come from: `out-of-bag` or `held-out`.
    pub scores: &'static str,
    /// Rows with a score and a known class.
    pub rows: usize,
    /// Positive rows among them.
    pub positives: usize,
    /// Whether the scores were shifted back to the training class shares (models
    /// trained with `--balanced`).
    pub shifted_to_training_shares: bool,
    /// Catch by rank at the standard depths and the budget (null without positives).
    pub catch_by_rank: Option<CatchByRank>,
    /// What the chosen cut-off does.
    pub at_cutoff: CutoffTable,
    /// The cost cut-off, when `--costs` was given.
    pub cost: Option<CostView>,
    /// The reliability table and the Brier decomposition.
    pub calibration: Option<Reliability>,
    /// Catch by rank at every whole percent, for the chart.
    #[serde(skip)]
    pub curve: Option<CatchByRank>,
}

impl DecisionView {
    /// The tables of `s`, whose scores come from `scores` (`out-of-bag` or
    /// `held-out`), with the options in `args`.
    pub fn new(
        model: &Forest,
        s: &PositiveScores,
        scores: &'static str,
        args: &DecisionArgs,
    ) -> Self {
        let budget = args.budget.map(|b| b as usize);
        let catch = catch_by_rank(&s.scores, &s.positive, &STANDARD_TOP_SHARES, budget);
        let percents: Vec<f64> = (1..=100).map(|k| f64::from(k) / 100.0).collect();
        let curve = catch_by_rank(&s.scores, &s.positive, &percents, None);
        let chosen = at_cutoff(&s.scores, &s.positive, args.cutoff_or_default());
        let rows = chosen.caught + chosen.false_alarms + chosen.missed + chosen.passed;
        let positives = chosen.caught + chosen.missed;
        let cost = args.costs.and_then(|c| {
            let p = cost_cutoff(c.false_alarm, c.miss)?;
            let table = at_cutoff(&s.scores, &s.positive, p);
            let per_row = |t: &CutoffTable| {
                (t.false_alarms as f64 * c.false_alarm + t.missed as f64 * c.miss)
                    / rows.max(1) as f64
            };
            Some(CostView {
                false_alarm_cost: c.false_alarm,
                miss_cost: c.miss,
                cutoff: p,
                cost_per_row: per_row(&table),
                cost_per_row_at_chosen_cutoff: per_row(&chosen),
                cost_per_row_calling_none: positives as f64 * c.miss / rows.max(1) as f64,
                cost_per_row_calling_all: (rows - positives) as f64 * c.false_alarm
                    / rows.max(1) as f64,
                table,
            })
        });
        DecisionView {
            positive_class: s.label.clone(),
            scores,
            rows,
            positives,
            shifted_to_training_shares: model.prior_shift().is_some(),
            catch_by_rank: catch,
            at_cutoff: chosen,
            cost,
            calibration: reliability(&s.scores, &s.positive, RELIABILITY_BINS),
            curve,
        }
    }

    /// The printed sections.
    pub fn text(&self, out: &mut String, st: Style) {
        let yes = &self.positive_class;
        let base = self.positives as f64 / self.rows.max(1) as f64;
        let _ = writeln!(
            out,
            "{}",
            st.head(&format!(
                "CATCH BY RANK ({} scores; '{yes}' as the positive class)",
                self.scores
            ))
        );
        match &self.catch_by_rank {
            None => paragraph(
                out,
                &format!("no row is '{yes}', so there is nothing to catch"),
            ),
            Some(c) => catch_table(out, c, yes),
        }
        let _ = writeln!(out);
        let _ = writeln!(
            out,
            "{}",
            st.head(&format!(
                "AT A CUT-OFF OF {} (a row is called '{yes}' when its probability is at least that)",
                trim_num(self.at_cutoff.cutoff, 4)
            ))
        );
        cutoff_block(out, &self.at_cutoff, yes, base);
        let _ = writeln!(out);
        if let Some(c) = &self.cost {
            let _ = writeln!(
                out,
                "{}",
                st.head(&format!(
                    "LOWEST EXPECTED COST (a false alarm costs {}, a miss costs {})",
                    trim_num(c.false_alarm_cost, 4),
                    trim_num(c.miss_cost, 4)
                ))
            );
            paragraph(
                out,
                &format!(
                    "Call a row '{yes}' when its probability is at least {} = {} / ({} + {}), \
                     the cut-off that minimises expected cost when the probabilities are \
                     calibrated (Elkan 2001, Theorem 1).",
                    trim_num(c.cutoff, 4),
                    trim_num(c.false_alarm_cost, 4),
                    trim_num(c.false_alarm_cost, 4),
                    trim_num(c.miss_cost, 4)
                ),
            );
            let _ = writeln!(out);
            cutoff_block(out, &c.table, yes, base);
            line(
                out,
                "cost per row",
                &format!(
                    "{} at this cut-off; {} at the cut-off of {}; {} calling no row, {} calling every row",
                    sig(c.cost_per_row, 4),
                    sig(c.cost_per_row_at_chosen_cutoff, 4),
                    trim_num(self.at_cutoff.cutoff, 4),
                    sig(c.cost_per_row_calling_none, 4),
                    sig(c.cost_per_row_calling_all, 4)
                ),
            );
            let _ = writeln!(out);
        }
        let _ = writeln!(
            out,
            "{}",
            st.head("DO THE PROBABILITIES MEAN WHAT THEY SAY")
        );
        if self.shifted_to_training_shares {
            paragraph(
                out,
                "The model was trained with --balanced, so its raw scores overstate the rare \
                 classes; every probability here and in 'copse score' has been shifted back to \
                 the training class shares (Saerens, Latinne & Decaestecker 2002).",
            );
            let _ = writeln!(out);
        }
        match &self.calibration {
            None => paragraph(out, "no scored row"),
            Some(r) => calibration_block(out, r, yes),
        }
        let _ = writeln!(out);
    }
}

/// A share and its interval: `12.5% (9.1% to 16.8%)`.
pub fn share_with_interval(v: Option<f64>, i: Option<Interval>) -> String {
    match (v, i) {
        (Some(v), Some(i)) => format!("{} ({} to {})", pct(v), pct(i.low), pct(i.high)),
        (Some(v), None) => pct(v),
        _ => "-".to_string(),
    }
}

fn catch_table(out: &mut String, c: &CatchByRank, yes: &str) {
    paragraph(
        out,
        &format!(
            "Rows ranked by their probability of '{yes}', highest first: the share of the {} \
             '{yes}' rows among the top rows (95% Wilson interval), how many times better than \
             picking rows at random (lift), and what random picking catches.",
            c.positives
        ),
    );
    let _ = writeln!(
        out,
        "  {:>9}  {:>7}  {:>7}  {:<24}  {:>6}  {:>9}",
        "top rows", "rows", "caught", "share caught", "lift", "at random"
    );
    for p in &c.points {
        let _ = writeln!(
            out,
            "  {:>9}  {:>7}  {:>7}  {:<24}  {:>6}  {:>9}",
            pct(p.top_share),
            p.top_rows,
            p.caught,
            share_with_interval(Some(p.caught_share), p.caught_interval),
            format!("{:.1}", p.lift),
            pct(p.top_share)
        );
    }
}

fn cutoff_block(out: &mut String, t: &CutoffTable, yes: &str, base: f64) {
    let w = yes.len().max(5) + 9;
    let _ = writeln!(
        out,
        "  {:<18}  {:>w$}  {:>w$}",
        "",
        format!("called {yes}"),
        "called other"
    );
    let _ = writeln!(
        out,
        "  {:<18}  {:>w$}  {:>w$}",
        format!("actually {yes}"),
        format!("{} caught", t.caught),
        format!("{} missed", t.missed)
    );
    let _ = writeln!(
        out,
        "  {:<18}  {:>w$}  {:>w$}",
        "actually other",
        format!("{} false alarms", t.false_alarms),
        format!("{} passed", t.passed)
    );
    let called = t.caught + t.false_alarms;
    let rows = called + t.missed + t.passed;
    let flagged = called as f64 / rows.max(1) as f64;
    line(
        out,
        "precision",
        &format!(
            "{}; no skill: {} (the share of '{yes}')",
            share_with_interval(t.precision, t.precision_interval),
            pct(base)
        ),
    );
    line(
        out,
        "recall",
        &format!(
            "{}; no skill: {} (calling as many rows at random)",
            share_with_interval(t.recall, t.recall_interval),
            pct(flagged)
        ),
    );
    line(
        out,
        "false-alarm rate",
        &format!(
            "{}; no skill: {}",
            share_with_interval(t.false_alarm_rate, t.false_alarm_interval),
            pct(flagged)
        ),
    );
}

fn calibration_block(out: &mut String, r: &Reliability, yes: &str) {
    paragraph(
        out,
        &format!(
            "Rows in {} bins of equal size by their probability of '{yes}': the mean \
             probability promised against the share that was '{yes}' (95% Wilson interval).",
            r.bins.len()
        ),
    );
    let _ = writeln!(
        out,
        "  {:>4}  {:>6}  {:<17}  {:>10}  observed",
        "bin", "rows", "scores", "promised"
    );
    for (k, b) in r.bins.iter().enumerate() {
        let _ = writeln!(
            out,
            "  {:>4}  {:>6}  {:<17}  {:>10}  {}",
            k + 1,
            b.rows,
            format!("{:.3} to {:.3}", b.score_low, b.score_high),
            pct(b.mean_score),
            share_with_interval(Some(b.observed_share), b.observed_interval)
        );
    }
    line(
        out,
        "Brier score",
        &format!(
            "{} (this class against the rest: 0 best, 1 worst; with two classes, half the all-class Brier score)",
            sig(r.brier, 4)
        ),
    );
    line(
        out,
        "binned Brier score",
        &format!(
            "{} = reliability {} - resolution {} + uncertainty {} (Murphy 1973)",
            sig(r.brier_binned, 4),
            sig(r.reliability, 3),
            sig(r.resolution, 3),
            sig(r.uncertainty, 4)
        ),
    );
    line(
        out,
        "no skill",
        &format!(
            "{} (always forecasting the share of '{yes}'); reliability near 0 means the \
             probabilities can be read as chances",
            sig(r.uncertainty, 4)
        ),
    );
}
