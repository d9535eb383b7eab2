//! The columns that describe training rows rather than feed the model: case weights
//! (how many cases a row stands for) and group labels (rows that are not independent
//! cases), read from the rows that have a target; and the count of rows that share
//! their inputs with another row, which a group column may be missing for.
use crate::cells::{clip, read_number, Missing};
use crate::error::{Error, ErrorKind, Result};
use crate::infer::line_of;
use crate::place::Place;
use copse_forest::DecimalMark;
use std::collections::HashMap;

/// Share of the rows with a target that must repeat another row's inputs exactly for
/// the report to suggest a group column: at one row in ten, repeated rows are common
/// enough to make the out-of-bag check optimistic by a margin worth a look.
pub const REPEATED_INPUTS_SHARE: f64 = 0.1;

/// Fewest such rows for the suggestion: a handful of coincidences in a small file
/// says nothing.
pub const REPEATED_INPUTS_MIN: usize = 10;

/// Reads the case weight of each record in `rows` from column `col` (named `name`).
///
/// # Errors
/// As for [`read_weight`].
pub(crate) fn read_weights(
    place: &Place,
    rows: &[&csv::StringRecord],
    col: usize,
    name: &str,
    missing: &Missing,
    mark: DecimalMark,
) -> Result<Vec<f64>> {
    rows.iter()
        .map(|r| read_weight(place, r, col, name, missing, mark))
        .collect()
}

/// Reads the case weight of record `r` from column `col` (named `name`).
///
/// # Errors
/// `BadValue` naming the file, line and column for a missing cell, text, or a
/// negative or non-finite number.
pub(crate) fn read_weight(
    place: &Place,
    r: &csv::StringRecord,
    col: usize,
    name: &str,
    missing: &Missing,
    mark: DecimalMark,
) -> Result<f64> {
    let bad = |what: String| {
        Err(Error::new(
            ErrorKind::BadValue,
            format!(
                "{}, column '{name}': {what}; case weights must be numbers of 0 or \
                 more on every row with a target (0 leaves a row out)",
                place.at(line_of(r))
            ),
        ))
    };
    let cell = r.get(col).unwrap_or("").trim();
    if missing.is_missing(cell) {
        return bad("the case weight is missing".to_string());
    }
    match read_number(cell, mark) {
        Some(w) if w >= 0.0 => Ok(w),
        Some(_) => bad(format!("the case weight '{}' is negative", clip(cell))),
        None => bad(format!(
            "the case weight '{}' is not a finite number",
            clip(cell)
        )),
    }
}

/// Reads the group label of each record in `rows` from column `col` (named `name`)
/// and numbers the labels in order of first appearance.
///
/// # Errors
/// `BadValue` naming the file, line and column for a missing label: a row without a
/// group cannot be told apart from the rows it may repeat, so it is refused rather
/// than guessed (give it a label of its own if it stands alone).
pub(crate) fn read_groups(
    place: &Place,
    rows: &[&csv::StringRecord],
    col: usize,
    name: &str,
    missing: &Missing,
) -> Result<Vec<u32>> {
    let mut numbers: HashMap<&str, u32> = HashMap::new();
    let mut out = Vec::with_capacity(rows.len());
    for r in rows {
        let cell = r.get(col).unwrap_or("").trim();
        if missing.is_missing(cell) {
            return Err(Error::new(
                ErrorKind::BadValue,
                format!(
                    "{}, column '{name}': the group label is missing; every row \
                     with a target needs one (a row that stands alone can take a label of its \
                     own)",
                    place.at(line_of(r))
                ),
            ));
        }
        let next = numbers.len() as u32;
        out.push(*numbers.entry(cell).or_insert(next));
    }
    Ok(out)
}

/// Rows whose inputs are exactly those of another row (every cell equal, missing
/// cells alike), among the rows of `x`.
pub fn rows_with_repeated_inputs(x: ndarray::ArrayView2<'_, f64>) -> usize {
    let key = |r: ndarray::ArrayView1<'_, f64>| -> Vec<u64> {
        r.iter()
            .map(|v| if v.is_nan() { u64::MAX } else { v.to_bits() })
            .collect()
    };
    let mut seen: HashMap<Vec<u64>, usize> = HashMap::new();
    for r in x.rows() {
        *seen.entry(key(r)).or_insert(0) += 1;
    }
    seen.values().filter(|&&c| c > 1).sum()
}

/// The remark for `repeated` rows (of `rows`) that share their inputs with another
/// row when no group column was given, if they are many ([`REPEATED_INPUTS_SHARE`],
/// [`REPEATED_INPUTS_MIN`]).
pub(crate) fn repeated_inputs_note(repeated: usize, rows: usize) -> Option<String> {
    let many =
        repeated >= REPEATED_INPUTS_MIN && repeated as f64 >= REPEATED_INPUTS_SHARE * rows as f64;
    many.then(|| {
        format!(
            "{repeated} of the {rows} rows repeat another row's inputs exactly; if they are \
             visits or inspections of one unit, the out-of-bag check is optimistic (a row's \
             twin sits in the trees that judge it): give the unit's column with --group"
        )
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use ndarray::array;

    #[test]
    fn repeated_inputs_are_counted_with_every_copy() {
        let x = array![[1.0, f64::NAN], [1.0, f64::NAN], [2.0, 3.0], [1.0, 0.0]];
        assert_eq!(rows_with_repeated_inputs(x.view()), 2);
        assert!(repeated_inputs_note(9, 20).is_none());
        assert!(repeated_inputs_note(10, 200).is_none());
        assert!(repeated_inputs_note(20, 200).is_some());
    }
}
