//! Draw counts: how many times each tree drew each training row, kept in the model
//! when asked for at training time ([`crate::TrainOptions::keep_draws`]), because the
//! standard errors of predictions ([`crate::uncertainty`]) need them.
//!
//! Storage: one byte per (training row, tree), row by row, so a model of `B` trees on
//! `n` rows grows by `n * B` bytes (500 trees on 10 000 rows: 5 MB). A count above 255
//! is stored as 255. That cannot happen with bootstrap sampling of fewer than 255 rows,
//! and for larger data one row being drawn 255 times out of `n` draws has probability
//! below `1 / 255!`; subsampling without replacement gives counts of 0 or 1. The number
//! of saturated entries is recorded ([`Draws::saturated`]), so a caller can refuse them.
use crate::error::{Error, ErrorKind, Result};
use serde::{Deserialize, Serialize};

/// Times each tree drew each training row.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Draws {
    rows: usize,
    trees: usize,
    population: usize,
    saturated: usize,
    /// Row-major: row `i`'s counts for trees `0..trees` sit at `i * trees ..`.
    counts: Vec<u8>,
}

impl Draws {
    /// Builds the row-major table from per-tree count columns (one `Vec` of `rows`
    /// counts per tree, in tree order). `population` is the number of rows each
    /// bootstrap sample was drawn from (rows with a known outcome).
    pub(crate) fn from_tree_columns(
        columns: &[Vec<u8>],
        rows: usize,
        population: usize,
        saturated: usize,
    ) -> Self {
        let trees = columns.len();
        let mut counts = vec![0u8; rows * trees];
        for (t, col) in columns.iter().enumerate() {
            for (i, &c) in col.iter().enumerate().take(rows) {
                counts[i * trees + t] = c;
            }
        }
        Draws {
            rows,
            trees,
            population,
            saturated,
            counts,
        }
    }

    /// Converts one tree's case weights (whole numbers of draws) to stored counts;
    /// returns how many were above 255 and so saturated.
    pub(crate) fn column(weights: &[f64]) -> (Vec<u8>, usize) {
        let mut sat = 0;
        let col = weights
            .iter()
            .map(|&w| {
                if w > 255.0 {
                    sat += 1;
                }
                w.clamp(0.0, 255.0).round() as u8
            })
            .collect();
        (col, sat)
    }

    /// Number of training rows (including rows whose outcome was missing, which are
    /// never drawn).
    pub fn rows(&self) -> usize {
        self.rows
    }

    /// Number of trees.
    pub fn trees(&self) -> usize {
        self.trees
    }

    /// Rows with a known outcome: the population every tree's sample was drawn from.
    pub fn population(&self) -> usize {
        self.population
    }

    /// Entries whose true count exceeded 255 and is stored as 255.
    pub fn saturated(&self) -> usize {
        self.saturated
    }

    /// Times tree `tree` drew row `row`.
    ///
    /// # Panics
    /// When `row >= rows()` or `tree >= trees()`.
    pub fn count(&self, row: usize, tree: usize) -> u8 {
        assert!(tree < self.trees, "tree index out of range");
        self.counts[row * self.trees + tree]
    }

    /// Row `row`'s counts for every tree, in tree order.
    ///
    /// # Panics
    /// When `row >= rows()`.
    pub fn row(&self, row: usize) -> &[u8] {
        &self.counts[row * self.trees..(row + 1) * self.trees]
    }

    /// Bytes the table occupies in memory.
    pub fn heap_bytes(&self) -> usize {
        self.counts.capacity()
    }

    /// Checks the table fits a model of `rows` training rows and `trees` trees.
    pub(crate) fn check(&self, rows: usize, trees: usize) -> Result<()> {
        if self.rows != rows
            || self.trees != trees
            || self.counts.len() != rows.saturating_mul(trees)
            || self.population > rows
        {
            return Err(Error::new(
                ErrorKind::InvalidModel,
                format!(
                    "the model is inconsistent: its draw table holds {} counts for {} rows \
                     and {} trees, but the model has {rows} rows and {trees} trees; retrain or \
                     use another model file",
                    self.counts.len(),
                    self.rows,
                    self.trees
                ),
            ));
        }
        Ok(())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn columns_become_rows_and_counts_saturate() {
        let (a, sa) = Draws::column(&[0.0, 2.0, 300.0]);
        let (b, sb) = Draws::column(&[1.0, 0.0, 1.0]);
        assert_eq!((sa, sb), (1, 0));
        let t = Draws::from_tree_columns(&[a, b], 3, 3, sa + sb);
        assert_eq!(t.row(0), &[0, 1]);
        assert_eq!(t.row(1), &[2, 0]);
        assert_eq!(t.row(2), &[255, 1]);
        assert_eq!(t.count(2, 0), 255);
        assert_eq!(t.saturated(), 1);
        assert!(t.check(3, 2).is_ok());
        assert!(t.check(3, 3).is_err());
    }
}
