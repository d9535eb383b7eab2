//! Column roles and kinds: which column is the outcome, which are inputs, which are
//! left out; whether each input is numeric or categorical (inferred, or set by the
//! user); and the schema stored in a model so that scoring reads new files the same way.
//!
//! Inference rule: a column is numeric when every cell that is not missing parses as a
//! finite number, otherwise categorical. Categories are listed in a natural order
//! (numbers by value, then text), so codes do not depend on row order.
use crate::error::{CliError, CliResult};
use crate::reader::CsvInput;
use copse_forest::Outcome;
use copse_tree::{FeatureBins, FeatureKind, FeatureMeta};
use ndarray::Array2;
use serde::{Deserialize, Serialize};
use std::cmp::Ordering;
use std::collections::HashMap;

/// Cell texts that mean "missing" (besides an empty cell, which always does).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Missing {
    tokens: Vec<String>,
}

impl Missing {
    /// The tokens used when none are given: `NA`, `NaN` and `?`.
    pub fn standard() -> Self {
        Missing {
            tokens: vec!["NA".into(), "NaN".into(), "?".into()],
        }
    }

    /// Missing tokens from a comma-separated list; surrounding spaces are dropped.
    pub fn from_list(list: &str) -> Self {
        Missing {
            tokens: list
                .split(',')
                .map(|t| t.trim().to_string())
                .filter(|t| !t.is_empty())
                .collect(),
        }
    }

    /// The tokens (an empty cell is always missing too).
    pub fn tokens(&self) -> &[String] {
        &self.tokens
    }

    /// True when an already trimmed cell is missing.
    #[inline]
    pub fn is_missing(&self, cell: &str) -> bool {
        cell.is_empty() || self.tokens.iter().any(|t| t == cell)
    }
}

/// A finite number, or `None` (text, `inf`, `nan`, or overflow such as `1e400`).
#[inline]
pub fn parse_number(cell: &str) -> Option<f64> {
    cell.parse::<f64>().ok().filter(|v| v.is_finite())
}

/// Natural order of labels: numbers by value first, then text in byte order.
pub fn natural_order(a: &str, b: &str) -> Ordering {
    match (parse_number(a), parse_number(b)) {
        (Some(x), Some(y)) => x.total_cmp(&y).then_with(|| a.cmp(b)),
        (Some(_), None) => Ordering::Less,
        (None, Some(_)) => Ordering::Greater,
        (None, None) => a.cmp(b),
    }
}

/// What is being modelled.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
pub enum Task {
    /// Predict a class label.
    Classify,
    /// Predict a number.
    Regress,
}

impl Task {
    /// The word used on the command line and in JSON.
    pub fn name(self) -> &'static str {
        match self {
            Task::Classify => "classify",
            Task::Regress => "regress",
        }
    }
}

/// The outcome column as stored in a model.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct TargetSchema {
    /// Column name.
    pub name: String,
    /// Class labels in model order (classification), empty for regression.
    pub classes: Vec<String>,
    /// Classification or regression.
    pub task: Task,
}

/// Everything needed to read a new file the way the training file was read.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Schema {
    /// Inputs in model order, with their kinds and category labels.
    pub features: Vec<FeatureMeta>,
    /// The outcome.
    pub target: TargetSchema,
    /// Missing-value tokens in force at training.
    pub missing: Missing,
    /// Bin layout of each input as training used it (for numeric inputs, the lowest
    /// and highest training value in each bin); filled in once the data is binned.
    pub bins: Vec<FeatureBins>,
}

/// The roles the user gave to columns.
#[derive(Debug, Clone, Default)]
pub struct Roles {
    /// Outcome column.
    pub target: String,
    /// Columns left out entirely.
    pub ignore: Vec<String>,
    /// Columns forced to be categorical.
    pub categorical: Vec<String>,
    /// Columns forced to be numeric.
    pub numeric: Vec<String>,
    /// Forced task, or `None` to follow the outcome column's kind.
    pub task: Option<Task>,
}

/// A training file read into memory.
#[derive(Debug, Clone)]
pub struct TrainingData {
    /// The file's name as used in messages.
    pub source: String,
    /// How to read new files the same way.
    pub schema: Schema,
    /// Inputs, rows by inputs: numbers, category codes, NaN for missing.
    pub x: Array2<f64>,
    /// Outcome of each row.
    pub outcome: Outcome,
    /// File line of each row (for per-row output).
    pub lines: Vec<u64>,
    /// Rows read from the file (including those left out for a missing outcome).
    pub rows_read: usize,
    /// Rows left out because their outcome is missing.
    pub rows_without_outcome: usize,
    /// Columns left out with `--ignore`.
    pub ignored: Vec<String>,
    /// Remarks about the data for the user (printed on stderr).
    pub notes: Vec<String>,
}

/// Per-column tallies of the inference pass.
#[derive(Debug, Default, Clone)]
struct ColumnTally {
    missing: usize,
    numbers: usize,
    texts: usize,
    /// First few non-numeric cells: (line, text).
    text_examples: Vec<(u64, String)>,
}

const EXAMPLES: usize = 3;

/// Most categories one input may have (category codes are 16 bits in the tree core).
pub const MAX_CATEGORIES: usize = 65535;

fn check_names(input: &CsvInput, names: &[String], flag: &str) -> CliResult<()> {
    for n in names {
        if input.column(n).is_none() {
            return Err(CliError::input(format!(
                "{flag} names the column '{n}', but {} has no such column; its columns are: {}",
                input.name(),
                input.headers().join(", ")
            )));
        }
    }
    Ok(())
}

fn list_examples(ex: &[(u64, String)], total: usize) -> String {
    let shown: Vec<String> = ex
        .iter()
        .map(|(l, t)| format!("line {l} '{}'", clip(t)))
        .collect();
    let mut s = shown.join(", ");
    if total > ex.len() {
        s.push_str(&format!(" and {} more", total - ex.len()));
    }
    s
}

/// Shortens a cell for a message.
pub fn clip(t: &str) -> String {
    if t.chars().count() > 40 {
        let head: String = t.chars().take(37).collect();
        format!("{head}...")
    } else {
        t.to_string()
    }
}

/// Largest size of a regression target value. Squared deviations must stay finite
/// when summed over many rows: (1e100)^2 = 1e200, far from the largest double (about
/// 1.8e308), whereas values near 1e155 already have infinite squares and leave every
/// split unscorable.
pub const MAX_TARGET_SIZE: f64 = 1e100;

fn check_target_size(
    records: &[csv::StringRecord],
    col: usize,
    missing: &Missing,
    name: &str,
    target: &str,
) -> CliResult<()> {
    for r in records {
        let cell = r[col].trim();
        if missing.is_missing(cell) {
            continue;
        }
        if parse_number(cell).is_some_and(|v| v.abs() > MAX_TARGET_SIZE) {
            let line = r.position().map_or(0, |p| p.line());
            return Err(CliError::input(format!(
                "{name} line {line}, column '{target}': {} is too large a value to fit a regression on \
                 (at most 1e100 in size: larger values overflow the squared errors); rescale the target, \
                 for example divide it by a power of ten or take its logarithm",
                clip(cell)
            )));
        }
    }
    Ok(())
}

/// Reads a whole training file, infers column kinds, and encodes it.
///
/// # Errors
/// Input errors for unknown column names, contradictory roles, a file with no rows, an
/// outcome that is always missing, a `--numeric` column holding text, or a regression
/// outcome holding text; each names the file, line and column.
pub fn load_training(
    mut input: CsvInput,
    roles: &Roles,
    missing: Missing,
) -> CliResult<TrainingData> {
    if let Some(hint) = input.delimiter_hint() {
        if input.column(&roles.target).is_none() {
            return Err(CliError::input(hint));
        }
    }
    let name = input.name().to_string();
    check_names(&input, std::slice::from_ref(&roles.target), "--target")?;
    check_names(&input, &roles.ignore, "--ignore")?;
    check_names(&input, &roles.categorical, "--categorical")?;
    check_names(&input, &roles.numeric, "--numeric")?;
    if roles.ignore.contains(&roles.target) {
        return Err(CliError::input(format!(
            "'{}' is both the target and ignored; drop it from --ignore",
            roles.target
        )));
    }
    if let Some(c) = roles.categorical.iter().find(|c| roles.numeric.contains(c)) {
        return Err(CliError::input(format!(
            "'{c}' is listed in both --categorical and --numeric; keep it in one"
        )));
    }
    if roles.task == Some(Task::Regress) && roles.categorical.contains(&roles.target) {
        return Err(CliError::input(format!(
            "'{}' is listed in --categorical but --task regress needs a numeric target",
            roles.target
        )));
    }

    let headers = input.headers().to_vec();
    let target_col = input.column(&roles.target).unwrap_or(0);
    // Columns in use, in file order: inputs plus the target.
    let used: Vec<usize> = (0..headers.len())
        .filter(|&j| !roles.ignore.contains(&headers[j]))
        .collect();
    let feature_cols: Vec<usize> = used.iter().copied().filter(|&j| j != target_col).collect();
    if feature_cols.is_empty() {
        return Err(CliError::input(format!(
            "{name} has no input columns left besides the target '{}'; at least one input is needed",
            roles.target
        )));
    }

    // Pass 1: read every row, tally each used column.
    let mut records: Vec<csv::StringRecord> = Vec::new();
    let mut tallies = vec![ColumnTally::default(); headers.len()];
    let mut record = csv::StringRecord::new();
    while input.read(&mut record)? {
        let line = record.position().map_or(0, |p| p.line());
        for &j in &used {
            let cell = record[j].trim();
            let t = &mut tallies[j];
            if missing.is_missing(cell) {
                t.missing += 1;
            } else if parse_number(cell).is_some() {
                t.numbers += 1;
            } else {
                t.texts += 1;
                if t.text_examples.len() < EXAMPLES {
                    t.text_examples.push((line, cell.to_string()));
                }
            }
        }
        records.push(record.clone());
    }
    if records.is_empty() {
        return Err(CliError::input(format!(
            "{name} has a header but no data rows; add at least two rows"
        )));
    }
    let n_read = records.len();
    let mut notes = Vec::new();

    // Kinds.
    let mut categorical = vec![false; headers.len()];
    for &j in &used {
        let h = &headers[j];
        let t = &tallies[j];
        if roles.numeric.contains(h) {
            if let Some((line, text)) = t.text_examples.first() {
                return Err(CliError::input(format!(
                    "{name} line {line}, column '{h}': '{}' is not a finite number, but --numeric lists '{h}'; \
                     fix the value, or add it to the missing tokens with --missing",
                    clip(text)
                )));
            }
        } else if roles.categorical.contains(h) || t.texts > 0 {
            categorical[j] = true;
            if !roles.categorical.contains(h) && t.numbers >= t.texts {
                notes.push(format!(
                    "column '{h}' is read as categorical because of cells that are not finite numbers: {}; \
                     if they mean 'missing', add them with --missing, or fix them",
                    list_examples(&t.text_examples, t.texts)
                ));
            }
        }
    }

    // Task.
    let target_name = roles.target.clone();
    let tt = &tallies[target_col];
    if tt.missing == n_read {
        return Err(CliError::input(format!(
            "{name}: every row's target '{target_name}' is missing; check --target names the outcome column"
        )));
    }
    let task = match roles.task {
        Some(Task::Regress) => {
            if let Some((line, text)) = tt.text_examples.first() {
                return Err(CliError::input(format!(
                    "{name} line {line}, column '{target_name}': '{}' is not a number, so '{target_name}' cannot be \
                     the target of a regression; fix the value or use --task classify",
                    clip(text)
                )));
            }
            Task::Regress
        }
        Some(Task::Classify) => Task::Classify,
        None if categorical[target_col] => Task::Classify,
        None => Task::Regress,
    };
    categorical[target_col] = task == Task::Classify;
    if task == Task::Regress {
        check_target_size(&records, target_col, &missing, &name, &target_name)?;
    }

    // Category labels for every categorical used column.
    let mut levels: HashMap<usize, (Vec<String>, HashMap<String, u32>)> = HashMap::new();
    for &j in &used {
        if !categorical[j] {
            continue;
        }
        let mut seen: HashMap<&str, ()> = HashMap::new();
        for r in &records {
            let cell = r[j].trim();
            if !missing.is_missing(cell) {
                seen.insert(cell, ());
            }
        }
        let mut labels: Vec<String> = seen.into_keys().map(str::to_string).collect();
        labels.sort_by(|a, b| natural_order(a, b));
        let codes: HashMap<String, u32> = labels
            .iter()
            .enumerate()
            .map(|(i, l)| (l.clone(), i as u32))
            .collect();
        levels.insert(j, (labels, codes));
    }

    // Pass 2: encode the rows that have an outcome.
    let keep: Vec<usize> = (0..n_read)
        .filter(|&i| !missing.is_missing(records[i][target_col].trim()))
        .collect();
    let p = feature_cols.len();
    let mut x = Array2::<f64>::from_elem((keep.len(), p), f64::NAN);
    let mut lines = Vec::with_capacity(keep.len());
    let mut classes = Vec::new();
    let mut values = Vec::new();
    for (row, &i) in keep.iter().enumerate() {
        let r = &records[i];
        lines.push(r.position().map_or(0, |p| p.line()));
        for (k, &j) in feature_cols.iter().enumerate() {
            let cell = r[j].trim();
            if missing.is_missing(cell) {
                continue;
            }
            x[[row, k]] = match levels.get(&j) {
                Some((_, codes)) => codes.get(cell).map_or(f64::NAN, |&c| f64::from(c)),
                None => parse_number(cell).unwrap_or(f64::NAN),
            };
        }
        let cell = r[target_col].trim();
        match task {
            Task::Classify => {
                let code = levels
                    .get(&target_col)
                    .and_then(|(_, codes)| codes.get(cell).copied())
                    .unwrap_or(u32::MAX);
                classes.push(code);
            }
            Task::Regress => values.push(parse_number(cell).unwrap_or(f64::NAN)),
        }
    }
    drop(records);

    let features: Vec<FeatureMeta> = feature_cols
        .iter()
        .map(|&j| match levels.remove(&j) {
            Some((labels, _)) => FeatureMeta::categorical(headers[j].clone(), labels),
            None => FeatureMeta::numeric(headers[j].clone()),
        })
        .collect();
    let class_labels = match task {
        Task::Classify => levels.remove(&target_col).map(|l| l.0).unwrap_or_default(),
        Task::Regress => Vec::new(),
    };

    // Categories are codes of 16 bits in the tree core (65535 at most per input); a
    // column with more is an identifier or free text, not a category.
    for f in &features {
        if let FeatureKind::Categorical { levels } = &f.kind {
            if levels.len() > MAX_CATEGORIES {
                return Err(CliError::input(format!(
                    "{name}, column '{}': {} different values read as categories, more than the {MAX_CATEGORIES} \
                     copse supports in one input; it looks like an identifier or free text: leave it out with \
                     --ignore {}, or group its values into fewer categories",
                    f.name,
                    levels.len(),
                    f.name
                )));
            }
        }
    }

    // Remarks a careful analyst would want to see.
    let n = keep.len();
    let mut useless = 0;
    for (k, f) in features.iter().enumerate() {
        let t = &tallies[feature_cols[k]];
        let present = n_read - t.missing;
        if present == 0 {
            useless += 1;
            notes.push(format!(
                "input '{}' is missing in every row; it cannot help the model",
                f.name
            ));
        } else if let FeatureKind::Categorical { levels } = &f.kind {
            if levels.len() == 1 {
                useless += 1;
                notes.push(format!(
                    "input '{}' has the same value in every row; it cannot help the model",
                    f.name
                ));
            } else if present >= 20 && levels.len() == present {
                notes.push(format!(
                    "input '{}' has a different value in each of its {present} rows; it looks like an \
                     identifier and cannot carry over to new rows: leave it out with --ignore {}",
                    f.name, f.name
                ));
            }
        } else {
            let col = x.column(k);
            let mut vals = col.iter().filter(|v| !v.is_nan());
            if let Some(first) = vals.next() {
                if vals.all(|v| v == first) {
                    useless += 1;
                    notes.push(format!(
                        "input '{}' has the same value in every row; it cannot help the model",
                        f.name
                    ));
                }
            }
        }
    }
    if useless == features.len() {
        notes.push(format!(
            "no input of {name} varies, so no split is possible: the model is trivial and predicts the \
             overall {} for every row; check --target and --ignore, and the data",
            match task {
                Task::Classify => "class shares",
                Task::Regress => "mean",
            }
        ));
    }
    if task == Task::Classify && class_labels.len() == 1 {
        notes.push(format!(
            "the target '{target_name}' has a single class '{}': the model is trivial and predicts it for every row",
            class_labels[0]
        ));
    }
    if task == Task::Regress && roles.task.is_none() {
        let mut distinct: Vec<f64> = values.clone();
        distinct.sort_by(f64::total_cmp);
        distinct.dedup();
        if distinct.len() <= 5 {
            notes.push(format!(
                "the target '{target_name}' holds numbers, so copse fits a regression; it has only {} distinct \
                 values: if they are classes, add --task classify",
                distinct.len()
            ));
        }
    }
    let dropped = n_read - n;
    if dropped > 0 {
        notes.push(format!(
            "{dropped} of {n_read} rows have no value for the target '{target_name}' and are left out of training"
        ));
    }
    if n < 2 {
        return Err(CliError::input(format!(
            "{name} has only {n} row with a target value; at least two are needed to grow a model"
        )));
    }

    let outcome = match task {
        Task::Classify => Outcome::Classes {
            codes: classes,
            labels: class_labels.clone(),
        },
        Task::Regress => Outcome::Values(values),
    };
    Ok(TrainingData {
        source: name,
        schema: Schema {
            features,
            target: TargetSchema {
                name: target_name,
                classes: class_labels,
                task,
            },
            missing,
            bins: Vec::new(),
        },
        x,
        outcome,
        lines,
        rows_read: n_read,
        rows_without_outcome: dropped,
        ignored: roles.ignore.clone(),
        notes,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn natural_order_puts_numbers_by_value_before_text() {
        let mut v = vec!["10", "b", "2", "a", "1.5"];
        v.sort_by(|a, b| natural_order(a, b));
        assert_eq!(v, vec!["1.5", "2", "10", "a", "b"]);
    }

    #[test]
    fn overflow_and_infinity_are_not_numbers() {
        assert_eq!(parse_number("1e400"), None);
        assert_eq!(parse_number("inf"), None);
        assert_eq!(parse_number("-inf"), None);
        assert_eq!(parse_number("nan"), None);
        assert_eq!(parse_number("-2.5e3"), Some(-2500.0));
    }

    #[test]
    fn missing_tokens_match_whole_trimmed_cells() {
        let m = Missing::from_list(" NA , -999 ,");
        assert!(m.is_missing(""));
        assert!(m.is_missing("-999"));
        assert!(!m.is_missing("NaN"));
        assert!(!m.is_missing("NAN"));
    }
}
