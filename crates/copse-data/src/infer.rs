//! Type inference over a whole training file: each used column is tallied (missing,
//! numeric and text cells), then judged numeric or categorical, the task follows from
//! the outcome column, and categorical columns get their labels in natural order.
//!
//! Inference rule: a column is numeric when every cell that is not missing parses as a
//! finite number, otherwise categorical. Categories are listed in natural order
//! (numbers by value, then text; [`copse_forest::natural_order`]), so codes do not
//! depend on row order.
use crate::cells::{clip, looks_decimal_comma, read_number, Missing};
use crate::csv_input::CsvInput;
use crate::error::{Error, ErrorKind, Result};
use crate::place::Place;
use crate::roles::{Layout, Roles};
use copse_forest::{natural_order, DecimalMark, Task};
use std::collections::{HashMap, HashSet};

/// Per-column tallies of the inference pass.
#[derive(Debug, Default, Clone)]
pub(crate) struct ColumnTally {
    pub missing: usize,
    pub numbers: usize,
    pub texts: usize,
    /// First few non-numeric cells: (line, text).
    pub text_examples: Vec<(u64, String)>,
    /// Non-numeric cells that would be numbers with a decimal comma (`5,1`), counted
    /// when numbers are read with a point; the first of them.
    pub decimal_commas: usize,
    pub comma_example: Option<(u64, String)>,
}

const EXAMPLES: usize = 3;

/// Largest size of a regression target value. Squared deviations must stay finite
/// when summed over many rows: (1e100)^2 = 1e200, far from the largest double (about
/// 1.8e308), whereas values near 1e155 already have infinite squares and leave every
/// split unscorable.
pub const MAX_TARGET_SIZE: f64 = 1e100;

/// The file line of a record.
pub(crate) fn line_of(r: &csv::StringRecord) -> u64 {
    r.position().map_or(0, |p| p.line())
}

/// Pass 1: reads every row of `input`, tallying each used column.
pub(crate) fn tally(
    input: &mut CsvInput,
    layout: &Layout,
    missing: &Missing,
) -> Result<(Vec<csv::StringRecord>, Vec<ColumnTally>)> {
    let mut records = Vec::new();
    let mut tallies = vec![ColumnTally::default(); input.headers().len()];
    let mut record = csv::StringRecord::new();
    let mark = input.decimal();
    while input.read(&mut record)? {
        let line = line_of(&record);
        for &j in &layout.used {
            let cell = record[j].trim();
            let t = &mut tallies[j];
            if missing.is_missing(cell) {
                t.missing += 1;
            } else if read_number(cell, mark).is_some() {
                t.numbers += 1;
            } else {
                t.texts += 1;
                if t.text_examples.len() < EXAMPLES {
                    t.text_examples.push((line, cell.to_string()));
                }
                if mark == DecimalMark::Point && looks_decimal_comma(cell) {
                    t.decimal_commas += 1;
                    if t.comma_example.is_none() {
                        t.comma_example = Some((line, cell.to_string()));
                    }
                }
            }
        }
        records.push(record.clone());
    }
    if records.is_empty() {
        return Err(Error::new(
            ErrorKind::NoRows,
            format!(
                "{} has a header but no data rows; add at least two rows",
                input.name()
            ),
        ));
    }
    Ok((records, tallies))
}

fn list_examples(place: &Place, ex: &[(u64, String)], total: usize) -> String {
    let shown: Vec<String> = ex
        .iter()
        .map(|(l, t)| format!("{} '{}'", place.spot(*l), clip(t)))
        .collect();
    let mut s = shown.join(", ");
    if total > ex.len() {
        s.push_str(&format!(" and {} more", total - ex.len()));
    }
    s
}

/// Judges each used column numeric or categorical (true), noting columns read as
/// categorical because of a few stray texts.
pub(crate) fn kinds(
    place: &Place,
    headers: &[String],
    layout: &Layout,
    tallies: &[ColumnTally],
    roles: &Roles,
    notes: &mut Vec<String>,
) -> Result<Vec<bool>> {
    let mut categorical = vec![false; headers.len()];
    let mut comma_columns: Vec<(&str, &(u64, String))> = Vec::new();
    for &j in &layout.used {
        let h = &headers[j];
        let t = &tallies[j];
        if roles.numeric.contains(h) {
            if let Some((line, text)) = t.text_examples.first() {
                return Err(Error::new(
                    ErrorKind::BadValue,
                    format!(
                        "{}, column '{h}': '{}' is not a finite number, but --numeric lists '{h}'; \
                         fix the value, or add it to the missing tokens with --missing{}",
                        place.at(*line),
                        clip(text),
                        comma_hint(text)
                    ),
                ));
            }
        } else if roles.categorical.contains(h) || t.texts > 0 {
            categorical[j] = true;
            let forced = roles.categorical.contains(h);
            // Most texts, and with the numbers most cells, are numbers with a
            // decimal comma: a file of decimal commas, said once for all its columns.
            if !forced
                && 2 * t.decimal_commas > t.texts
                && 2 * (t.decimal_commas + t.numbers) > t.texts + t.numbers
            {
                if let Some(example) = &t.comma_example {
                    comma_columns.push((h, example));
                    continue;
                }
            }
            if !forced && t.numbers >= t.texts {
                notes.push(format!(
                    "column '{h}' is read as categorical because of cells that are not finite numbers: {}; \
                     if they mean 'missing', add them with --missing, or fix them",
                    list_examples(place, &t.text_examples, t.texts)
                ));
            }
        }
    }
    if let Some(&(_, (line, example))) = comma_columns.first() {
        let shown: Vec<String> = comma_columns
            .iter()
            .take(EXAMPLES)
            .map(|(h, _)| format!("'{h}'"))
            .collect();
        let more = comma_columns.len() - shown.len();
        notes.push(format!(
            "{} {}{} {} numbers written with a decimal comma (such as '{}' on {}), so \
             copse reads {} as categories; add --decimal comma to read {} as numbers",
            if comma_columns.len() == 1 {
                "column"
            } else {
                "columns"
            },
            shown.join(", "),
            if more > 0 {
                format!(" and {more} more")
            } else {
                String::new()
            },
            if comma_columns.len() == 1 {
                "holds"
            } else {
                "hold"
            },
            clip(example),
            place.spot(*line),
            if comma_columns.len() == 1 {
                "it"
            } else {
                "them"
            },
            if comma_columns.len() == 1 {
                "it"
            } else {
                "them"
            },
        ));
    }
    Ok(categorical)
}

/// A hint for a cell that is no number as read but would be one with a decimal comma.
pub(crate) fn comma_hint(cell: &str) -> &'static str {
    if looks_decimal_comma(cell) {
        "; if the file writes numbers with a decimal comma, add --decimal comma"
    } else {
        ""
    }
}

/// The task: as forced by the roles, else classification for a categorical outcome
/// and regression for a numeric one.
pub(crate) fn task(
    place: &Place,
    roles: &Roles,
    target: &ColumnTally,
    target_is_categorical: bool,
    rows: usize,
) -> Result<Task> {
    let target_name = &roles.target;
    if target.missing == rows {
        return Err(Error::new(
            ErrorKind::NoRows,
            format!(
                "{}: every row's target '{target_name}' is missing; check --target names the outcome column",
                place.name()
            ),
        ));
    }
    Ok(match roles.task {
        Some(Task::Regress) => {
            if let Some((line, text)) = target.text_examples.first() {
                return Err(Error::new(
                    ErrorKind::BadValue,
                    format!(
                        "{}, column '{target_name}': '{}' is not a number, so '{target_name}' cannot be \
                         the target of a regression; fix the value or use --task classify{}",
                        place.at(*line),
                        clip(text),
                        comma_hint(text)
                    ),
                ));
            }
            Task::Regress
        }
        Some(Task::Classify) => Task::Classify,
        None if target_is_categorical => Task::Classify,
        None => Task::Regress,
    })
}

/// The distinct finite numbers of column `col`, in increasing order, stopping once
/// there are more than `cap`.
pub(crate) fn distinct_numbers(
    records: &[csv::StringRecord],
    col: usize,
    missing: &Missing,
    mark: DecimalMark,
    cap: usize,
) -> Vec<f64> {
    let mut seen: Vec<f64> = Vec::new();
    for r in records {
        let cell = r[col].trim();
        if missing.is_missing(cell) {
            continue;
        }
        if let Some(v) = read_number(cell, mark) {
            if let Err(at) = seen.binary_search_by(|s| s.total_cmp(&v)) {
                seen.insert(at, v);
                if seen.len() > cap {
                    break;
                }
            }
        }
    }
    seen
}

/// Most distinct whole numbers a numeric outcome may hold before copse stops warning
/// that they may be class codes.
pub const FEW_CODES: usize = 20;

/// Reads a numeric outcome the user gave no task for: exactly two distinct values are
/// two classes (a 0/1 or 1/2 code; a regression on them would report a misleading
/// "variance explained"); a few distinct whole numbers stay numbers, with a note that
/// they may be class codes. Returns the task and the note, if any.
pub(crate) fn numeric_outcome(target: &str, distinct: &[f64]) -> (Task, Option<String>) {
    let whole = distinct.iter().all(|v| v.fract() == 0.0);
    match distinct {
        [a, b] => (
            Task::Classify,
            Some(format!(
                "the target '{target}' holds only two distinct values ({a} and {b}), so copse reads \
                 it as two classes; add --task regress to model it as a number"
            )),
        ),
        _ if whole && distinct.len() <= FEW_CODES => (
            Task::Regress,
            Some(format!(
                "the target '{target}' is read as numbers ({} distinct whole numbers); if these are \
                 class codes, retrain with --task classify",
                distinct.len()
            )),
        ),
        _ => (Task::Regress, None),
    }
}

/// Refuses a regression outcome too large for squared errors to stay finite.
pub(crate) fn check_target_size(
    records: &[csv::StringRecord],
    col: usize,
    missing: &Missing,
    mark: DecimalMark,
    place: &Place,
    target: &str,
) -> Result<()> {
    for r in records {
        let cell = r[col].trim();
        if missing.is_missing(cell) {
            continue;
        }
        if read_number(cell, mark).is_some_and(|v| v.abs() > MAX_TARGET_SIZE) {
            return Err(Error::new(
                ErrorKind::BadValue,
                format!(
                    "{}, column '{target}': {} is too large a value to fit a regression on \
                     (at most 1e100 in size: larger values overflow the squared errors); rescale the target, \
                     for example divide it by a power of ten or take its logarithm",
                    place.at(line_of(r)),
                    clip(cell)
                ),
            ));
        }
    }
    Ok(())
}

/// The labels of one categorical column in natural order, with their codes.
pub(crate) struct Levels {
    pub labels: Vec<String>,
    pub codes: HashMap<String, u32>,
}

/// Labels for every categorical used column, by column index. Cells are trimmed, so
/// labels that differ only in spaces at their ends become one; each column where that
/// happened gets a note naming them (`names` are the headers, `target` the outcome
/// column).
pub(crate) fn levels(
    records: &[csv::StringRecord],
    layout: &Layout,
    categorical: &[bool],
    missing: &Missing,
    names: &[String],
    notes: &mut Vec<String>,
) -> HashMap<usize, Levels> {
    let mut out = HashMap::new();
    for &j in layout.used.iter().filter(|&&j| categorical[j]) {
        // The cells as written: more of them than trimmed labels means some merged.
        let written: HashSet<&str> = records
            .iter()
            .map(|r| &r[j])
            .filter(|cell| !missing.is_missing(cell.trim()))
            .collect();
        let seen: HashSet<&str> = written.iter().map(|c| c.trim()).collect();
        let mut labels: Vec<String> = seen.into_iter().map(str::to_string).collect();
        labels.sort_by(|a, b| natural_order(a, b));
        if written.len() > labels.len() {
            let role = if j == layout.target {
                format!("the target '{}'", names[j])
            } else {
                format!("input '{}'", names[j])
            };
            notes.push(merged_note(&role, &written, &labels));
        }
        let codes = labels
            .iter()
            .enumerate()
            .map(|(i, l)| (l.clone(), i as u32))
            .collect();
        out.insert(j, Levels { labels, codes });
    }
    out
}

/// The note for a column whose cells `written` became the trimmed `labels` with some
/// merged: each merged label with the forms it was written in (at most three shown,
/// escaped so spaces and tabs show between the quotes), in label order.
fn merged_note(role: &str, written: &HashSet<&str>, labels: &[String]) -> String {
    let mut groups: Vec<String> = Vec::new();
    let mut count = 0;
    for label in labels {
        let mut forms: Vec<&str> = written
            .iter()
            .copied()
            .filter(|c| c.trim() == label)
            .collect();
        if forms.len() < 2 {
            continue;
        }
        count += 1;
        if groups.len() < EXAMPLES {
            forms.sort_unstable();
            let forms: Vec<String> = forms.iter().map(|f| format!("'{}'", clip(f))).collect();
            groups.push(format!("{} as '{}'", forms.join(" and "), clip(label)));
        }
    }
    if count > groups.len() {
        groups.push(format!("and {} more", count - groups.len()));
    }
    format!(
        "{role} holds labels that differ only in spaces at their ends, and each such set is read \
         as one: {}; if they mean different things, give them different names",
        groups.join("; ")
    )
}

#[cfg(test)]
mod tests {
    use super::*;

    /// `plain` and `plain ` (and ` plain`) are one class after trimming, and the note
    /// names them; a label written one way only gives no note.
    #[test]
    fn labels_merged_by_trimming_are_named() {
        let rows = ["plain", "plain ", " plain", "ribbed", " smooth", "plain"];
        let records: Vec<csv::StringRecord> = rows
            .iter()
            .map(|c| csv::StringRecord::from(vec![*c]))
            .collect();
        let layout = Layout {
            target: 0,
            inputs: Vec::new(),
            used: vec![0],
            weights: None,
            group: None,
        };
        let mut notes = Vec::new();
        let names = ["finish".to_string()];
        let l = levels(
            &records,
            &layout,
            &[true],
            &Missing::standard(),
            &names,
            &mut notes,
        );
        assert_eq!(l[&0].labels, ["plain", "ribbed", "smooth"]);
        assert_eq!(notes.len(), 1, "{notes:?}");
        assert!(
            notes[0].starts_with("the target 'finish' holds labels that differ only in spaces")
                && notes[0].contains("' plain' and 'plain' and 'plain ' as 'plain'")
                && !notes[0].contains("smooth"),
            "{}",
            notes[0]
        );
        let mut notes = Vec::new();
        levels(
            &records[3..],
            &layout,
            &[true],
            &Missing::standard(),
            &names,
            &mut notes,
        );
        assert!(notes.is_empty(), "{notes:?}");
    }
}
