//! Rows that rest on no training data: each block's rows flagged when a value lies
//! outside the model's training range or a category was never seen in training, and
//! one warning at the end with the counts per input and a few example values.
use super::blocks::Block;
use crate::error::{CliError, CliResult};
use crate::numbers::count;
use copse_forest::{Familiar, Forest, Unfamiliar};
use ndarray::ArrayView2;

/// Sets `flags` (resized to the block's rows) to whether each row of `b` holds a value
/// outside the training ranges or an unseen category, counting the cells in `ranges`;
/// returns the rows flagged. Unscorable rows are never flagged.
///
/// # Errors
/// None in practice: a block whose values do not fill its rows is an internal fault.
pub(super) fn flag_block(
    ranges: &mut Unfamiliar,
    b: &Block,
    p: usize,
    flags: &mut Vec<bool>,
) -> CliResult<u64> {
    let m = b.m;
    let x = ArrayView2::from_shape((m, p), &b.x[..m * p])
        .map_err(|e| CliError::failure(format!("internal: {e}")))?;
    flags.clear();
    flags.resize(m, false);
    // Unscorable rows hold only missing values, which are never counted.
    ranges.check_block(x, flags);
    let mut flagged = 0;
    for ((flag, &unseen), &blank) in flags.iter_mut().zip(&b.unseen).zip(&b.blank) {
        *flag = !blank && (*flag || unseen);
        flagged += u64::from(*flag);
    }
    Ok(flagged)
}

/// The warning for a run that met `rows` flagged rows out of `scored`: the cells of
/// each numeric input outside its training range, with examples, and the `unseen`
/// cells with unseen categories (named in the encoder's own warning); `None` when no
/// row was flagged.
pub fn warning(
    forest: &Forest,
    ranges: &Unfamiliar,
    unseen: u64,
    rows: u64,
    scored: u64,
) -> Option<String> {
    if rows == 0 {
        return None;
    }
    let meta = forest.meta();
    let mut parts: Vec<String> = ranges
        .counts()
        .iter()
        .enumerate()
        .filter(|&(_, &n)| n > 0)
        .map(|(j, &n)| {
            let ex: Vec<String> = ranges.examples(j).iter().map(f64::to_string).collect();
            let known = match ranges.familiar()[j] {
                Familiar::Range(lo, hi) => format!("trained on {lo} to {hi}"),
                Familiar::Categories(k) => format!("category codes 0 to {}", k.max(1) - 1),
                Familiar::Unknown => "no training values".to_string(),
            };
            format!(
                "{} of '{}' ({known}; such as {})",
                count(n as usize, "cell", "cells"),
                meta[j].name,
                ex.join(", ")
            )
        })
        .collect();
    if unseen > 0 {
        parts.push(format!(
            "{} holding a category never seen in training (named above)",
            count(unseen as usize, "cell", "cells")
        ));
    }
    Some(format!(
        "{rows} of {} {} values outside what the model was trained on: {}; a forest \
         extrapolates flat: these rows rest on no training data, so their predictions \
         are those of the nearest edge of the training data (--flag-unfamiliar marks them \
         in a column 'unfamiliar')",
        count(scored as usize, "row", "rows"),
        if rows == 1 { "holds" } else { "hold" },
        parts.join(", ")
    ))
}
