//! A candidate split as the search keeps it (the cut, its gain and side weights, the
//! tie rules between candidates), and what the search needs to know about the outcome.
use crate::impurity::{variance_score, Impurity};

/// Side of a category in the best split found so far.
pub(super) const ABSENT: u8 = 0;
pub(super) const LEFT: u8 = 1;
pub(super) const RIGHT: u8 = 2;

#[derive(Debug, Clone, Copy)]
pub(super) enum Cut {
    /// Value bins `<= a` go left; `b` is the next bin present in the node.
    Threshold { a: usize, b: usize },
    /// Sides recorded in `best_side`.
    Subset,
}

#[derive(Debug, Clone, Copy)]
pub(super) struct Best {
    pub(super) gain: f64,
    pub(super) feature: usize,
    pub(super) cut: Cut,
    pub(super) missing_left: bool,
    pub(super) has_missing: bool,
    pub(super) w_left: f64,
    pub(super) w_right: f64,
}

impl Best {
    /// Whether a candidate of input `f` with `gain` replaces the best so far: a larger
    /// decrease, or an equal one on a lower input.
    #[inline(always)]
    pub(super) fn beaten_by(best: &Option<Best>, gain: f64, f: usize) -> bool {
        match best {
            None => true,
            Some(cur) => gain > cur.gain || (gain == cur.gain && f < cur.feature),
        }
    }

    /// Where missing values go: as chosen when the node had some, else to the heavier
    /// side (ties left).
    pub(super) fn missing_left(&self) -> bool {
        if self.has_missing {
            self.missing_left
        } else {
            self.w_left >= self.w_right
        }
    }
}

/// What the split search needs to know about the outcome.
#[derive(Debug, Clone, Copy)]
pub(super) enum Task {
    /// Number of classes and the impurity measure.
    Classes(usize, Impurity),
    /// The offset subtracted from the outcome values in the current node (the node's
    /// weighted mean). The sum of squared deviations does not depend on the offset,
    /// but the score `s^2 / w` does lose precision when the values sit far from zero
    /// relative to their spread (at an offset of 1e9 and a spread of 1, the terms are
    /// about 1e18 per case and their difference is rounding noise). Centring each node
    /// on its own mean keeps `s` near zero and the score difference exact enough.
    Values(f64),
}

impl Task {
    pub(super) fn stride(&self) -> usize {
        match self {
            Task::Classes(c, _) => *c,
            Task::Values(_) => 2,
        }
    }

    #[inline(always)]
    pub(super) fn weight(&self, s: &[f64]) -> f64 {
        match self {
            Task::Classes(..) => s.iter().sum(),
            Task::Values(_) => s[0],
        }
    }

    /// `-w * impurity` up to terms that cancel in a decrease.
    #[inline(always)]
    pub(super) fn score(&self, s: &[f64]) -> f64 {
        match self {
            Task::Classes(_, imp) => imp.score(s, s.iter().sum()),
            Task::Values(_) => variance_score(s[0], s[1]),
        }
    }
}
