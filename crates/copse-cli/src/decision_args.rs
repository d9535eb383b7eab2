//! The options that turn scores into decisions, shared by `copse train` (out-of-bag
//! scores) and `copse evaluate` (held-out scores): which class is the positive one,
//! the cut-off, an inspection budget and the costs of the two kinds of mistake. Parsed
//! with no I/O, like the rest of the arguments.
use clap::Args;

/// What a false alarm and a miss cost, in any one unit.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Costs {
    /// Cost of calling a negative row positive.
    pub false_alarm: f64,
    /// Cost of calling a positive row negative.
    pub miss: f64,
}

/// Options of the decision tables (two classes, or one class against the rest).
#[derive(Debug, Args, Clone, Default)]
pub struct DecisionArgs {
    /// The class the decision tables look for [default: the second class in the
    /// model's order, as the ROC AUC line says]; with more than two classes, naming
    /// one gives its tables against all the others.
    #[arg(long, value_name = "LABEL")]
    pub positive: Option<String>,

    /// Call a row positive when its probability of the positive class is at least P
    /// [default: 0.5].
    #[arg(long, value_name = "P", value_parser = parse_cutoff)]
    pub cutoff: Option<f64>,

    /// Add a line to the catch-by-rank table for inspecting only the top N rows.
    #[arg(long, value_name = "N", value_parser = clap::value_parser!(u64).range(1..))]
    pub budget: Option<u64>,

    /// What a false alarm and a missed positive cost, as FALSE_ALARM:MISS (for example
    /// 1:9); the report adds the cut-off with the lowest expected cost.
    #[arg(long, value_name = "FALSE_ALARM:MISS", value_parser = parse_costs)]
    pub costs: Option<Costs>,
}

impl DecisionArgs {
    /// The cut-off, 0.5 unless given.
    pub fn cutoff_or_default(&self) -> f64 {
        self.cutoff.unwrap_or(0.5)
    }

    /// Whether any decision option was given (to warn when they cannot apply).
    pub fn any_given(&self) -> bool {
        self.positive.is_some()
            || self.cutoff.is_some()
            || self.budget.is_some()
            || self.costs.is_some()
    }
}

fn parse_cutoff(s: &str) -> Result<f64, String> {
    match s.trim().parse::<f64>() {
        Ok(p) if (0.0..=1.0).contains(&p) => Ok(p),
        _ => Err(format!(
            "'{s}' is not a probability; give a number from 0 to 1, such as 0.3"
        )),
    }
}

fn parse_costs(s: &str) -> Result<Costs, String> {
    let bad = || {
        format!(
            "'{s}' is not FALSE_ALARM:MISS; give two positive numbers such as 1:9 (a miss costs \
             nine times a false alarm)"
        )
    };
    let (a, b) = s.split_once(':').ok_or_else(bad)?;
    let num = |t: &str| {
        t.trim()
            .parse::<f64>()
            .ok()
            .filter(|v| v.is_finite() && *v > 0.0)
    };
    match (num(a), num(b)) {
        (Some(false_alarm), Some(miss)) => Ok(Costs { false_alarm, miss }),
        _ => Err(bad()),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn costs_and_cutoffs_parse_or_say_what_is_wrong() {
        assert_eq!(
            parse_costs("1:9"),
            Ok(Costs {
                false_alarm: 1.0,
                miss: 9.0
            })
        );
        for bad in ["1", "0:9", "1:-2", "a:b", "1:inf"] {
            assert!(parse_costs(bad).is_err(), "{bad}");
        }
        assert_eq!(parse_cutoff("0.3"), Ok(0.3));
        assert!(parse_cutoff("1.5").is_err());
        assert!(parse_cutoff("NaN").is_err());
    }
}
