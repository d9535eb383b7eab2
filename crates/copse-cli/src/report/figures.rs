//! How sure the headline figures are and what a model without skill would score beside
//! each: a 95% Wilson interval for every error rate and share, the DeLong standard
//! error of ROC AUC, an interval for RMSE, and the no-skill baselines (always the most
//! common class, forecasting the class shares, always the mean). As JSON the key
//! `headline_figures`; the formulas live, tested, in `copse_forest::decision`.
use super::paragraph;
use crate::numbers::{pct, sig};
use copse_forest::decision::{
    auc_std_error, class_baseline, interval::Z95, rmse_interval, value_baseline, wilson, Interval,
};
use copse_forest::metrics::{class_metrics, value_metrics};
use copse_forest::ndarray::ArrayView2;
use copse_forest::MISSING;
use serde::Serialize;
use std::fmt::Write;

/// The known truth of the judged rows.
#[derive(Debug, Clone, Copy)]
pub enum Truth<'a> {
    /// Class codes in model order ([`MISSING`] when unknown).
    Classes(&'a [u32]),
    /// Values (NaN when unknown).
    Values(&'a [f64]),
}

/// One figure: its value, a 95% interval when there is one, and the no-skill value.
#[derive(Debug, Clone, Serialize)]
pub struct Figure {
    /// The figure.
    pub value: f64,
    /// Its 95% interval.
    pub interval: Option<Interval>,
    /// What a model without skill scores.
    pub no_skill: Option<f64>,
    /// The standard error behind the interval, when it is a normal one.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub std_error: Option<f64>,
}

/// One class's share of rows predicted wrong, with its interval.
#[derive(Debug, Clone, Serialize)]
pub struct ClassWrong {
    /// The class.
    pub class: String,
    /// Rows of that class.
    pub rows: u64,
    /// Of them, rows predicted as another class.
    pub wrong: u64,
    /// `wrong / rows`.
    pub share: Option<f64>,
    /// Its 95% Wilson interval.
    pub interval: Option<Interval>,
}

/// The headline figures of a set of judged rows.
#[derive(Debug, Clone, Serialize)]
#[serde(untagged)]
pub enum FiguresView {
    /// Classes.
    Classes {
        /// Rows judged.
        rows: usize,
        /// Misclassification rate; no skill: always the most common class.
        error: Figure,
        /// Log loss; no skill: forecasting the class shares of these rows.
        log_loss: Figure,
        /// Brier score (all-class form); no skill: forecasting the class shares.
        brier: Figure,
        /// ROC AUC with its DeLong standard error (two classes); no skill 0.5.
        roc_auc: Option<Figure>,
        /// The class a model without skill always predicts.
        no_skill_class: String,
        /// Each class's share predicted wrong.
        wrong_within_class: Vec<ClassWrong>,
    },
    /// Numbers.
    Values {
        /// Rows judged.
        rows: usize,
        /// Root mean squared error; no skill: always the mean of these rows.
        rmse: Figure,
        /// Mean squared error (its interval is the RMSE interval squared).
        mse: Figure,
        /// Mean absolute error; no skill: always the mean.
        mae: Figure,
        /// The value a model without skill predicts (the mean of these rows).
        no_skill_value: f64,
    },
}

impl FiguresView {
    /// The figures of `preds` (rows by outputs) against `truth`; `classes` names the
    /// classes. `None` when no row can be judged.
    pub fn new(preds: ArrayView2<'_, f64>, truth: Truth<'_>, classes: &[String]) -> Option<Self> {
        match truth {
            Truth::Classes(codes) => class_figures(preds, codes, classes),
            Truth::Values(y) => value_figures(preds, y),
        }
    }

    /// Rows judged.
    pub fn rows(&self) -> usize {
        match self {
            FiguresView::Classes { rows, .. } | FiguresView::Values { rows, .. } => *rows,
        }
    }

    /// The error rate (classes) or RMSE (numbers) as a figure.
    pub fn headline(&self) -> &Figure {
        match self {
            FiguresView::Classes { error, .. } => error,
            FiguresView::Values { rmse, .. } => rmse,
        }
    }

    /// The printed section body.
    pub fn text(&self, out: &mut String) {
        let _ = writeln!(
            out,
            "  {:<22}{:<12}{:<32}no-skill model",
            "figure", "value", "95% interval"
        );
        let row = |out: &mut String, label: &str, v: String, i: String, n: String| {
            let _ = writeln!(out, "  {label:<22}{v:<12}{i:<32}{n}");
        };
        let range = |i: &Option<Interval>, f: &dyn Fn(f64) -> String| {
            i.map_or("-".to_string(), |i| {
                format!("{} to {}", f(i.low), f(i.high))
            })
        };
        let num = |v: f64| sig(v, 4);
        match self {
            FiguresView::Classes {
                error,
                log_loss,
                brier,
                roc_auc,
                no_skill_class,
                wrong_within_class,
                ..
            } => {
                let ns = |f: &Figure, g: &dyn Fn(f64) -> String| f.no_skill.map_or("-".into(), g);
                row(
                    out,
                    "misclassified",
                    pct(error.value),
                    range(&error.interval, &pct),
                    format!("{} (always '{no_skill_class}')", ns(error, &pct)),
                );
                row(
                    out,
                    "log loss",
                    num(log_loss.value),
                    "-".into(),
                    format!("{} (forecasting the class shares)", ns(log_loss, &num)),
                );
                row(
                    out,
                    "Brier score",
                    num(brier.value),
                    "-".into(),
                    format!("{} (forecasting the class shares)", ns(brier, &num)),
                );
                if let Some(a) = roc_auc {
                    row(
                        out,
                        "ROC AUC",
                        num(a.value),
                        format!(
                            "{} (s.e. {})",
                            range(&a.interval, &|v| sig(v, 3)),
                            a.std_error.map_or("-".into(), |s| sig(s, 2))
                        ),
                        "0.5 (random order)".into(),
                    );
                }
                for c in wrong_within_class {
                    row(
                        out,
                        &format!("wrong within '{}'", c.class),
                        c.share.map_or("-".into(), pct),
                        range(&c.interval, &pct),
                        format!("of {} rows", c.rows),
                    );
                }
                paragraph(
                    out,
                    "Intervals: Wilson (1927) for shares; DeLong, DeLong & Clarke-Pearson (1988) \
                     for ROC AUC.",
                );
            }
            FiguresView::Values {
                rmse,
                mse,
                mae,
                no_skill_value,
                ..
            } => {
                let ns = |f: &Figure| {
                    f.no_skill.map_or("-".to_string(), |v| {
                        format!("{} (always {})", sig(v, 4), sig(*no_skill_value, 4))
                    })
                };
                row(
                    out,
                    "typical error (RMSE)",
                    num(rmse.value),
                    range(&rmse.interval, &num),
                    ns(rmse),
                );
                row(
                    out,
                    "mean absolute error",
                    num(mae.value),
                    "-".into(),
                    ns(mae),
                );
                row(
                    out,
                    "squared error (MSE)",
                    num(mse.value),
                    range(&mse.interval, &num),
                    ns(mse),
                );
                paragraph(
                    out,
                    "RMSE interval: normal interval of the mean squared error, square-rooted; it \
                     is too narrow when a few errors are very large.",
                );
            }
        }
    }
}

fn class_figures(
    preds: ArrayView2<'_, f64>,
    codes: &[u32],
    classes: &[String],
) -> Option<FiguresView> {
    let m = class_metrics(codes, preds)?;
    let counts: Vec<u64> = m.confusion.iter().map(|r| r.iter().sum()).collect();
    let base = class_baseline(&counts)?;
    let n = m.rows;
    let wrong = (m.error * n as f64).round() as usize;
    let total = n as f64;
    // Log loss of forecasting the class shares of these rows: their entropy.
    let entropy: f64 = counts
        .iter()
        .filter(|&&c| c > 0)
        .map(|&c| {
            let s = c as f64 / total;
            -s * s.ln()
        })
        .sum();
    let roc_auc = (preds.ncols() == 2)
        .then(|| {
            let (scores, positive): (Vec<f64>, Vec<bool>) = preds
                .rows()
                .into_iter()
                .zip(codes)
                .filter(|(_, &c)| c != MISSING)
                .map(|(r, &c)| (r[1], c == 1))
                .unzip();
            auc_std_error(&scores, &positive)
        })
        .flatten()
        .map(|(auc, se)| Figure {
            value: auc,
            interval: Some(Interval {
                low: (auc - Z95 * se).max(0.0),
                high: (auc + Z95 * se).min(1.0),
            }),
            no_skill: Some(0.5),
            std_error: Some(se),
        });
    let wrong_within_class = m
        .confusion
        .iter()
        .enumerate()
        .map(|(c, r)| {
            let rows: u64 = r.iter().sum();
            let w = rows - r[c];
            ClassWrong {
                class: classes.get(c).cloned().unwrap_or_default(),
                rows,
                wrong: w,
                share: (rows > 0).then(|| w as f64 / rows as f64),
                interval: wilson(w as usize, rows as usize),
            }
        })
        .collect();
    let plain = |value: f64, no_skill: f64| Figure {
        value,
        interval: None,
        no_skill: Some(no_skill),
        std_error: None,
    };
    Some(FiguresView::Classes {
        rows: n,
        error: Figure {
            value: m.error,
            interval: wilson(wrong, n),
            no_skill: Some(base.error),
            std_error: None,
        },
        log_loss: plain(m.log_loss, entropy),
        brier: plain(m.brier, base.brier),
        roc_auc,
        no_skill_class: classes.get(base.most_common).cloned().unwrap_or_default(),
        wrong_within_class,
    })
}

fn value_figures(preds: ArrayView2<'_, f64>, y: &[f64]) -> Option<FiguresView> {
    let p = preds.column(0).to_vec();
    let m = value_metrics(y, &p)?;
    let (truth, errors): (Vec<f64>, Vec<f64>) = y
        .iter()
        .zip(&p)
        .filter(|(y, p)| !y.is_nan() && !p.is_nan())
        .map(|(&y, &p)| (y, p - y))
        .unzip();
    let mean = truth.iter().sum::<f64>() / truth.len() as f64;
    let base = value_baseline(&truth, mean)?;
    let interval = rmse_interval(&errors);
    Some(FiguresView::Values {
        rows: m.rows,
        rmse: Figure {
            value: m.mse.sqrt(),
            interval,
            no_skill: Some(base.rmse),
            std_error: None,
        },
        mse: Figure {
            value: m.mse,
            interval: interval.map(|i| Interval {
                low: i.low * i.low,
                high: i.high * i.high,
            }),
            no_skill: Some(base.rmse * base.rmse),
            std_error: None,
        },
        mae: Figure {
            value: m.mae,
            interval: None,
            no_skill: Some(base.mae),
            std_error: None,
        },
        no_skill_value: mean,
    })
}
