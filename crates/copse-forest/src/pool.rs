//! Pooling whole forests that were each trained on one partition of the rows (rows
//! too many for one machine: one training run per partition file) into one model
//! whose score is the mean over all their trees. A partition with more trees weighs
//! more: the pooled score is the tree-count weighted mean of the partitions' scores.
//!
//! The models must read rows alike: the same inputs in the same order with the same
//! kinds, the same outcome column, task and (for classes) class list, the same
//! missing tokens and decimal mark, and the same settings but for the seed and the
//! number of trees. Their category dictionaries may differ, since each partition
//! sees its own categories: the pooled dictionary of each input is the union, in
//! natural order ([`crate::natural_order`], the order training gives categories, so
//! it is the dictionary one run on all the rows would have), and every tree's
//! category sets are rewritten for it ([`copse_tree::Tree::with_category_codes`]); a
//! category a partition never had goes where its trees send unseen and missing
//! values, as that partition's own model would send it. Numeric bins become the
//! union of the partitions' ranges.
//!
//! What the pooled model cannot honestly claim it does not hold: no out-of-bag error
//! of its own (each tree saw a bootstrap of its partition only; see
//! [`crate::pool_record`]), no draw counts or leaf rows. Each partition's own
//! out-of-bag summary and importance are kept in [`Pool`].
use crate::card::ModelCard;
use crate::error::{Error, ErrorKind, Result};
use crate::fingerprint::RowFingerprint;
use crate::forest::Forest;
use crate::importance::{FeatureImportance, Importance};
use crate::oob_summary::OobSummary;
use crate::outcome::natural_order;
use crate::pool_record::{Pool, PoolMember};
use copse_tree::{FeatureBins, FeatureKind, FeatureMeta, Tree};

fn refuse<T>(message: String) -> Result<T> {
    Err(Error::new(ErrorKind::PoolMismatch, message))
}

/// The first setting (the seed and the number of trees aside) in which `b` differs
/// from `a`, as (what, value in a, value in b).
fn settings_difference(a: &Forest, b: &Forest) -> Option<(&'static str, String, String)> {
    let (x, y) = (&a.settings, &b.settings);
    let pairs = [
        (
            "inputs per split (--features-per-split)",
            x.features_per_split.to_string(),
            y.features_per_split.to_string(),
        ),
        (
            "sampling (--sampling)",
            x.sampling.to_string(),
            y.sampling.to_string(),
        ),
        (
            "class-balanced sampling (--balanced)",
            x.balanced.to_string(),
            y.balanced.to_string(),
        ),
        (
            "value bins (--bins)",
            x.bins.to_string(),
            y.bins.to_string(),
        ),
        (
            "the cut points (--cuts)",
            x.tree.cuts.word().to_string(),
            y.tree.cuts.word().to_string(),
        ),
        (
            "the tree rules",
            format!("{:?}", x.tree),
            format!("{:?}", y.tree),
        ),
        (
            "inputs per split as resolved",
            a.features_per_split.to_string(),
            b.features_per_split.to_string(),
        ),
    ];
    pairs.into_iter().find(|(_, u, v)| u != v)
}

fn kind_word(f: &FeatureMeta) -> &'static str {
    if f.is_categorical() {
        "categorical"
    } else {
        "numeric"
    }
}

/// Checks that `b` (named `nb`) reads rows and was trained like `a` (named `na`).
fn check_pair(na: &str, a: &Forest, nb: &str, b: &Forest) -> Result<()> {
    if a.task != b.task {
        return refuse(format!(
            "{nb} predicts {} and {na} {}; pool only models of one task trained on partitions of \
             one data set",
            b.task.name(),
            a.task.name()
        ));
    }
    if a.card.target != b.card.target {
        return refuse(format!(
            "{nb} models '{}' and {na} models '{}'; pool only models of the same outcome column",
            b.card.target, a.card.target
        ));
    }
    if a.classes != b.classes {
        return refuse(format!(
            "{nb} knows the classes {} and {na} the classes {}; every partition must hold every \
             class (train on partitions drawn at random from the rows, or give each file the \
             same classes)",
            b.classes.join(", "),
            a.classes.join(", ")
        ));
    }
    if a.meta.len() != b.meta.len() {
        return refuse(format!(
            "{nb} has {} inputs and {na} {}; train every partition on the same columns",
            b.meta.len(),
            a.meta.len()
        ));
    }
    for (j, (fa, fb)) in a.meta.iter().zip(&b.meta).enumerate() {
        if fa.name != fb.name {
            return refuse(format!(
                "input {} is '{}' in {nb} and '{}' in {na}; train every partition on the same \
                 columns in the same order",
                j + 1,
                fb.name,
                fa.name
            ));
        }
        if fa.is_categorical() != fb.is_categorical() {
            return refuse(format!(
                "input '{}' is {} in {nb} and {} in {na}; give it the same kind in every \
                 partition (with --categorical or --numeric when training)",
                fa.name,
                kind_word(fb),
                kind_word(fa)
            ));
        }
    }
    if let Some((what, va, vb)) = settings_difference(a, b) {
        return refuse(format!(
            "{nb} and {na} were trained with different settings: {what} is {vb} in the first and \
             {va} in the second; train every partition with the same settings (only the seed \
             and the number of trees may differ)"
        ));
    }
    let (ca, cb) = (&a.card, &b.card);
    if ca.missing_tokens != cb.missing_tokens || ca.decimal_mark != cb.decimal_mark {
        return refuse(format!(
            "{nb} and {na} read cells differently (missing tokens or decimal mark); train every \
             partition with the same --missing and --decimal"
        ));
    }
    let column = |w: &ModelCard| w.weights.as_ref().map(|w| w.column.clone());
    let group = |w: &ModelCard| w.groups.as_ref().map(|g| g.column.clone());
    if column(ca) != column(cb) || group(ca) != group(cb) {
        return refuse(format!(
            "{nb} and {na} differ in their case weights (--weights) or row groups (--group); \
             train every partition with the same columns for them, or none"
        ));
    }
    if a.fingerprint == b.fingerprint {
        return refuse(format!(
            "{nb} and {na} were trained on the same rows (their training-row fingerprints are \
             equal); give each partition's model once (to grow one partition's forest further, \
             use 'copse merge')"
        ));
    }
    Ok(())
}

/// Checks what one model keeps that a pooled model cannot.
fn check_alone(name: &str, m: &Forest) -> Result<()> {
    if m.pool.is_some() {
        return refuse(format!(
            "{name} is itself a pooled model; pool the partitions' own models together instead"
        ));
    }
    if m.settings.balanced {
        return refuse(format!(
            "{name} was trained with class-balanced sampling (--balanced), whose probabilities \
             are shifted back to its own partition's class shares, so its trees cannot be \
             averaged with another partition's; train the partitions without --balanced"
        ));
    }
    if m.draws.is_some() || m.leaf_rows.is_some() {
        return refuse(format!(
            "{name} keeps draw counts (--keep-draws) or its leaves' training rows \
             (--keep-leaf-rows), which refer to its own partition's rows and which a pooled \
             model cannot keep; train the partitions without them"
        ));
    }
    Ok(())
}

/// The union of the models' categories of input `j`, in natural order, and for each
/// model the map from pooled code to its own.
fn union_levels(models: &[(&str, &Forest)], j: usize) -> (Vec<String>, Vec<Vec<Option<u32>>>) {
    let own = |m: &Forest| match &m.meta[j].kind {
        FeatureKind::Categorical { levels } => levels.clone(),
        FeatureKind::Numeric => Vec::new(),
    };
    let mut all: Vec<String> = models.iter().flat_map(|(_, m)| own(m)).collect();
    all.sort_by(|a, b| natural_order(a, b));
    all.dedup();
    let maps = models
        .iter()
        .map(|(_, m)| {
            let levels = own(m);
            all.iter()
                .map(|l| levels.iter().position(|o| o == l).map(|p| p as u32))
                .collect()
        })
        .collect();
    (all, maps)
}

/// The union of numeric bin layouts: every partition's bins, sorted, with bins whose
/// ranges overlap joined, so the first bin's low and the last's high are the lowest
/// and highest training value of all partitions.
fn union_bins(bins: &[&FeatureBins]) -> FeatureBins {
    let mut ranges: Vec<(f64, f64)> = bins
        .iter()
        .flat_map(|b| b.lo.iter().copied().zip(b.hi.iter().copied()))
        .collect();
    ranges.sort_by(|a, b| a.0.total_cmp(&b.0).then(a.1.total_cmp(&b.1)));
    let mut joined: Vec<(f64, f64)> = Vec::with_capacity(ranges.len());
    for (lo, hi) in ranges {
        match joined.last_mut() {
            Some(last) if lo <= last.1 => last.1 = last.1.max(hi),
            _ => joined.push((lo, hi)),
        }
    }
    FeatureBins {
        n_bins: joined.len(),
        lo: joined.iter().map(|r| r.0).collect(),
        hi: joined.iter().map(|r| r.1).collect(),
        categorical: false,
    }
}

/// Impurity importance over the trees of all models from each model's mean and
/// standard error over its own trees: the pooled mean is the tree-weighted mean, and
/// the pooled sum of squares adds each model's own (its standard error squared times
/// r(r - 1)) and its trees' spread about the pooled mean (the usual decomposition of
/// a sum of squares into within and between groups).
fn pooled_importance(parts: &[&Importance], meta: &[FeatureMeta]) -> Importance {
    let total: usize = parts.iter().map(|p| p.replicates).sum();
    let features = meta
        .iter()
        .enumerate()
        .map(|(j, f)| {
            let mean = parts
                .iter()
                .map(|p| p.replicates as f64 * p.features[j].mean)
                .sum::<f64>()
                / total.max(1) as f64;
            let std_error = (total >= 2).then(|| {
                let ss: f64 = parts
                    .iter()
                    .map(|p| {
                        let (r, e) = (p.replicates as f64, &p.features[j]);
                        let own = e.std_error.map_or(0.0, |s| s * s * r * (r - 1.0));
                        own + r * (e.mean - mean) * (e.mean - mean)
                    })
                    .sum();
                (ss / (total - 1) as f64).sqrt() / (total as f64).sqrt()
            });
            FeatureImportance {
                feature: j,
                name: f.name.clone(),
                mean,
                std_error,
                rank: 0,
            }
        })
        .collect();
    let mut out = Importance {
        method: parts[0].method,
        measure: parts[0].measure,
        replicates: total,
        features,
    };
    let mut order: Vec<usize> = (0..out.features.len()).collect();
    order.sort_by(|&a, &b| {
        out.features[b]
            .mean
            .total_cmp(&out.features[a].mean)
            .then(a.cmp(&b))
    });
    for (rank, &j) in order.iter().enumerate() {
        out.features[j].rank = rank + 1;
    }
    out
}

/// The pooled model's card: the first model's record of how rows are read, with the
/// rows, classes, values, weights and groups of all partitions added up.
fn pooled_card(models: &[(&str, &Forest)]) -> ModelCard {
    let cards: Vec<&ModelCard> = models.iter().map(|(_, m)| &m.card).collect();
    let mut card = cards[0].clone();
    card.copse_version = env!("CARGO_PKG_VERSION").to_string();
    card.source = format!(
        "pool of {} partitions: {}",
        cards.len(),
        cards
            .iter()
            .map(|c| c.source.as_str())
            .collect::<Vec<_>>()
            .join(", ")
    );
    card.rows_read = cards.iter().map(|c| c.rows_read).sum();
    card.rows_without_outcome = cards.iter().map(|c| c.rows_without_outcome).sum();
    for c in &cards[1..] {
        for (n, m) in card.class_counts.iter_mut().zip(&c.class_counts) {
            *n += m;
        }
        for i in &c.ignored {
            if !card.ignored.contains(i) {
                card.ignored.push(i.clone());
            }
        }
        for note in &c.notes {
            if !card.notes.contains(note) {
                card.notes.push(note.clone());
            }
        }
        if let (Some(w), Some(v)) = (card.weights.as_mut(), &c.weights) {
            w.total += v.total;
            w.zero_rows += v.zero_rows;
        }
        if let (Some(g), Some(h)) = (card.groups.as_mut(), &c.groups) {
            g.groups += h.groups;
            g.smallest = g.smallest.min(h.smallest);
            g.largest = g.largest.max(h.largest);
        }
    }
    // The mean of the values, each partition's weighted by its rows with a value.
    let ranges: Vec<([f64; 3], f64)> = cards
        .iter()
        .filter_map(|c| {
            c.value_range
                .map(|r| (r, (c.rows_read - c.rows_without_outcome) as f64))
        })
        .collect();
    if ranges.len() == cards.len() {
        let n: f64 = ranges.iter().map(|r| r.1).sum();
        card.value_range = Some([
            ranges.iter().map(|r| r.0[0]).fold(f64::INFINITY, f64::min),
            ranges.iter().map(|r| r.0[1] * r.1).sum::<f64>() / n.max(1.0),
            ranges
                .iter()
                .map(|r| r.0[2])
                .fold(f64::NEG_INFINITY, f64::max),
        ]);
    }
    card
}

impl Forest {
    /// Pools forests each trained on one partition of the rows into one model whose
    /// score is the mean over all their trees (so the tree-count weighted mean of
    /// their scores: a partition with more trees weighs more). `models` pairs each
    /// model with the name messages and the pooled record use (its file). Trees come
    /// in the order given. See [`crate::pool`] for what must agree and what the
    /// pooled model keeps.
    ///
    /// # Errors
    /// `PoolMismatch`, naming what differs, for fewer than two models, models of
    /// another task, outcome column, class list, inputs (names, order, kinds),
    /// settings (other than seed and trees), missing tokens or decimal mark, case
    /// weights or row groups; for the same model (training-row fingerprint) given
    /// twice; and for a model that is pooled itself, class-balanced, or keeps draw
    /// counts or leaf rows.
    pub fn pool(models: &[(&str, &Forest)]) -> Result<Forest> {
        if models.len() < 2 {
            return refuse(format!(
                "pooling needs two or more models, {} given; give one model per partition",
                models.len()
            ));
        }
        for &(name, m) in models {
            check_alone(name, m)?;
        }
        for (i, &(nb, b)) in models.iter().enumerate().skip(1) {
            for &(na, a) in &models[..i] {
                check_pair(na, a, nb, b)?;
            }
        }
        let (_, first) = models[0];
        let p = first.meta.len();
        let mut meta = first.meta.clone();
        let mut bins = Vec::with_capacity(p);
        // codes[k][j]: model k's map of input j.
        let mut codes: Vec<Vec<Option<Vec<Option<u32>>>>> = vec![vec![None; p]; models.len()];
        for j in 0..p {
            if first.meta[j].is_categorical() {
                let (levels, maps) = union_levels(models, j);
                bins.push(FeatureBins {
                    n_bins: levels.len(),
                    lo: Vec::new(),
                    hi: Vec::new(),
                    categorical: true,
                });
                meta[j] = FeatureMeta::categorical(first.meta[j].name.clone(), levels);
                for (k, map) in maps.into_iter().enumerate() {
                    codes[k][j] = Some(map);
                }
            } else {
                let each: Vec<&FeatureBins> = models.iter().map(|(_, m)| &m.bins[j]).collect();
                bins.push(union_bins(&each));
            }
        }
        let trees: Vec<Tree> = models
            .iter()
            .zip(&codes)
            .flat_map(|((_, m), maps)| m.trees.iter().map(|t| t.with_category_codes(maps)))
            .collect();
        let members: Vec<PoolMember> = models
            .iter()
            .zip(codes)
            .map(|(&(name, m), codes)| PoolMember {
                name: name.to_string(),
                card: m.card.clone(),
                seed: m.settings.seed,
                trees: m.trees.len(),
                training_rows: m.training_rows,
                oob: m.oob.clone(),
                oob_importance: m.oob_importance.clone(),
                fingerprint: m.fingerprint.clone(),
                codes,
            })
            .collect();
        let sum = |f: fn(&OobSummary) -> usize| models.iter().map(|(_, m)| f(&m.oob)).sum();
        let oob = OobSummary {
            metrics: None,
            rows_labelled: sum(|o| o.rows_labelled),
            rows_never_oob: sum(|o| o.rows_never_oob),
            rows_missing_outcome: sum(|o| o.rows_missing_outcome),
            error_curve: Vec::new(),
        };
        let importances: Vec<&Importance> =
            models.iter().map(|(_, m)| &m.impurity_importance).collect();
        let mut settings = first.settings.clone();
        settings.trees = trees.len();
        let forest = Forest {
            impurity_importance: pooled_importance(&importances, &meta),
            meta,
            task: first.task,
            classes: first.classes.clone(),
            trees,
            settings,
            features_per_split: first.features_per_split,
            training_rows: models.iter().map(|(_, m)| m.training_rows).sum(),
            oob,
            oob_importance: None,
            draws: None,
            bins,
            card: pooled_card(models),
            prior_shift: None,
            fingerprint: RowFingerprint::of_rows(0, std::iter::empty::<std::iter::Empty<f64>>()),
            leaf_rows: None,
            pool: Some(Pool { members }),
        };
        forest.check()?;
        Ok(forest)
    }

    /// The partitions of a pooled model ([`Forest::pool`]), with each one's own
    /// out-of-bag summary and importance; `None` for a model trained in one run.
    pub fn pool_record(&self) -> Option<&Pool> {
        self.pool.as_ref()
    }
}

#[cfg(test)]
mod tests;
