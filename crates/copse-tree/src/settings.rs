//! Settings that bound how a tree grows.
use crate::error::{Error, ErrorKind, Result};
use crate::impurity::Impurity;
use serde::{Deserialize, Serialize};

/// What the grower may do. Case counts are weighted: a row drawn twice by a bootstrap
/// counts as two cases.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct TreeSettings {
    /// Impurity measure for classification (regression always uses variance).
    pub impurity: Impurity,
    /// Deepest level a node may sit at (the root is depth 0); `None` for no limit.
    pub max_depth: Option<usize>,
    /// Fewest cases a leaf may hold (default 1).
    pub min_leaf: f64,
    /// Fewest cases a node needs before a split is tried (default 2).
    pub min_split: f64,
    /// Smallest decrease of the node's impurity, `i(t) - pL i(tL) - pR i(tR)`, worth a
    /// split (default 0: any strict decrease).
    pub min_decrease: f64,
    /// Number of inputs drawn at random at each node; `None` tries every input.
    pub features_per_split: Option<usize>,
    /// How the cut point is chosen on each input tried (default: the best one).
    pub cuts: CutChoice,
}

/// How the grower chooses the cut point on each input it tries at a node.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize, Default)]
pub enum CutChoice {
    /// Every cut of the input is scored and the best is kept (the usual search).
    #[default]
    Best,
    /// One cut is drawn at random per input and only that one is scored; the best of
    /// the drawn cuts over the inputs tried is kept (Geurts, Ernst & Wehenkel 2006,
    /// "Extremely randomized trees", Machine Learning 63:3-42). Numeric input: a value
    /// drawn uniformly between the centres of the node's lowest and highest occupied
    /// bins (a bin's centre is the midpoint of its lowest and highest training value,
    /// so with one value per bin this is the paper's draw between the node's minimum
    /// and maximum); bins whose centre lies below the draw go left. Categorical input:
    /// each category present in the node goes left or right by a fair coin, drawn
    /// again until both sides have one (a uniformly random non-trivial subset).
    Random,
}

impl CutChoice {
    /// The word copse uses for the choice: `best` or `random`.
    pub fn word(self) -> &'static str {
        match self {
            CutChoice::Best => "best",
            CutChoice::Random => "random",
        }
    }
}

impl Default for TreeSettings {
    fn default() -> Self {
        TreeSettings {
            impurity: Impurity::Gini,
            max_depth: None,
            min_leaf: 1.0,
            min_split: 2.0,
            min_decrease: 0.0,
            features_per_split: None,
            cuts: CutChoice::Best,
        }
    }
}

impl TreeSettings {
    /// Checks every setting is in range.
    ///
    /// # Errors
    /// `InvalidSetting` naming the setting and its allowed range.
    pub fn validate(&self) -> Result<()> {
        let bad = |m: &str| Err(Error::new(ErrorKind::InvalidSetting, m.to_string()));
        if !(self.min_leaf.is_finite() && self.min_leaf > 0.0) {
            return bad("min leaf size must be a positive number of cases");
        }
        if !(self.min_split.is_finite() && self.min_split >= 0.0) {
            return bad("min split size must be a non-negative number of cases");
        }
        if !(self.min_decrease.is_finite() && self.min_decrease >= 0.0) {
            return bad("min impurity decrease must be a non-negative number");
        }
        if self.features_per_split == Some(0) {
            return bad("inputs tried per split must be at least 1");
        }
        Ok(())
    }
}
