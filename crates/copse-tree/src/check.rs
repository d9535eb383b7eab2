//! Structural checks of a tree that arrived from outside (a decoded model file), so
//! that prediction on it can never index out of bounds or loop.
use crate::data::{FeatureKind, FeatureMeta};
use crate::error::{Error, ErrorKind, Result};
use crate::tree::{Tree, CATEGORICAL, MISSING_LEFT};

impl Tree {
    /// Checks that this tree is well formed for inputs described by `meta`: children
    /// sit after their parent and inside the node array (so descent always ends), each
    /// node has one parent, inputs exist and have the kind the node assumes, category
    /// sets and leaf outputs are where nodes say they are, and outputs are finite.
    ///
    /// # Errors
    /// `InvalidModel` naming the first fault found.
    pub fn check(&self, meta: &[FeatureMeta]) -> Result<()> {
        let bad = |m: String| Err(Error::new(ErrorKind::InvalidModel, m));
        let n = self.nodes.len();
        if n == 0 {
            return bad("a tree has no nodes".into());
        }
        if self.n_outputs == 0 {
            return bad("a tree has no outputs".into());
        }
        if self.leaf_weights.len().checked_mul(self.n_outputs) != Some(self.leaf_values.len()) {
            return bad("a tree's leaf outputs do not match its leaf count".into());
        }
        if self.decrease.len() != meta.len() {
            return bad(format!(
                "a tree was grown on {} inputs but the model lists {}",
                self.decrease.len(),
                meta.len()
            ));
        }
        if self
            .leaf_values
            .iter()
            .chain(&self.leaf_weights)
            .any(|v| !v.is_finite())
        {
            return bad("a tree has a leaf output that is not a finite number".into());
        }
        let mut parents = vec![0u8; n];
        for (i, node) in self.nodes.iter().enumerate() {
            if node.is_leaf() {
                if node.child() >= self.leaf_weights.len() {
                    return bad(format!(
                        "node {i} points at leaf {} which does not exist",
                        node.child()
                    ));
                }
                continue;
            }
            let c = node.child();
            if c <= i || c + 1 >= n {
                return bad(format!("node {i} has children outside the tree"));
            }
            for k in [c, c + 1] {
                parents[k] = parents[k].saturating_add(1);
                if parents[k] > 1 {
                    return bad(format!("node {k} has more than one parent"));
                }
            }
            if node.flags & !(MISSING_LEFT | CATEGORICAL) != 0 {
                return bad(format!("node {i} has unknown flags"));
            }
            let f = node.feature as usize;
            let Some(m) = meta.get(f) else {
                return bad(format!("node {i} tests input {f}, which does not exist"));
            };
            match (&m.kind, node.is_categorical()) {
                (FeatureKind::Numeric, false) => {
                    if f64::from_bits(node.split).is_nan() {
                        return bad(format!("node {i} has no threshold"));
                    }
                }
                (FeatureKind::Categorical { levels }, true) => {
                    let (offset, count) = (
                        (node.split >> 32) as usize,
                        (node.split & 0xffff_ffff) as usize,
                    );
                    if count != levels.len() || offset + count.div_ceil(64) > self.cat_sets.len() {
                        return bad(format!("node {i} has a damaged category set"));
                    }
                }
                _ => {
                    return bad(format!(
                        "node {i} treats input '{}' as the wrong kind",
                        m.name
                    ))
                }
            }
        }
        Ok(())
    }
}

#[cfg(test)]
mod tests {
    use crate::{BinnedData, FeatureMeta, Grower, Target, TreeSettings};
    use ndarray::array;
    use rand::SeedableRng;

    #[test]
    fn a_grown_tree_passes_and_damage_is_caught() {
        let x = array![[1.0, 0.0], [2.0, 1.0], [3.0, 0.0], [4.0, 1.0]];
        let meta = vec![
            FeatureMeta::numeric("a"),
            FeatureMeta::categorical("b", vec!["u".into(), "v".into()]),
        ];
        let data = BinnedData::new(x.view(), &meta, 256).expect("bins");
        let y = [0u32, 1, 0, 1];
        let t = Target::classes(&y, 2).expect("target");
        let mut rng = rand::rngs::StdRng::seed_from_u64(3);
        let tree = Grower::new(TreeSettings::default())
            .grow(&data, &t, &[1.0; 4], &mut rng)
            .expect("grows");
        tree.check(&meta).expect("a grown tree is well formed");
        assert!(tree.nodes[0].is_categorical());

        let mut cut = tree.clone();
        cut.cat_sets.clear();
        assert!(cut.check(&meta).is_err(), "missing category set");
        let mut cycle = tree.clone();
        cycle.nodes[0].child = 0;
        assert!(cycle.check(&meta).is_err(), "child before parent");
        let mut short = tree.clone();
        short.leaf_values.pop();
        assert!(short.check(&meta).is_err(), "leaf outputs short");
        assert!(
            tree.check(&meta[..1]).is_err(),
            "fewer inputs than grown on"
        );
    }
}
