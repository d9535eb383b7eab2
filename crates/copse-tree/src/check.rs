//! Structural checks of a tree that arrived from outside (a decoded model file), so
//! that prediction on it can never index out of bounds or loop.
use crate::data::{FeatureKind, FeatureMeta};
use crate::error::{Error, ErrorKind, Result};
use crate::tree::{Tree, CATEGORICAL, MISSING_LEFT};

impl Tree {
    /// Checks that this tree is well formed for inputs described by `meta`: children
    /// sit after their parent and inside the node array (so descent always ends), each
    /// node has one parent, inputs exist and have the kind the node assumes, category
    /// sets are where nodes say they are, and every leaf's payload is sound: its
    /// output finite (a probability between 0 and 1 with two classes), its weight
    /// finite and above 0, and with three or more classes its offset inside the table
    /// of class probabilities, which are finite and between 0 and 1.
    ///
    /// # Errors
    /// `InvalidModel` naming the first fault found.
    ///
    /// # Example
    /// ```
    /// use copse_tree::{BinnedData, FeatureMeta, Grower, OutcomeView, TreeSettings};
    /// use ndarray::array;
    ///
    /// let x = array![[1.0], [2.0], [3.0], [4.0]];
    /// let meta = vec![FeatureMeta::numeric("size")];
    /// let data = BinnedData::new(x.view(), &meta, 256)?;
    /// let target = OutcomeView::classes(&[0, 0, 1, 1], 2)?;
    /// let tree = Grower::new(TreeSettings::default()).grow(&data, &target, &[1.0; 4], 0)?;
    /// tree.check(&meta)?;
    /// // The tree tests input 0, which a description of no inputs lacks.
    /// assert!(tree.check(&[]).is_err());
    /// # Ok::<(), copse_tree::Error>(())
    /// ```
    pub fn check(&self, meta: &[FeatureMeta]) -> Result<()> {
        let bad = |m: String| Err(Error::new(ErrorKind::InvalidModel, m));
        let n = self.nodes.len();
        let k = self.n_outputs;
        if n == 0 {
            return bad("a tree has no nodes".into());
        }
        if k == 0 {
            return bad("a tree has no outputs".into());
        }
        if k <= 2 && !self.leaf_values.is_empty() {
            return bad("a tree with one or two outputs has a table of leaf outputs".into());
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
            .any(|v| !v.is_finite() || !(0.0..=1.0).contains(v))
        {
            return bad("a tree has a class probability that is not between 0 and 1".into());
        }
        let mut parents = vec![0u8; n];
        for (i, node) in self.nodes.iter().enumerate() {
            if node.is_leaf() {
                let w = f32::from_bits(node.child);
                if !(w.is_finite() && w > 0.0) {
                    return bad(format!(
                        "leaf {i} has a weight that is not a positive number"
                    ));
                }
                let v = f64::from_bits(node.split);
                let fault = match k {
                    1 => (!v.is_finite()).then_some("an output that is not a finite number"),
                    2 => (!(0.0..=1.0).contains(&v))
                        .then_some("a class probability that is not between 0 and 1"),
                    _ => {
                        let end = usize::try_from(node.split)
                            .ok()
                            .and_then(|at| at.checked_add(k));
                        match end {
                            Some(end) if end <= self.leaf_values.len() => None,
                            _ => Some("outputs outside the table of leaf outputs"),
                        }
                    }
                };
                if let Some(fault) = fault {
                    return bad(format!("leaf {i} has {fault}"));
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
    use crate::{BinnedData, FeatureMeta, Grower, OutcomeView, TreeSettings};
    use ndarray::array;

    #[test]
    fn a_grown_tree_passes_and_damage_is_caught() {
        let x = array![[1.0, 0.0], [2.0, 1.0], [3.0, 0.0], [4.0, 1.0]];
        let meta = vec![
            FeatureMeta::numeric("a"),
            FeatureMeta::categorical("b", vec!["u".into(), "v".into()]),
        ];
        let data = BinnedData::new(x.view(), &meta, 256).expect("bins");
        let y = [0u32, 1, 0, 1];
        let t = OutcomeView::classes(&y, 2).expect("target");
        let tree = Grower::new(TreeSettings::default())
            .grow(&data, &t, &[1.0; 4], 3)
            .expect("grows");
        tree.check(&meta).expect("a grown tree is well formed");
        assert!(tree.nodes[0].is_categorical());

        let mut cut = tree.clone();
        cut.cat_sets.clear();
        assert!(cut.check(&meta).is_err(), "missing category set");
        let mut cycle = tree.clone();
        cycle.nodes[0].child = 0;
        assert!(cycle.check(&meta).is_err(), "child before parent");
        let leaf = tree.leaves().next().expect("a leaf");
        for (bits, what) in [
            (1.5f64.to_bits(), "probability above 1"),
            ((-0.25f64).to_bits(), "probability below 0"),
            (f64::NAN.to_bits(), "probability not a number"),
        ] {
            let mut odd = tree.clone();
            odd.nodes[leaf].split = bits;
            assert!(odd.check(&meta).is_err(), "{what}");
        }
        for (w, what) in [
            (0.0f32, "zero"),
            (-1.0, "negative"),
            (f32::INFINITY, "infinite"),
        ] {
            let mut odd = tree.clone();
            odd.nodes[leaf].child = w.to_bits();
            assert!(odd.check(&meta).is_err(), "leaf weight {what}");
        }
        let mut table = tree.clone();
        table.leaf_values.push(0.5);
        assert!(table.check(&meta).is_err(), "a table beside two outputs");

        // Three classes: leaves point into the table of class probabilities.
        let y3 = [0u32, 1, 2, 1];
        let t3 = OutcomeView::classes(&y3, 3).expect("target");
        let three = Grower::new(TreeSettings::default())
            .grow(&data, &t3, &[1.0; 4], 3)
            .expect("grows");
        three.check(&meta).expect("a grown tree is well formed");
        let mut short = three.clone();
        short.leaf_values.pop();
        assert!(short.check(&meta).is_err(), "leaf outputs short");
        let last = three.leaves().last().expect("a leaf");
        let mut far = three.clone();
        far.nodes[last].split = u64::MAX - 1;
        assert!(far.check(&meta).is_err(), "offset past the table");
        let mut wrong = three.clone();
        wrong.leaf_values[0] = 2.0;
        assert!(
            wrong.check(&meta).is_err(),
            "probability above 1 in the table"
        );

        // Regression: any finite mean, but not a missing one.
        let values = [1.0e6, -3.0, 2.5, 7.0];
        let tv = OutcomeView::values(&values).expect("target");
        let reg = Grower::new(TreeSettings::default())
            .grow(&data, &tv, &[1.0; 4], 3)
            .expect("grows");
        reg.check(&meta).expect("a grown tree is well formed");
        let leaf = reg.leaves().next().expect("a leaf");
        let mut odd = reg.clone();
        odd.nodes[leaf].split = f64::INFINITY.to_bits();
        assert!(odd.check(&meta).is_err(), "infinite mean");
        assert!(
            tree.check(&meta[..1]).is_err(),
            "fewer inputs than grown on"
        );
    }
}
