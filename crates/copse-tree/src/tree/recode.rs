//! Category codes read anew: a tree grown on one table's category codes made to read
//! another table's, whose categories include the first's (the pooled encoding of
//! forests grown on different partitions of the rows).
use super::{Tree, CATEGORICAL, MISSING_LEFT};

impl Tree {
    /// The tree reading new category codes: for every categorical input `j` with
    /// `maps[j]` given, `maps[j][new]` is the tree's own code of category `new` of the
    /// new encoding (`None` for a category the tree never had). Every split sends each
    /// category where it sent it before, and a category the tree never had where it
    /// sent unseen and missing values (its missing direction), so the tree scores a
    /// row read with the new codes exactly as it scored the row read with its own.
    /// Inputs without a map keep their codes.
    ///
    /// # Panics
    /// When a map has an own code outside the tree's category count at some split (the
    /// caller builds the maps from the same dictionaries the tree was grown on).
    pub fn with_category_codes(&self, maps: &[Option<Vec<Option<u32>>>]) -> Tree {
        let mut out = self.clone();
        let mut sets: Vec<u64> = Vec::with_capacity(self.cat_sets.len());
        for (i, n) in self.nodes.iter().enumerate() {
            if n.is_leaf() || n.flags & CATEGORICAL == 0 {
                continue;
            }
            let (offset, count) = ((n.split >> 32) as usize, (n.split & 0xffff_ffff) as usize);
            let own = |c: usize| self.cat_sets[offset + c / 64] >> (c % 64) & 1 == 1;
            let start = sets.len();
            let new_count = match maps.get(n.feature as usize).and_then(Option::as_ref) {
                Some(map) => {
                    sets.resize(start + map.len().div_ceil(64), 0);
                    let unseen = n.flags & MISSING_LEFT != 0;
                    for (c, old) in map.iter().enumerate() {
                        let left = match old {
                            Some(o) => {
                                assert!((*o as usize) < count, "category code out of range");
                                own(*o as usize)
                            }
                            None => unseen,
                        };
                        if left {
                            sets[start + c / 64] |= 1 << (c % 64);
                        }
                    }
                    map.len()
                }
                None => {
                    sets.extend_from_slice(&self.cat_sets[offset..offset + count.div_ceil(64)]);
                    count
                }
            };
            out.nodes[i].split = ((start as u64) << 32) | new_count as u64;
        }
        out.cat_sets = sets;
        out
    }
}

#[cfg(test)]
mod tests {
    use crate::{BinnedData, FeatureMeta, Grower, OutcomeView, TreeSettings};
    use ndarray::Array2;

    /// A tree on categories `a c e` (own codes 0 1 2) read with the codes of
    /// `a b c d e f` (0..6): rows of `a c e` reach the same leaves as before, and
    /// `b d f`, which it never had, reach the leaf a missing value reaches.
    #[test]
    fn new_codes_reach_the_leaves_of_the_old() {
        let n = 60;
        let mut x = Array2::zeros((n, 2));
        let mut y = Vec::new();
        for i in 0..n {
            let c = (i * 7 % 3) as f64;
            x[[i, 0]] = c;
            x[[i, 1]] = (i % 5) as f64;
            y.push(u32::from(c == 1.0 || (c == 2.0 && i % 5 > 2)));
        }
        let meta = vec![
            FeatureMeta::categorical("c", vec!["a".into(), "c".into(), "e".into()]),
            FeatureMeta::numeric("v"),
        ];
        let data = BinnedData::new(x.view(), &meta, 256).expect("the step succeeds");
        let target = OutcomeView::classes(&y, 2).expect("the step succeeds");
        let tree = Grower::new(TreeSettings::default())
            .grow(&data, &target, &vec![1.0; n], 0)
            .expect("the step succeeds");
        assert!(tree.nodes().iter().any(|n| n.is_categorical()));
        let map = vec![Some(0), None, Some(1), None, Some(2), None];
        let new = tree.with_category_codes(&[Some(map.clone()), None]);
        let wide = vec![
            FeatureMeta::categorical(
                "c",
                ["a", "b", "c", "d", "e", "f"].map(String::from).to_vec(),
            ),
            FeatureMeta::numeric("v"),
        ];
        new.check(&wide).expect("the step succeeds");
        for v in 0..5 {
            let v = f64::from(v);
            for (code, old) in map.iter().enumerate() {
                let want = match old {
                    Some(o) => tree.leaf_index(&[f64::from(*o), v]),
                    None => tree.leaf_index(&[f64::NAN, v]),
                };
                assert_eq!(
                    new.leaf_index(&[code as f64, v]),
                    want,
                    "code {code}, v {v}"
                );
            }
            assert_eq!(
                new.leaf_index(&[f64::NAN, v]),
                tree.leaf_index(&[f64::NAN, v])
            );
        }
    }
}
