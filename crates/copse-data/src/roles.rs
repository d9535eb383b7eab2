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
}

fn check_names(input: &CsvInput, names: &[String], flag: &str) -> Result<()> {
    for n in names {
        if input.column(n).is_none() {
            return Err(Error::new(
                ErrorKind::Columns,
                format!(
                    "{flag} names the column '{n}', but {} has no such column; its columns are: {}",
                    input.name(),
                    input.headers().join(", ")
                ),
            ));
        }
    }
    Ok(())
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
    let used: Vec<usize> = (0..headers.len())
        .filter(|&j| !roles.ignore.contains(&headers[j]))
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
    })
}
