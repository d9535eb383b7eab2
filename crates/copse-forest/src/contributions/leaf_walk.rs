//! The leaf-wise exact walk: the same Shapley values as Algorithm 2 of Lundberg et al.
//! 2020 ([`super::path_walk`]), computed leaf by leaf from a closed form that uses
//! the fact that, for one row, whether the row follows an input's tests is 0 or 1.
//!
//! A leaf `l` with output `v` takes part in the game `S -> E[f | x_S]` as
//! `g(S) = v * prod_{j in S} o_j * prod_{j in F \ S} z_j`, where `F` holds the `u`
//! distinct inputs tested on its path, `z_j` is the product of the cover shares
//! `cover(child) / cover(node)` of `j`'s tests on the path and `o_j` is 1 when the row
//! passes all of `j`'s tests there, else 0 (Lundberg et al. 2020, the path weights of
//! Algorithm 2). Inputs off the path do not change `g`, so the leaf's Shapley values
//! are those of a `u`-player game, with weights `w(s) = s! (u - 1 - s)! / u!`. Let `P`
//! be the inputs the row follows (`p` of them), `R = F \ P`, `Z_R = prod_{j in R} z_j`
//! and `e_k(.)` the elementary symmetric polynomials. Since `g(S) = 0` whenever `S`
//! holds an input of `R`, only subsets of `P` count, and
//!
//! - for `i` in `R`: `phi_i = -v * Z_R * sum_{s=0}^{p} w(s) e_{p-s}(z_P)`, the same
//!   for every such input;
//! - for `i` in `P`: `phi_i = v * (1 - z_i) * Z_R * sum_{s=0}^{p-1} w(s)
//!   e_{p-1-s}(z_{P \ i})`.
//!
//! The coefficients `e_k(z_P)` are those of `prod_{j in P} (1 + z_j t)`, built in
//! `p^2` steps; those without `i` come by dividing out `(1 + z_i t)` in `p` steps
//! (stable: every `z` lies in `[0, 1]`, so no error grows). A leaf therefore costs
//! `u + p^2` where Algorithm 2 pays `u^2` for unwinding every input, and the walk itself
//! is one pass over the nodes keeping, per input, its cover product, its failed tests
//! and its count on the path (restored on the way back up, so no level copies
//! anything). Rows that miss most of a tree's leaves by some test, the usual case in
//! deep trees, have small `p` at most leaves.
use super::Covered;

/// Per-thread working space of the walk: per input its cover product on the current
/// path, its tests failed and its tests met, the distinct inputs met in order, and
/// the followed inputs' shares and polynomial coefficients at a leaf.
pub(super) struct Scratch {
    z: Vec<f64>,
    fails: Vec<u32>,
    seen: Vec<u32>,
    on_path: Vec<usize>,
    followed: Vec<(usize, f64)>,
    poly: Vec<f64>,
    divided: Vec<f64>,
}

impl Scratch {
    /// Space for `inputs` inputs and paths of up to `depth` tests.
    pub(super) fn new(inputs: usize, depth: usize) -> Self {
        Self {
            z: vec![1.0; inputs],
            fails: vec![0; inputs],
            seen: vec![0; inputs],
            on_path: Vec::with_capacity(depth + 1),
            followed: Vec::with_capacity(depth + 1),
            poly: vec![0.0; depth + 2],
            divided: vec![0.0; depth + 2],
        }
    }
}

/// The Shapley weights `w(s) = s! (u - 1 - s)! / u!` for `u` from 1 to a largest count,
/// row `u` starting at `u (u - 1) / 2`.
pub(super) struct Weights(Vec<f64>);

impl Weights {
    /// Weights for games of up to `most` players.
    pub(super) fn new(most: usize) -> Self {
        let mut w = Vec::with_capacity(most * (most + 1) / 2);
        for u in 1..=most {
            // w(0) = 1/u; w(s+1) = w(s) (s + 1) / (u - 1 - s).
            let mut v = 1.0 / u as f64;
            for s in 0..u {
                w.push(v);
                if s + 1 < u {
                    v *= (s + 1) as f64 / (u - 1 - s) as f64;
                }
            }
        }
        Self(w)
    }

    fn of(&self, u: usize) -> &[f64] {
        let at = u * (u - 1) / 2;
        &self.0[at..at + u]
    }
}

/// Adds one tree's contributions for `row` to `out` (inputs by outputs, row-major).
pub(super) fn tree(c: &Covered<'_>, row: &[f64], out: &mut [f64], s: &mut Scratch, w: &Weights) {
    visit(c, row, out, s, w, 0);
}

fn visit(c: &Covered<'_>, row: &[f64], out: &mut [f64], s: &mut Scratch, w: &Weights, node: usize) {
    let n = c.tree.nodes()[node];
    if n.is_leaf() {
        leaf(c, out, s, w, node);
        return;
    }
    let f = n.feature().expect("an internal node tests an input");
    let hot = if c.tree.goes_left(&n, row[f]) {
        n.child()
    } else {
        n.child() + 1
    };
    let here = c.cover[node];
    let before = s.z[f];
    for child in [n.child(), n.child() + 1] {
        let share = if here > 0.0 {
            c.cover[child] / here
        } else {
            0.0
        };
        let z = before * share;
        let follow = child == hot;
        // A side the row does not take and no cover reaches adds nothing (Z_R = 0).
        if !follow && z == 0.0 {
            continue;
        }
        s.z[f] = z;
        s.fails[f] += u32::from(!follow);
        if s.seen[f] == 0 {
            s.on_path.push(f);
        }
        s.seen[f] += 1;
        visit(c, row, out, s, w, child);
        s.seen[f] -= 1;
        if s.seen[f] == 0 {
            s.on_path.pop();
        }
        s.fails[f] -= u32::from(!follow);
    }
    s.z[f] = before;
}

/// Adds the leaf's Shapley values (the closed form of the module's notes) to `out`.
fn leaf(c: &Covered<'_>, out: &mut [f64], s: &mut Scratch, w: &Weights, node: usize) {
    let u = s.on_path.len();
    if u == 0 {
        // A tree that is one leaf: its output is all base.
        return;
    }
    let mut z_r = 1.0;
    s.followed.clear();
    for &j in &s.on_path {
        if s.fails[j] > 0 {
            z_r *= s.z[j];
        } else {
            s.followed.push((j, s.z[j]));
        }
    }
    if z_r == 0.0 {
        return;
    }
    let p = s.followed.len();
    let poly = &mut s.poly[..=p];
    poly[0] = 1.0;
    for (q, &(_, zj)) in s.followed.iter().enumerate() {
        poly[q + 1] = 0.0;
        for k in (1..=q + 1).rev() {
            poly[k] += zj * poly[k - 1];
        }
    }
    let weights = w.of(u);
    let value = c.tree.leaf_value(node);
    let k = value.len();
    if p < u {
        let a: f64 = (0..=p).map(|s| weights[s] * poly[p - s]).sum();
        let scale = -z_r * a;
        for &j in &s.on_path {
            if s.fails[j] > 0 {
                let at = j * k;
                for (o, v) in out[at..at + k].iter_mut().zip(&value) {
                    *o += scale * v;
                }
            }
        }
    }
    let divided = &mut s.divided[..p.max(1)];
    for &(i, zi) in &s.followed {
        // prod over P \ i: divide (1 + z_i t) out of the product.
        divided[0] = 1.0;
        for k in 1..p {
            divided[k] = poly[k] - zi * divided[k - 1];
        }
        let b: f64 = (0..p).map(|s| weights[s] * divided[p - 1 - s]).sum();
        let scale = (1.0 - zi) * z_r * b;
        let at = i * k;
        for (o, v) in out[at..at + k].iter_mut().zip(&value) {
            *o += scale * v;
        }
    }
}
