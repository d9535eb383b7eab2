//! What a forest is: number of trees, inputs tried per split, resampling, value bins,
//! and the rules every tree grows by.
use crate::error::{bad_setting, Error, ErrorKind, Result};
use copse_tree::{Impurity, TreeSettings};
use serde::{Deserialize, Serialize};
use std::fmt;
use std::str::FromStr;

/// How many inputs each split may choose from (a fresh random subset at every node).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize, Default)]
pub enum FeaturesPerSplit {
    /// `max(1, floor(sqrt(p)))` for classes, `max(1, floor(p / 3))` for regression:
    /// the usual random-forest defaults (Breiman 2001; common practice).
    #[default]
    Auto,
    /// `max(1, floor(sqrt(p)))`.
    Sqrt,
    /// `max(1, floor(log2(p)))`.
    Log2,
    /// Every input at every split: bagged trees rather than a random forest.
    All,
    /// Exactly this many inputs (1 to p).
    Count(usize),
    /// `max(1, floor(fraction * p))`, fraction in (0, 1].
    Fraction(f64),
}

impl FeaturesPerSplit {
    /// The number of inputs per split for `p` inputs.
    ///
    /// # Errors
    /// `InvalidSetting` for a count of 0 or above `p`, or a fraction outside (0, 1].
    pub fn resolve(self, p: usize, classification: bool) -> Result<usize> {
        let p_f = p as f64;
        let k = match self {
            FeaturesPerSplit::Auto if classification => p_f.sqrt().floor() as usize,
            FeaturesPerSplit::Auto => p / 3,
            FeaturesPerSplit::Sqrt => p_f.sqrt().floor() as usize,
            FeaturesPerSplit::Log2 => p_f.log2().floor() as usize,
            FeaturesPerSplit::All => p,
            FeaturesPerSplit::Count(k) => {
                if k == 0 || k > p {
                    return bad_setting(format!(
                        "inputs per split is {k}, but the data has {p} inputs; choose 1 to {p}"
                    ));
                }
                k
            }
            FeaturesPerSplit::Fraction(f) => {
                if !(f > 0.0 && f <= 1.0) {
                    return bad_setting(format!(
                        "inputs per split as a fraction must lie in (0, 1]; got {f}"
                    ));
                }
                (f * p_f).floor() as usize
            }
        };
        Ok(k.clamp(1, p.max(1)))
    }
}

impl FromStr for FeaturesPerSplit {
    type Err = Error;

    /// Accepts `auto`, `sqrt`, `log2`, `all`, a whole number (a count) or a number with
    /// a decimal point (a fraction).
    fn from_str(s: &str) -> Result<Self> {
        let t = s.trim().to_ascii_lowercase();
        let v = match t.as_str() {
            "auto" => FeaturesPerSplit::Auto,
            "sqrt" => FeaturesPerSplit::Sqrt,
            "log2" => FeaturesPerSplit::Log2,
            "all" => FeaturesPerSplit::All,
            _ if t.contains('.') => match t.parse::<f64>() {
                Ok(f) => FeaturesPerSplit::Fraction(f),
                Err(_) => return bad_value(s),
            },
            _ => match t.parse::<usize>() {
                Ok(k) => FeaturesPerSplit::Count(k),
                Err(_) => return bad_value(s),
            },
        };
        if let FeaturesPerSplit::Fraction(f) = v {
            if !(f > 0.0 && f <= 1.0) {
                return bad_value(s);
            }
        }
        if v == FeaturesPerSplit::Count(0) {
            return bad_value(s);
        }
        Ok(v)
    }
}

impl fmt::Display for FeaturesPerSplit {
    /// The rule as [`FeaturesPerSplit::from_str`] reads it: `auto`, `sqrt`, `log2`,
    /// `all`, the count, or the fraction.
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            FeaturesPerSplit::Auto => f.write_str("auto"),
            FeaturesPerSplit::Sqrt => f.write_str("sqrt"),
            FeaturesPerSplit::Log2 => f.write_str("log2"),
            FeaturesPerSplit::All => f.write_str("all"),
            FeaturesPerSplit::Count(k) => write!(f, "{k}"),
            FeaturesPerSplit::Fraction(x) => write!(f, "{x}"),
        }
    }
}

fn bad_value<T>(s: &str) -> Result<T> {
    bad_setting(format!(
        "'{s}' is not a number of inputs per split; use sqrt, log2, all, a count such as 3, \
         or a fraction such as 0.33"
    ))
}

/// How each tree's training cases are drawn from the rows with a known outcome.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize, Default)]
pub enum Sampling {
    /// n draws with replacement (n = rows with an outcome); a row drawn k times weighs k.
    #[default]
    Bootstrap,
    /// `round(fraction * n)` rows (at least 1) without replacement, fraction in (0, 1].
    Subsample(f64),
    /// Every row in every tree, weight 1: no out-of-bag rows (for comparison).
    Whole,
}

impl FromStr for Sampling {
    type Err = Error;

    /// Accepts `bootstrap`, `subsample:F` (F in (0, 1]) or `none`.
    fn from_str(s: &str) -> Result<Self> {
        let t = s.trim().to_ascii_lowercase();
        let bad = || {
            bad_setting(format!(
                "'{s}' is not a sampling scheme; use bootstrap, subsample:F with F in (0, 1] \
                 (for example subsample:0.632), or none"
            ))
        };
        match t.as_str() {
            "bootstrap" => Ok(Sampling::Bootstrap),
            "none" => Ok(Sampling::Whole),
            _ => match t.strip_prefix("subsample:").map(str::parse::<f64>) {
                Some(Ok(f)) if f > 0.0 && f <= 1.0 => Ok(Sampling::Subsample(f)),
                _ => bad(),
            },
        }
    }
}

/// How every tree of a forest grows: the tree settings a forest honours. The inputs
/// tried per split are the forest's own ([`ForestSettings::features_per_split`]).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct TreeRules {
    /// Impurity measure for classification (regression always uses variance).
    pub impurity: Impurity,
    /// Deepest level a node may sit at (the root is depth 0); `None` for no limit.
    pub max_depth: Option<usize>,
    /// Fewest cases a leaf may hold (default 1).
    pub min_leaf: f64,
    /// Fewest cases a node needs before a split is tried (default 2).
    pub min_split: f64,
    /// Smallest impurity decrease worth a split (default 0: any strict decrease).
    pub min_decrease: f64,
}

impl Default for TreeRules {
    fn default() -> Self {
        let t = TreeSettings::default();
        TreeRules {
            impurity: t.impurity,
            max_depth: t.max_depth,
            min_leaf: t.min_leaf,
            min_split: t.min_split,
            min_decrease: t.min_decrease,
        }
    }
}

impl TreeRules {
    /// The settings of one tree: these rules, and `features_per_split` inputs drawn at
    /// each node (`None` tries every input).
    pub fn tree_settings(&self, features_per_split: Option<usize>) -> TreeSettings {
        TreeSettings {
            impurity: self.impurity,
            max_depth: self.max_depth,
            min_leaf: self.min_leaf,
            min_split: self.min_split,
            min_decrease: self.min_decrease,
            features_per_split,
        }
    }
}

impl fmt::Display for Sampling {
    /// The scheme as [`Sampling::from_str`] reads it: `bootstrap`, `subsample:F` or
    /// `none`.
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            Sampling::Bootstrap => f.write_str("bootstrap"),
            Sampling::Subsample(x) => write!(f, "subsample:{x}"),
            Sampling::Whole => f.write_str("none"),
        }
    }
}

/// Everything that defines how a forest is trained.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ForestSettings {
    /// Number of trees (at least 1; default 500).
    pub trees: usize,
    /// Inputs tried at each split; [`FeaturesPerSplit::All`] gives bagged trees.
    pub features_per_split: FeaturesPerSplit,
    /// How each tree's cases are drawn.
    pub sampling: Sampling,
    /// Class-balanced sampling: every tree draws the same number of cases from each
    /// class present, namely the size of the smallest class (times the subsample
    /// fraction) (Chen, Liaw & Breiman 2004, "Using random forest to learn imbalanced
    /// data"). Classes only, and not with [`Sampling::Whole`].
    pub balanced: bool,
    /// How every tree grows (impurity, depth, leaf and split sizes).
    pub tree: TreeRules,
    /// Value bins a numeric input may use (2 to 65535; default 255). Missing values
    /// get a bin of their own on top ([`ForestSettings::bin_limit`]).
    pub bins: usize,
    /// Master seed; tree `t` draws only from a generator seeded by `(seed, t)`.
    pub seed: u64,
}

impl Default for ForestSettings {
    fn default() -> Self {
        ForestSettings {
            trees: 500,
            features_per_split: FeaturesPerSplit::Auto,
            sampling: Sampling::Bootstrap,
            balanced: false,
            tree: TreeRules::default(),
            bins: 255,
            seed: 1,
        }
    }
}

impl ForestSettings {
    /// Bins a numeric input may use counting the bin of missing values: [`Self::bins`]
    /// plus one, as [`copse_tree::BinnedData::new`] takes it.
    pub fn bin_limit(&self) -> usize {
        self.bins + 1
    }

    /// Checks every setting that can be checked without the data.
    ///
    /// # Errors
    /// `InvalidSetting` naming the setting and its allowed range.
    pub fn validate(&self) -> Result<()> {
        if self.trees == 0 {
            return bad_setting("the number of trees must be at least 1");
        }
        match self.features_per_split {
            FeaturesPerSplit::Count(0) => {
                return bad_setting("inputs per split must be at least 1");
            }
            FeaturesPerSplit::Fraction(f) if !(f > 0.0 && f <= 1.0) => {
                return bad_setting(format!(
                    "inputs per split as a fraction must lie in (0, 1]; got {f}"
                ));
            }
            _ => {}
        }
        if let Sampling::Subsample(f) = self.sampling {
            if !(f > 0.0 && f <= 1.0) {
                return bad_setting(format!(
                    "the subsample fraction must lie in (0, 1]; got {f}"
                ));
            }
        }
        if self.balanced && self.sampling == Sampling::Whole {
            return bad_setting(
                "balanced sampling draws cases per class, so it needs bootstrap or subsample \
                 sampling, not none",
            );
        }
        if !(2..=65535).contains(&self.bins) {
            return bad_setting(format!(
                "{} value bins is out of range; use 2 to 65535",
                self.bins
            ));
        }
        self.tree
            .tree_settings(None)
            .validate()
            .map_err(|e| Error::new(ErrorKind::InvalidSetting, e.message()))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn defaults_follow_the_usual_rules() {
        // Common practice (Breiman 2001): sqrt(p) for classes, p/3 for regression.
        assert_eq!(
            FeaturesPerSplit::Auto.resolve(20, true).expect("a value"),
            4
        );
        assert_eq!(
            FeaturesPerSplit::Auto.resolve(10, false).expect("a value"),
            3
        );
        assert_eq!(
            FeaturesPerSplit::Auto.resolve(2, false).expect("a value"),
            1
        );
        assert_eq!(
            FeaturesPerSplit::Log2.resolve(40, true).expect("a value"),
            5
        );
        assert_eq!(
            FeaturesPerSplit::Fraction(0.5)
                .resolve(9, true)
                .expect("a value"),
            4
        );
        assert_eq!(FeaturesPerSplit::All.resolve(9, true).expect("a value"), 9);
        assert!(FeaturesPerSplit::Count(10).resolve(9, true).is_err());
    }

    #[test]
    fn words_parse() {
        assert_eq!(
            "sqrt".parse::<FeaturesPerSplit>().expect("a value"),
            FeaturesPerSplit::Sqrt
        );
        assert_eq!(
            "7".parse::<FeaturesPerSplit>().expect("a value"),
            FeaturesPerSplit::Count(7)
        );
        assert_eq!(
            "0.25".parse::<FeaturesPerSplit>().expect("a value"),
            FeaturesPerSplit::Fraction(0.25)
        );
        assert!("0".parse::<FeaturesPerSplit>().is_err());
        assert!("1.5".parse::<FeaturesPerSplit>().is_err());
        assert!("many".parse::<FeaturesPerSplit>().is_err());
        assert_eq!(
            "subsample:0.5".parse::<Sampling>().expect("a value"),
            Sampling::Subsample(0.5)
        );
        assert_eq!(
            "none".parse::<Sampling>().expect("a value"),
            Sampling::Whole
        );
        assert!("subsample:0".parse::<Sampling>().is_err());
    }

    #[test]
    fn validation_names_the_setting() {
        let mut s = ForestSettings {
            trees: 0,
            ..Default::default()
        };
        assert_eq!(
            s.validate().expect_err("an error").kind(),
            ErrorKind::InvalidSetting
        );
        s.trees = 10;
        s.sampling = Sampling::Subsample(1.5);
        assert!(s
            .validate()
            .expect_err("an error")
            .message()
            .contains("subsample"));
        s.sampling = Sampling::Whole;
        s.balanced = true;
        assert!(s.validate().is_err());
        s.balanced = false;
        assert!(s.validate().is_ok());
    }
}
