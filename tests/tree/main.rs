//! Checks of the single-tree core against published worked examples, open data sets and
//! facts of the trade. Each check names its source beside it; "common practice" marks a
//! fact of the trade with no single source, "computed" a value worked out from a
//! definition. The data files and their provenance are in `tests/data/README.md`.
//!
//! One test binary; its modules: checks against published examples and open data
//! (`published`), facts of the trade on small data sets of our own (`practice`), the
//! grower's documented rules (`rules`), randomized cut points (`random_cuts`), typed errors and robustness (`errors`),
//! property tests (`properties`), and the slow reference they compare the grower with
//! (`reference`).
mod errors;
mod practice;
mod properties;
mod published;
mod random_cuts;
mod reference;
mod rules;
#[path = "../support/mod.rs"]
mod support;

use copse_tree::{BinnedData, FeatureMeta, Grower, OutcomeView, Tree, TreeSettings};
use ndarray::Array2;

// ---------------------------------------------------------------------------------------
// Reading the data files
// ---------------------------------------------------------------------------------------

/// A data file encoded for the tree: inputs, their descriptions, class codes and labels.
struct Encoded {
    x: Array2<f64>,
    meta: Vec<FeatureMeta>,
    y: Vec<u32>,
    classes: Vec<String>,
}

impl Encoded {
    fn feature(&self, name: &str) -> usize {
        self.meta
            .iter()
            .position(|m| m.name == name)
            .expect("input name")
    }

    fn code(&self, feature: &str, level: &str) -> f64 {
        match &self.meta[self.feature(feature)].kind {
            copse_tree::FeatureKind::Categorical { levels } => {
                levels.iter().position(|l| l == level).expect("level") as f64
            }
            copse_tree::FeatureKind::Numeric => panic!("{feature} is numeric"),
        }
    }

    fn class(&self, label: &str) -> u32 {
        self.classes.iter().position(|c| c == label).expect("class") as u32
    }

    /// Weighted class counts of the rows where `feature` has category `level`.
    fn class_counts_where(&self, feature: &str, level: &str) -> Vec<f64> {
        let (j, code) = (self.feature(feature), self.code(feature, level));
        let mut c = vec![0.0; self.classes.len()];
        for (i, &y) in self.y.iter().enumerate() {
            if self.x[[i, j]] == code {
                c[y as usize] += 1.0;
            }
        }
        c
    }

    fn class_counts(&self) -> Vec<f64> {
        let mut c = vec![0.0; self.classes.len()];
        for &y in &self.y {
            c[y as usize] += 1.0;
        }
        c
    }

    /// The same data restricted to the rows where `keep` holds.
    fn subset(&self, keep: impl Fn(usize) -> bool) -> Encoded {
        let rows: Vec<usize> = (0..self.y.len()).filter(|&i| keep(i)).collect();
        Encoded {
            x: self.x.select(ndarray::Axis(0), &rows),
            meta: self.meta.clone(),
            y: rows.iter().map(|&i| self.y[i]).collect(),
            classes: self.classes.clone(),
        }
    }

    fn grow(&self, settings: TreeSettings) -> Tree {
        let data = BinnedData::new(self.x.view(), &self.meta, 256).expect("bins");
        let target = OutcomeView::classes(&self.y, self.classes.len()).expect("target");
        Grower::new(settings)
            .grow(&data, &target, &vec![1.0; self.y.len()], 1)
            .expect("grows")
    }
}

/// Reads `tests/data/<name>` (see `support::read_data_set`) with `target` as the class,
/// its distinct cells in sorted order as the class labels.
fn encode(name: &str, target: &str) -> Encoded {
    let d = support::read_data_set(name, target);
    let mut classes = d.target.clone();
    classes.sort();
    classes.dedup();
    let y = d
        .target
        .iter()
        .map(|t| classes.iter().position(|c| c == t).expect("class") as u32)
        .collect();
    Encoded {
        x: d.x,
        meta: d.meta,
        y,
        classes,
    }
}
