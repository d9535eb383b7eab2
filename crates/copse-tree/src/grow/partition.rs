//! Moving a node's rows to their sides of a split: in place by exchanges (general
//! engine), or by copying records into the other buffer (two-class engine).

/// Exchanges positions `i` and `j` of the arrays that travel with the row indices.
pub(super) trait Aligned {
    fn swap(&mut self, i: usize, j: usize);
}

impl<T> Aligned for (&mut [f64], &mut [T]) {
    #[inline(always)]
    fn swap(&mut self, i: usize, j: usize) {
        self.0.swap(i, j);
        self.1.swap(i, j);
    }
}

/// Moves the rows that go left to the front (and their aligned values with them) by
/// exchanges from both ends; returns how many go left. The order within each side
/// follows from this exchange scheme, and the general engine's sums (hence its
/// results to the last bit) depend on it.
#[inline]
pub(super) fn partition<A: Aligned>(
    rows: &mut [u32],
    aligned: &mut A,
    goes_left: impl Fn(u32) -> bool,
) -> usize {
    let (mut i, mut j) = (0, rows.len());
    while i < j {
        if goes_left(rows[i]) {
            i += 1;
        } else {
            j -= 1;
            rows.swap(i, j);
            aligned.swap(i, j);
        }
    }
    i
}

/// Copies records of `rec` words from `src` to `dst`: those whose word `word` goes
/// left to the front in order, the others to the back in reverse order. Returns the
/// number that went left and the sum of their cells (word 0).
pub(super) fn move_records(
    src: &[u64],
    dst: &mut [u64],
    rec: usize,
    word: usize,
    goes_left: impl Fn(u64) -> bool,
) -> (usize, u64) {
    // Fixed record sizes let the compiler copy a record as a few moves.
    match rec {
        2 => move_fixed::<2>(src, dst, word, goes_left),
        3 => move_fixed::<3>(src, dst, word, goes_left),
        4 => move_fixed::<4>(src, dst, word, goes_left),
        5 => move_fixed::<5>(src, dst, word, goes_left),
        6 => move_fixed::<6>(src, dst, word, goes_left),
        _ => {
            let m = src.len() / rec;
            let (mut k, mut j) = (0, m);
            for r in src.chunks_exact(rec) {
                let left = goes_left(r[word]);
                let d = if left { k } else { j - 1 };
                dst[d * rec..(d + 1) * rec].copy_from_slice(r);
                k += usize::from(left);
                j -= usize::from(!left);
            }
            (k, cell_sum(&dst[..k * rec], rec))
        }
    }
}

#[inline]
fn move_fixed<const R: usize>(
    src: &[u64],
    dst: &mut [u64],
    word: usize,
    goes_left: impl Fn(u64) -> bool,
) -> (usize, u64) {
    let m = src.len() / R;
    let (mut k, mut j) = (0, m);
    for r in src.chunks_exact(R) {
        let Ok(r) = <&[u64; R]>::try_from(r) else {
            continue;
        };
        let left = goes_left(r[word % R]);
        // Written to its place without a branch on the side, which is unpredictable.
        let d = if left { k } else { j - 1 };
        if let Some(slot) = dst.get_mut(d * R..d * R + R) {
            slot.copy_from_slice(r);
        }
        k += usize::from(left);
        j -= usize::from(!left);
    }
    (k, cell_sum(&dst[..k * R], R))
}

/// Sum of the cells (word 0) of records of `rec` words. Summed after the move rather
/// than during it: the compiler turned the masked add inside the move into a branch
/// on the side, mispredicted about every other row.
#[inline]
fn cell_sum(records: &[u64], rec: usize) -> u64 {
    records.iter().step_by(rec).sum()
}
