//! The way from the root to every leaf of a tree, grouped by the input each node
//! tests: it tells which rows a permuted input can send elsewhere, and from which node.
use copse_tree::Tree;

/// The nodes on the way from the root to each leaf, grouped by the input they test:
/// the leaf at node `l` has the runs `runs[span[l].0..span[l].1]`, one per input its
/// way tests (ascending), and a run's steps `steps[run.from..run.to]` are its nodes
/// testing that input, from the root down, each `node << 1 | went_left` (indexed by
/// node, as leaves are known by their node index; internal nodes have none).
pub(crate) struct LeafPaths {
    span: Vec<Span>,
    runs: Vec<Run>,
    pub(crate) steps: Vec<u32>,
    /// Whether every input is below 64, so that [`Span::tests`] names them all.
    narrow: bool,
}

/// Where a leaf's runs stand in [`LeafPaths::runs`], and the inputs below 64 its way
/// tests (bit `j` for input `j`): one look tells whether the way tests an input, and
/// which run is its (the runs being in input order).
#[derive(Debug, Clone, Copy, Default)]
struct Span {
    from: u32,
    to: u32,
    tests: u64,
}

/// The nodes of one leaf's way that test one input: `steps[from..to]`.
#[derive(Debug, Clone, Copy)]
pub(crate) struct Run {
    pub(crate) input: u32,
    pub(crate) from: u32,
    pub(crate) to: u32,
}

impl LeafPaths {
    pub(crate) fn of(tree: &Tree) -> Self {
        let nodes = tree.nodes();
        let mut span = vec![Span::default(); nodes.len()];
        let mut narrow = true;
        let (mut runs, mut steps) = (Vec::new(), Vec::new());
        // Depth-first, with the (input, step) pairs of the way to the current node on
        // a stack, and one buffer to sort a leaf's pairs in.
        let mut path: Vec<(u32, u32)> = Vec::new();
        let mut sorted: Vec<(u32, u32)> = Vec::new();
        let mut stack = vec![(0usize, 0usize, u32::MAX)];
        while let Some((i, depth, step)) = stack.pop() {
            // The ancestors above the parent stay; the parent's test comes next.
            path.truncate(depth.saturating_sub(1));
            if step != u32::MAX {
                let parent = &nodes[(step >> 1) as usize];
                path.push((parent.feature().unwrap_or(0) as u32, step));
            }
            let n = &nodes[i];
            if n.is_leaf() {
                sorted.clone_from(&path);
                // By input, then from the root down (a child's number exceeds its
                // parent's).
                sorted.sort_unstable();
                let first = runs.len() as u32;
                let mut tests = 0u64;
                for (k, &(j, s)) in sorted.iter().enumerate() {
                    if j < 64 {
                        tests |= 1 << j;
                    } else {
                        narrow = false;
                    }
                    if k == 0 || sorted[k - 1].0 != j {
                        let at = steps.len() as u32;
                        runs.push(Run {
                            input: j,
                            from: at,
                            to: at,
                        });
                    }
                    steps.push(s);
                    if let Some(r) = runs.last_mut() {
                        r.to += 1;
                    }
                }
                span[i] = Span {
                    from: first,
                    to: runs.len() as u32,
                    tests,
                };
            } else {
                let me = (i as u32) << 1;
                stack.push((n.child() + 1, depth + 1, me));
                stack.push((n.child(), depth + 1, me | 1));
            }
        }
        LeafPaths {
            span,
            runs,
            steps,
            narrow,
        }
    }

    /// The run of input `j` on the way to the leaf at node `leaf`, if the way tests it.
    #[inline]
    pub(crate) fn run(&self, leaf: usize, j: usize) -> Option<&Run> {
        let s = self.span[leaf];
        if self.narrow {
            if s.tests >> j & 1 == 0 {
                return None;
            }
            // The runs of the inputs below j come first.
            let below = (s.tests & ((1u64 << j) - 1)).count_ones();
            self.runs.get((s.from + below) as usize)
        } else {
            self.runs[s.from as usize..s.to as usize]
                .iter()
                .find(|r| r.input as usize == j)
        }
    }
}

/// The leaf that a row which reached `leaf` of `tree` reaches when its input `j` takes
/// the value `v` instead (its other values in `row`), `run` being the nodes on the way
/// that test `j`: the same leaf unless one of them sends `v` the other way, and then
/// the leaf below the first such node on the other side.
pub(crate) fn turned_leaf(
    tree: &Tree,
    paths: &LeafPaths,
    run: &Run,
    leaf: usize,
    j: usize,
    v: f64,
    row: &[f64],
) -> usize {
    for &step in &paths.steps[run.from as usize..run.to as usize] {
        let node = &tree.nodes()[(step >> 1) as usize];
        let left = tree.goes_left(node, v);
        if left != (step & 1 == 1) {
            let start = node.child() + usize::from(!left);
            return tree.leaf_index_from(start, |c| if c == j { v } else { row[c] });
        }
    }
    leaf
}
