//! Algorithm 2 of Lundberg et al. 2020 ("From local explanations to global
//! understanding with explainable AI for trees", Nature Machine Intelligence 2:56-67):
//! one walk from the root keeps, for the inputs met on the way down, the share of
//! subsets of each size that reach the current node, and at each leaf unwinds every
//! input in turn, so a tree costs the leaves times the squared path length per row.
//! Kept beside the faster leaf-wise walk ([`super::leaf_walk`]) as the published
//! algorithm, chosen with [`super::ContributionWalk::Paths`].
use super::Covered;
/// One input on the path from the root to the current node: the share of cover kept
/// when the input is absent (`zero`), whether the row follows it when present (`one`),
/// and the weight of the subsets of one size.
#[derive(Debug, Clone, Copy, Default)]
pub(super) struct Step {
    input: usize,
    zero: f64,
    one: f64,
    weight: f64,
}

/// The root's step stands for no input.
const NO_INPUT: usize = usize::MAX;

/// A path buffer of `steps` steps, one per thread.
pub(super) fn buffer(steps: usize) -> Vec<Step> {
    vec![Step::default(); steps]
}

/// Adds one tree's contributions for `row` to `out` (inputs by outputs, row-major),
/// with `path` from [`buffer`] of `d (d + 1) / 2` steps for a depth below `d - 1`.
pub(super) fn tree(c: &Covered<'_>, row: &[f64], out: &mut [f64], path: &mut [Step]) {
    descend(c, row, out, path, 0, 0, 1.0, 1.0, NO_INPUT);
}

/// Visits `node` with the incoming path in `path[..len]`, extended here by the step of
/// `input` (cover share `zero`, followed `one`). At a leaf every input on the path
/// receives its weight times the leaf's output; below an internal node the path is
/// copied after the current one for each child, so no level allocates.
#[allow(clippy::too_many_arguments)]
fn descend(
    c: &Covered<'_>,
    row: &[f64],
    out: &mut [f64],
    path: &mut [Step],
    node: usize,
    len: usize,
    zero: f64,
    one: f64,
    input: usize,
) {
    let (current, rest) = path.split_at_mut(len + 1);
    extend(current, zero, one, input);
    let mut len = len + 1;
    let n = c.tree.nodes()[node];
    let k = out.len() / row.len().max(1);
    if n.is_leaf() {
        let value = c.tree.leaf_value(node);
        for i in 1..len {
            let step = current[i];
            let scale = unwound_sum(&current[..len], i) * (step.one - step.zero);
            let at = step.input * k;
            for (o, v) in out[at..at + k].iter_mut().zip(&value) {
                *o += scale * v;
            }
        }
        return;
    }
    let feature = n.feature().expect("an internal node tests an input");
    let (hot, cold) = if c.tree.goes_left(&n, row[feature]) {
        (n.child(), n.child() + 1)
    } else {
        (n.child() + 1, n.child())
    };
    // An input met again: its earlier step is taken off and its fractions carried on,
    // so each input appears once on the path.
    let (mut in_zero, mut in_one) = (1.0, 1.0);
    if let Some(i) = (1..len).find(|&i| current[i].input == feature) {
        in_zero = current[i].zero;
        in_one = current[i].one;
        unwind(&mut current[..len], i);
        len -= 1;
    }
    let here = c.cover[node];
    for (child, one) in [(hot, in_one), (cold, 0.0)] {
        let zero = if here > 0.0 {
            in_zero * c.cover[child] / here
        } else {
            0.0
        };
        // With both fractions zero every weight below is zero: nothing to add.
        if zero == 0.0 && one == 0.0 {
            continue;
        }
        rest[..len].copy_from_slice(&current[..len]);
        descend(c, row, out, rest, child, len, zero, one, feature);
    }
}

/// Adds a step to the path `path[..len]` (its length is `path.len() - 1`): the weight
/// of subsets of each size splits into those without the input (scaled by its cover
/// share) and those with it (scaled by whether the row follows it).
fn extend(path: &mut [Step], zero: f64, one: f64, input: usize) {
    let l = path.len() - 1;
    path[l] = Step {
        input,
        zero,
        one,
        weight: if l == 0 { 1.0 } else { 0.0 },
    };
    let total = (l + 1) as f64;
    for i in (0..l).rev() {
        path[i + 1].weight += one * path[i].weight * (i + 1) as f64 / total;
        path[i].weight = zero * path[i].weight * (l - i) as f64 / total;
    }
}

/// Takes step `i` off the path, undoing its [`extend`]; the path shortens by one.
fn unwind(path: &mut [Step], i: usize) {
    let l = path.len() - 1;
    let (zero, one) = (path[i].zero, path[i].one);
    let total = (l + 1) as f64;
    let mut next = path[l].weight;
    for j in (0..l).rev() {
        if one != 0.0 {
            let kept = path[j].weight;
            path[j].weight = next * total / ((j + 1) as f64 * one);
            next = kept - path[j].weight * zero * (l - j) as f64 / total;
        } else {
            path[j].weight = path[j].weight * total / (zero * (l - j) as f64);
        }
    }
    for j in i..l {
        path[j].input = path[j + 1].input;
        path[j].zero = path[j + 1].zero;
        path[j].one = path[j + 1].one;
    }
}

/// Sum of the weights the path would have with step `i` taken off, without changing
/// it.
fn unwound_sum(path: &[Step], i: usize) -> f64 {
    let l = path.len() - 1;
    let (zero, one) = (path[i].zero, path[i].one);
    let total = (l + 1) as f64;
    let mut sum = 0.0;
    // The leaves' hot loop: divisions by the step's fractions and the path's length
    // are taken once, as products by their reciprocals.
    if one != 0.0 {
        let (up, down) = (total / one, zero / total);
        let mut next = path[l].weight;
        for j in (0..l).rev() {
            let w = next * up / (j + 1) as f64;
            sum += w;
            next = path[j].weight - w * down * (l - j) as f64;
        }
    } else {
        let up = total / zero;
        for j in (0..l).rev() {
            sum += path[j].weight * up / (l - j) as f64;
        }
    }
    sum
}
