//! Parts of a forest on a training table: growing trees `a..b` with the table's record
//! in the part's card, reading the training file again the way the parts read it, and
//! merging the parts into the model one run would have made ([`copse_forest::part`]).
use crate::cells::Missing;
use crate::roles::Roles;
use crate::training::TrainingTable;
use copse_forest::{
    FeatureKind, Forest, ForestPart, ForestSettings, Progress, TrainOptions, Trained,
};
use std::ops::Range;

impl TrainingTable {
    /// Grows trees `trees` of the forest `settings` describes on this table, as
    /// [`TrainingTable::train`] would, with this table recorded in the part's card.
    ///
    /// # Errors
    /// As for [`Forest::train_part`].
    ///
    /// # Example
    /// ```
    /// use copse_data::{Roles, TrainingTable};
    /// use copse_forest::ForestSettings;
    /// # let dir = std::env::temp_dir().join("copse-data-doc-parts");
    /// # std::fs::create_dir_all(&dir).unwrap();
    /// # let path = dir.join("pipes.csv");
    /// # let mut text = String::from("age,material,burst\n");
    /// # for i in 0..60 { text.push_str(&format!("{},{},{}\n", i, if i % 3 == 0 { "pvc" } else { "iron" }, if i > 30 { "yes" } else { "no" })); }
    /// # std::fs::write(&path, text).unwrap();
    /// let table = TrainingTable::read_csv(&path, &Roles::target("burst"))?;
    /// let settings = ForestSettings { trees: 20, ..Default::default() };
    /// let options = Default::default();
    /// let first = table.train_part(&settings, 0..8, &options)?;
    /// let rest = table.train_part(&settings, 8..20, &options)?;
    /// let merged = table.merge(&[first, rest], None)?;
    /// assert_eq!(merged.forest, table.train(&settings, &options)?.forest);
    /// # Ok::<(), Box<dyn std::error::Error>>(())
    /// ```
    pub fn train_part(
        &self,
        settings: &ForestSettings,
        trees: Range<usize>,
        options: &TrainOptions<'_>,
    ) -> copse_forest::Result<ForestPart> {
        let options = self.row_options(options);
        let mut part = Forest::train_part(
            self.x.view(),
            &self.features,
            &self.outcome,
            settings,
            trees,
            &options,
        )?;
        let card = self.card_over(part.card());
        part.set_card(card);
        Ok(part)
    }

    /// Merges parts grown on this table into one model ([`Forest::merge_parts`]).
    ///
    /// # Errors
    /// As for [`Forest::merge_parts`].
    pub fn merge(
        &self,
        parts: &[ForestPart],
        progress: Option<&(dyn Fn(Progress) + Sync)>,
    ) -> copse_forest::Result<Trained> {
        Forest::merge_parts(
            parts,
            self.x.view(),
            &self.features,
            &self.outcome,
            progress,
        )
    }
}

impl Roles {
    /// The roles a part's training file was read with: its target and task, the
    /// columns left out, the case weights and row groups columns, and each input forced
    /// to the kind it had, so the file reads the same again.
    pub fn of_part(part: &ForestPart) -> Roles {
        let (mut categorical, mut numeric) = (Vec::new(), Vec::new());
        for f in part.meta() {
            match f.kind {
                FeatureKind::Categorical { .. } => categorical.push(f.name.clone()),
                _ => numeric.push(f.name.clone()),
            }
        }
        Roles {
            target: part.card().target.clone(),
            ignore: part.card().ignored.clone(),
            categorical,
            numeric,
            task: Some(part.task()),
            weights: part.card().weights.as_ref().map(|w| w.column.clone()),
            group: part.card().groups.as_ref().map(|g| g.column.clone()),
        }
    }
}

impl Missing {
    /// The missing tokens a part's training file was read with.
    pub fn of_part(part: &ForestPart) -> Missing {
        Missing::from_tokens(&part.card().missing_tokens)
    }
}
