//! Column roles: which column is the outcome, which are left out, which are forced to
//! one kind, and the check of those roles against a file's header.
use crate::csv_input::CsvInput;
use crate::error::{Error, ErrorKind, Result};
use copse_forest::Task;

/// The roles the user gives to columns.
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
    /// Column of case weights (not an input), if any.
    pub weights: Option<String>,
    /// Column of row group labels (not an input), if any.
    pub group: Option<String>,
}

impl Roles {
    /// Roles with `target` as the outcome and every other column an input of
    /// inferred kind.
    pub fn target(target: impl Into<String>) -> Roles {
        Roles {
            target: target.into(),
            ..Roles::default()
        }
    }
}

/// Where the roles put the columns of one file.
pub(crate) struct Layout {
    /// Index of the outcome column.
    pub target: usize,
    /// Columns in use (inputs and the outcome), in file order.
    pub used: Vec<usize>,
    /// Input columns in file order (model order).
    pub inputs: Vec<usize>,
    /// Index of the case weights column.
    pub weights: Option<usize>,
    /// Index of the group column.
    pub group: Option<usize>,
}

fn check_names(input: &CsvInput, names: &[String], flag: &str) -> Result<()> {
    for n in names {
        if input.column(n).is_none() {
            let guess = near_match(n, input.headers())
                .map(|h| format!("did you mean '{h}'? "))
                .unwrap_or_default();
            return Err(Error::new(
                ErrorKind::Columns,
                format!(
                    "{flag} names the column '{n}', but {} has no such column; {guess}its columns \
                     are: {}",
                    input.name(),
                    input.headers().join(", ")
                ),
            ));
        }
    }
    Ok(())
}

/// The column a mistyped name most likely meant: one that differs only in letter case,
/// else the nearest within a small edit distance (at most 2, and at most a third of the
/// name's length, so short names do not match anything).
fn near_match<'a>(name: &str, headers: &'a [String]) -> Option<&'a str> {
    let lower = name.to_lowercase();
    if let Some(h) = headers.iter().find(|h| h.to_lowercase() == lower) {
        return Some(h);
    }
    let limit = (name.chars().count() / 3).min(2);
    headers
        .iter()
        .map(|h| (edit_distance(&lower, &h.to_lowercase()), h))
        .filter(|&(d, _)| d <= limit)
        .min_by_key(|&(d, _)| d)
        .map(|(_, h)| h.as_str())
}

/// Levenshtein distance: the fewest single-character insertions, deletions and
/// substitutions that turn `a` into `b` (Levenshtein 1966), by the usual row-by-row
/// dynamic programme.
fn edit_distance(a: &str, b: &str) -> usize {
    let b: Vec<char> = b.chars().collect();
    let mut row: Vec<usize> = (0..=b.len()).collect();
    for (i, ca) in a.chars().enumerate() {
        let mut diagonal = row[0];
        row[0] = i + 1;
        for (j, &cb) in b.iter().enumerate() {
            let above = row[j + 1];
            row[j + 1] = (above + 1)
                .min(row[j] + 1)
                .min(diagonal + usize::from(ca != cb));
            diagonal = above;
        }
    }
    row[b.len()]
}

/// Checks `roles` against `input`'s header and lays the columns out.
///
/// # Errors
/// `Columns` for a name the file lacks, contradictory roles, or no input left.
pub(crate) fn lay_out(input: &CsvInput, roles: &Roles) -> Result<Layout> {
    let columns = |m: String| Err(Error::new(ErrorKind::Columns, m));
    if let Some(hint) = input.delimiter_hint() {
        if input.column(&roles.target).is_none() {
            return columns(hint);
        }
    }
    check_names(input, std::slice::from_ref(&roles.target), "--target")?;
    check_names(input, &roles.ignore, "--ignore")?;
    check_names(input, &roles.categorical, "--categorical")?;
    check_names(input, &roles.numeric, "--numeric")?;
    check_names(input, roles.weights.as_slice(), "--weights")?;
    check_names(input, roles.group.as_slice(), "--group")?;
    for (flag, col) in [("--weights", &roles.weights), ("--group", &roles.group)] {
        let Some(c) = col else { continue };
        if c == &roles.target {
            return columns(format!(
                "'{c}' is both the target and the {flag} column; choose another column"
            ));
        }
        if roles.ignore.contains(c) || roles.categorical.contains(c) || roles.numeric.contains(c) {
            return columns(format!(
                "'{c}' is the {flag} column, which is never an input; drop it from --ignore, \
                 --categorical and --numeric"
            ));
        }
    }
    if roles.weights.is_some() && roles.weights == roles.group {
        return columns(format!(
            "'{}' is both the --weights and the --group column; they must differ",
            roles.weights.as_deref().unwrap_or("")
        ));
    }
    if roles.ignore.contains(&roles.target) {
        return columns(format!(
            "'{}' is both the target and ignored; drop it from --ignore",
            roles.target
        ));
    }
    if let Some(c) = roles.categorical.iter().find(|c| roles.numeric.contains(c)) {
        return columns(format!(
            "'{c}' is listed in both --categorical and --numeric; keep it in one"
        ));
    }
    if roles.task == Some(Task::Regress) && roles.categorical.contains(&roles.target) {
        return columns(format!(
            "'{}' is listed in --categorical but --task regress needs a numeric target",
            roles.target
        ));
    }
    let headers = input.headers();
    let target = input.column(&roles.target).unwrap_or(0);
    let weights = roles.weights.as_deref().and_then(|c| input.column(c));
    let group = roles.group.as_deref().and_then(|c| input.column(c));
    let used: Vec<usize> = (0..headers.len())
        .filter(|&j| !roles.ignore.contains(&headers[j]))
        .filter(|&j| Some(j) != weights && Some(j) != group)
        .collect();
    let inputs: Vec<usize> = used.iter().copied().filter(|&j| j != target).collect();
    if inputs.is_empty() {
        return columns(format!(
            "{} has no input columns left besides the target '{}'; at least one input is needed",
            input.name(),
            roles.target
        ));
    }
    Ok(Layout {
        target,
        used,
        inputs,
        weights,
        group,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn edit_distances() {
        assert_eq!(edit_distance("kitten", "sitting"), 3);
        assert_eq!(edit_distance("", "abc"), 3);
        assert_eq!(edit_distance("species", "species"), 0);
        assert_eq!(edit_distance("specis", "species"), 1);
    }

    #[test]
    fn near_matches_follow_case_then_small_typos() {
        let headers: Vec<String> = ["species", "island", "bill_length_mm", "sex"]
            .iter()
            .map(|s| s.to_string())
            .collect();
        assert_eq!(near_match("Species", &headers), Some("species"));
        assert_eq!(near_match("specis", &headers), Some("species"));
        assert_eq!(
            near_match("bill_lenght_mm", &headers),
            Some("bill_length_mm")
        );
        // Short names match only by letter case.
        assert_eq!(near_match("SEX", &headers), Some("sex"));
        assert_eq!(near_match("age", &headers), None);
        assert_eq!(near_match("colour", &headers), None);
    }
}
