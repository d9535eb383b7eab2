//! Rows copied out of the data into contiguous blocks, so that the importance passes
//! read them in order and send several down a tree at a time.
use ndarray::ArrayView2;

/// Rows scored together by the importance passes: few enough that their values stay
/// in cache beside a tree. Does not change any result.
pub(crate) const STRETCH: usize = 256;

/// Copies rows `rows` of `x` into `dst`, row-major, and into `columns` if given, input
/// by input (`columns[j * m + k]` is input `j` of row `rows[k]`).
pub(crate) fn copy_rows(
    x: ArrayView2<'_, f64>,
    rows: &[usize],
    dst: &mut [f64],
    mut columns: Option<&mut [f64]>,
) {
    let (m, p) = (rows.len(), x.ncols());
    if p == 0 {
        return;
    }
    for (k, (out, &i)) in dst.chunks_exact_mut(p).zip(rows).enumerate() {
        let row = x.row(i);
        match row.as_slice() {
            Some(s) => out.copy_from_slice(s),
            None => out.iter_mut().zip(row.iter()).for_each(|(d, &v)| *d = v),
        }
        if let Some(columns) = columns.as_deref_mut() {
            for (j, &v) in out.iter().enumerate() {
                columns[j * m + k] = v;
            }
        }
    }
}
