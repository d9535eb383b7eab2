//! What a forest is: number of trees, inputs tried per split, resampling, value bins,
//! and the rules every tree grows by.
use crate::error::{bad_setting, Error, ErrorKind, Result};
use copse_tree::{CutChoice, Impurity, TreeSettings};
use serde::{Deserialize, Serialize};
use std::fmt;
use std::str::FromStr;

/// How many inputs each split may choose from (a fresh random subset at every node).
///
/// Written and read as a count (`4`), a share of the inputs (`33%`), or one of the
/// words `default`, `root`, `log` and `every` (see [`FeaturesPerSplit::from_str`]).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize, Default)]
pub enum FeaturesPerSplit {
    /// `default`: the square root of the inputs for classes, a third of them for
    /// numbers (Breiman 2001; common practice).
    #[default]
    Default,
    /// `root`: `max(1, floor(sqrt(p)))`.
    Root,
    /// `log`: `max(1, floor(log2(p)))`.
    Log,
    /// `every`: every input at every split, which gives bagged trees rather than a
    /// random forest.
    Every,
    /// Exactly this many inputs (1 to p).
    Count(usize),
    /// `max(1, floor(share * p))`, share in (0, 1], written as a percentage (`33%`).
    Share(f64),
}

impl FeaturesPerSplit {
    /// The number of inputs per split for `p` inputs.
    ///
    /// # Errors
    /// `InvalidSetting` for a count of 0 or above `p`, or a share outside (0, 1].
    pub fn resolve(self, p: usize, classification: bool) -> Result<usize> {
        let p_f = p as f64;
        let k = match self {
            FeaturesPerSplit::Default if classification => p_f.sqrt().floor() as usize,
            FeaturesPerSplit::Default => p / 3,
            FeaturesPerSplit::Root => p_f.sqrt().floor() as usize,
            FeaturesPerSplit::Log => p_f.log2().floor() as usize,
            FeaturesPerSplit::Every => p,
            FeaturesPerSplit::Count(k) => {
                if k == 0 || k > p {
                    return bad_setting(format!(
                        "inputs per split is {k}, but the data has {p} inputs; choose 1 to {p}"
                    ));
                }
                k
            }
            FeaturesPerSplit::Share(f) => {
                if !(f > 0.0 && f <= 1.0) {
                    return bad_setting(format!(
                        "inputs per split as a share must lie above 0% and at most 100%; got {}",
                        FeaturesPerSplit::Share(f)
                    ));
                }
                (f * p_f).floor() as usize
            }
        };
        // The default never tries a single input per split when there are three or
        // more: one input makes every split's choice of input blind, and on a 4-input
        // regression a third (rounded to 1) made the forest worse than a single tree.
        let floor = if self == FeaturesPerSplit::Default && p >= 3 {
            2
        } else {
            1
        };
        Ok(k.clamp(floor, p.max(1)))
    }

    /// Whether the default rule was raised to its floor of 2 inputs for `p` inputs.
    pub fn default_raised(self, p: usize, classification: bool) -> bool {
        let p_f = p as f64;
        let plain = if classification {
            p_f.sqrt().floor() as usize
        } else {
            p / 3
        };
        self == FeaturesPerSplit::Default && p >= 3 && plain < 2
    }
}

/// Spellings the rule is not written in, each with the spelling that says the same.
const NOT_OUR_SPELLING: [(&str, &str); 4] = [
    ("sqrt", "root"),
    ("log2", "log"),
    ("all", "every"),
    ("auto", "default"),
];

impl FromStr for FeaturesPerSplit {
    type Err = Error;

    /// Reads a count (`4`), a share of the inputs (`33%`, above 0% and at most 100%),
    /// or one of the words `default`, `root`, `log` and `every`. Other spellings, such
    /// as a share written as a decimal (`0.33`), are refused with the spelling to use.
    fn from_str(s: &str) -> Result<Self> {
        let t = s.trim().to_ascii_lowercase();
        let v = match t.as_str() {
            "default" => FeaturesPerSplit::Default,
            "root" => FeaturesPerSplit::Root,
            "log" => FeaturesPerSplit::Log,
            "every" => FeaturesPerSplit::Every,
            _ => {
                if let Some((_, ours)) = NOT_OUR_SPELLING.iter().find(|(w, _)| *w == t) {
                    return bad_setting(format!(
                        "'{s}' is not how copse writes inputs per split; write '{ours}'"
                    ));
                }
                if let Some(number) = t.strip_suffix('%') {
                    match number.trim().parse::<f64>() {
                        Ok(x) if x > 0.0 && x <= 100.0 => FeaturesPerSplit::Share(x / 100.0),
                        _ => return bad_value(s),
                    }
                } else if t.contains('.') {
                    // A decimal share: say it as a percentage.
                    return match t.parse::<f64>() {
                        Ok(x) if x > 0.0 && x <= 1.0 => bad_setting(format!(
                            "'{s}' is not how copse writes a share of the inputs; write it as \
                             a percentage, '{}'",
                            FeaturesPerSplit::Share(x)
                        )),
                        _ => bad_value(s),
                    };
                } else {
                    match t.parse::<usize>() {
                        Ok(k) if k > 0 => FeaturesPerSplit::Count(k),
                        _ => return bad_value(s),
                    }
                }
            }
        };
        Ok(v)
    }
}

impl fmt::Display for FeaturesPerSplit {
    /// The rule as [`FeaturesPerSplit::from_str`] reads it: `default`, `root`, `log`,
    /// `every`, the count, or the share as a percentage.
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            FeaturesPerSplit::Default => f.write_str("default"),
            FeaturesPerSplit::Root => f.write_str("root"),
            FeaturesPerSplit::Log => f.write_str("log"),
            FeaturesPerSplit::Every => f.write_str("every"),
            FeaturesPerSplit::Count(k) => write!(f, "{k}"),
            // Rounded to a millionth of a percent, so 0.33 reads back as 33%.
            FeaturesPerSplit::Share(x) => write!(f, "{}%", (x * 1e8).round() / 1e6),
        }
    }
}

fn bad_value<T>(s: &str) -> Result<T> {
    bad_setting(format!(
        "'{s}' is not a number of inputs per split; use a count such as 4, a share such as \
         33%, or one of default, root, log, every"
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

impl Sampling {
    /// The usual scheme for trees cut as `cuts` says: a bootstrap for the best cut
    /// (Breiman 2001), every row in every tree for randomized cut points, as Geurts,
    /// Ernst & Wehenkel (2006) grow them (the random cuts alone make the trees
    /// differ). Without resampling no row is out of bag, so there is no out-of-bag
    /// estimate; judge such a forest on held-out rows.
    pub fn usual_for(cuts: CutChoice) -> Sampling {
        match cuts {
            CutChoice::Best => Sampling::Bootstrap,
            CutChoice::Random => Sampling::Whole,
        }
    }
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
    /// How the cut point is chosen on each input tried: the best one (default), or one
    /// drawn at random ([`CutChoice::Random`], usually with [`Sampling::Whole`]; see
    /// [`Sampling::usual_for`]).
    pub cuts: CutChoice,
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
            cuts: t.cuts,
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
            cuts: self.cuts,
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
    /// Inputs tried at each split; [`FeaturesPerSplit::Every`] gives bagged trees.
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
            features_per_split: FeaturesPerSplit::Default,
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
            FeaturesPerSplit::Share(f) if !(f > 0.0 && f <= 1.0) => {
                return bad_setting(format!(
                    "inputs per split as a share must lie above 0% and at most 100%; got {}",
                    FeaturesPerSplit::Share(f)
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

    /// The default never rounds to one input per split with three or more inputs.
    #[test]
    fn the_default_tries_at_least_two_inputs() {
        let d = FeaturesPerSplit::Default;
        assert_eq!(d.resolve(4, false).unwrap(), 2); // a third of 4 rounds to 1
        assert_eq!(d.resolve(3, true).unwrap(), 2); // the root of 3 rounds to 1
        assert_eq!(d.resolve(2, false).unwrap(), 1); // two inputs: no floor
        assert_eq!(d.resolve(30, false).unwrap(), 10);
        assert!(d.default_raised(4, false) && !d.default_raised(30, false));
        assert_eq!(FeaturesPerSplit::Count(1).resolve(4, false).unwrap(), 1);
    }

    #[test]
    fn defaults_follow_the_usual_rules() {
        // Common practice (Breiman 2001): sqrt(p) for classes, p/3 for regression.
        let k = |rule: FeaturesPerSplit, p: usize, classes: bool| {
            rule.resolve(p, classes).expect("a value")
        };
        assert_eq!(k(FeaturesPerSplit::Default, 20, true), 4);
        assert_eq!(k(FeaturesPerSplit::Default, 10, false), 3);
        assert_eq!(k(FeaturesPerSplit::Default, 2, false), 1);
        assert_eq!(k(FeaturesPerSplit::Root, 20, false), 4);
        assert_eq!(k(FeaturesPerSplit::Log, 40, true), 5);
        assert_eq!(k(FeaturesPerSplit::Share(0.5), 9, true), 4);
        assert_eq!(k(FeaturesPerSplit::Every, 9, true), 9);
        assert!(FeaturesPerSplit::Count(10).resolve(9, true).is_err());
    }

    #[test]
    fn rules_read_back_what_they_write() {
        let read = |s: &str| s.parse::<FeaturesPerSplit>().expect("a rule");
        assert_eq!(read("7"), FeaturesPerSplit::Count(7));
        assert_eq!(read("33%"), FeaturesPerSplit::Share(0.33));
        assert_eq!(read("100%"), FeaturesPerSplit::Share(1.0));
        assert_eq!(read("Root"), FeaturesPerSplit::Root);
        for rule in [
            FeaturesPerSplit::Default,
            FeaturesPerSplit::Root,
            FeaturesPerSplit::Log,
            FeaturesPerSplit::Every,
            FeaturesPerSplit::Count(3),
            FeaturesPerSplit::Share(0.33),
            FeaturesPerSplit::Share(0.125),
        ] {
            assert_eq!(read(&rule.to_string()), rule, "{rule}");
        }
        assert_eq!(FeaturesPerSplit::Share(0.33).to_string(), "33%");
        for bad in ["0", "0%", "101%", "-5%", "many", "1.5", ""] {
            assert!(bad.parse::<FeaturesPerSplit>().is_err(), "{bad}");
        }
    }

    #[test]
    fn other_spellings_are_refused_with_ours() {
        for (theirs, ours) in [
            ("sqrt", "'root'"),
            ("log2", "'log'"),
            ("all", "'every'"),
            ("auto", "'default'"),
            ("0.33", "'33%'"),
            ("0.5", "'50%'"),
        ] {
            let e = theirs.parse::<FeaturesPerSplit>().expect_err("refused");
            assert_eq!(e.kind(), ErrorKind::InvalidSetting);
            assert!(e.message().contains(ours), "{theirs}: {}", e.message());
        }
    }

    #[test]
    fn sampling_words_parse() {
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
