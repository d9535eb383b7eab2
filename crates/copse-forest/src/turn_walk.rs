//! One walk down a tree per row that finds the row's leaf and, for every input its way
//! tests, the first node at which that input's permuted value would turn it aside.
use copse_tree::{Node, Tree};

/// A node as the walk reads it: 16 bytes, the tree's own order.
#[derive(Debug, Clone, Copy)]
struct Step {
    /// Numeric split: go left when the value is at most this.
    threshold: f64,
    /// The left child (the right one follows it); a leaf's own index.
    child: u32,
    /// The input tested (0 for a leaf).
    input: u16,
    /// [`LEAF`], [`CATEGORY`] and [`MISSING_LEFT`] bits.
    flags: u16,
}

const LEAF: u16 = 1;
const CATEGORY: u16 = 2;
const MISSING_LEFT: u16 = 4;

/// A tree laid out for [`TurnWalk::walk`], with the inputs its nodes test.
pub(crate) struct TurnWalk<'t> {
    tree: &'t Tree,
    steps: Vec<Step>,
    /// Words of a row's set of inputs (one bit an input).
    words: usize,
}

/// An input whose permuted value turns a row aside: the row goes on from node `start`
/// with input `input` set to its permuted value.
#[derive(Debug, Clone, Copy)]
pub(crate) struct Turn {
    pub(crate) input: u32,
    pub(crate) start: u32,
}

impl<'t> TurnWalk<'t> {
    /// The layout of `tree` for rows of `p` inputs.
    pub(crate) fn new(tree: &'t Tree, p: usize) -> Self {
        let steps = tree
            .nodes()
            .iter()
            .enumerate()
            .map(|(i, n)| match n.feature() {
                None => Step {
                    threshold: 0.0,
                    child: i as u32,
                    input: 0,
                    flags: LEAF,
                },
                Some(j) => Step {
                    threshold: n.threshold().unwrap_or(0.0),
                    child: n.child() as u32,
                    input: j as u16,
                    flags: if n.is_categorical() { CATEGORY } else { 0 }
                        | if n.missing_goes_left() {
                            MISSING_LEFT
                        } else {
                            0
                        },
                },
            })
            .collect();
        TurnWalk {
            tree,
            steps,
            words: p.div_ceil(64).max(1),
        }
    }

    /// Words of an input set for [`TurnWalk::walk`] and [`TurnWalk::tested`].
    pub(crate) fn words(&self) -> usize {
        self.words
    }

    /// Marks in `set` (bit `j` of word `j / 64`) every input some node tests.
    pub(crate) fn tested(&self, set: &mut [u64]) {
        for s in self.steps.iter().filter(|s| s.flags & LEAF == 0) {
            set[s.input as usize / 64] |= 1 << (s.input % 64);
        }
    }

    /// Walks the row with values `row` from the root to its leaf, which it returns;
    /// `permuted` holds the row's permuted values, input by input. Each input the way
    /// tests is marked in `seen`, and for each of them whose permuted value some node
    /// on the way sends to the other side, the first such node's other child
    /// `turns` (in the order of the way, one entry an input). `turned` (of
    /// [`TurnWalk::words`] words, all zero) is left as it was.
    ///
    /// The walk sends `row` where [`Tree::goes_left`] does, so the leaf is the row's
    /// and each turn the one that re-predicting the row with that input permuted
    /// meets first.
    #[inline]
    pub(crate) fn walk(
        &self,
        row: &[f64],
        permuted: &[f64],
        turned: &mut [u64],
        seen: &mut [u64],
        turns: &mut Vec<Turn>,
    ) -> u32 {
        let steps = &self.steps[..];
        turns.clear();
        let mut i = 0usize;
        loop {
            let s = steps[i];
            if s.flags & LEAF != 0 {
                break;
            }
            let j = s.input as usize;
            let (v, w) = (row[j], permuted[j]);
            let (goes, would) = if s.flags & CATEGORY == 0 {
                (numeric_left(v, &s), numeric_left(w, &s))
            } else {
                let n = self.node(i);
                (self.tree.goes_left(n, v), self.tree.goes_left(n, w))
            };
            let (word, bit) = (j / 64, 1u64 << (j % 64));
            seen[word] |= bit;
            if goes != would && turned[word] & bit == 0 {
                turned[word] |= bit;
                turns.push(Turn {
                    input: j as u32,
                    start: s.child + u32::from(!would),
                });
            }
            i = (s.child + u32::from(!goes)) as usize;
        }
        for t in turns.iter() {
            turned[t.input as usize / 64] = 0;
        }
        i as u32
    }

    #[cold]
    fn node(&self, i: usize) -> &Node {
        &self.tree.nodes()[i]
    }
}

/// Where a numeric split sends `v`, as [`Tree::goes_left`]: a missing value by the
/// node's missing direction, any other at most the threshold to the left.
#[inline(always)]
fn numeric_left(v: f64, s: &Step) -> bool {
    (v <= s.threshold) | (v.is_nan() & (s.flags & MISSING_LEFT != 0))
}
