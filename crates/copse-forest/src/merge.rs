//! Merging the parts of a forest ([`crate::part`]) into the model one run of all its
//! trees makes: the parts are checked against each other and against the data, every
//! tree's sample is drawn again from the seed, and the model is finished by the same
//! code as [`Forest::train`] (out-of-bag pass, error curve, importance, fingerprint),
//! in tree order, so the bytes are the same.
use crate::error::{Error, ErrorKind, Result};
use crate::fingerprint::rows_digest;
use crate::forest::{Forest, Trained};
use crate::oob_importance::oob_tree_increases;
use crate::outcome::Outcome;
use crate::part::ForestPart;
use crate::plan::Plan;
use crate::progress::Progress;
use crate::settings::ForestSettings;
use crate::train::{training_fingerprint, Finish, TrainOptions};
use copse_tree::{FeatureMeta, Tree};
use ndarray::ArrayView2;

fn refuse<T>(message: String) -> Result<T> {
    Err(Error::new(ErrorKind::PartsDisagree, message))
}

fn range_text(p: &ForestPart) -> String {
    let r = p.tree_range();
    format!("{} (trees {}..{})", p.name, r.start, r.end)
}

/// The first setting in which `b` differs from `a` (the number of trees aside), as
/// (what, value in a, value in b).
fn settings_difference(
    a: &ForestSettings,
    b: &ForestSettings,
) -> Option<(&'static str, String, String)> {
    let pairs = [
        ("the seed (--seed)", a.seed.to_string(), b.seed.to_string()),
        (
            "inputs per split (--features-per-split)",
            a.features_per_split.to_string(),
            b.features_per_split.to_string(),
        ),
        (
            "sampling (--sampling)",
            a.sampling.to_string(),
            b.sampling.to_string(),
        ),
        (
            "class-balanced sampling (--balanced)",
            a.balanced.to_string(),
            b.balanced.to_string(),
        ),
        (
            "value bins (--bins)",
            a.bins.to_string(),
            b.bins.to_string(),
        ),
        (
            "the cut points (--cuts)",
            a.tree.cuts.word().to_string(),
            b.tree.cuts.word().to_string(),
        ),
        (
            "the tree rules",
            format!("{:?}", a.tree),
            format!("{:?}", b.tree),
        ),
    ];
    pairs.into_iter().find(|(_, x, y)| x != y)
}

/// Checks that `b` belongs to the same forest as `a`: settings, seed, data and what
/// the model keeps.
fn check_pair(a: &ForestPart, b: &ForestPart) -> Result<()> {
    let (na, nb) = (range_text(a), range_text(b));
    if let Some((what, va, vb)) = settings_difference(&a.settings, &b.settings) {
        return refuse(format!(
            "{nb} and {na} are not parts of one forest: {what} is {vb} in the first and {va} in \
             the second; train every part with the same settings and seed"
        ));
    }
    let other_data = |why: &str| {
        refuse(format!(
            "{nb} and {na} were trained on different data ({why}); train every part on the \
             same file, read the same way"
        ))
    };
    if a.training_rows != b.training_rows {
        return other_data(&format!(
            "{} rows against {}",
            b.training_rows, a.training_rows
        ));
    }
    if a.meta != b.meta || a.bins != b.bins || a.features_per_split != b.features_per_split {
        return other_data("their inputs differ");
    }
    if a.task != b.task || a.classes != b.classes {
        return other_data("their targets differ");
    }
    let digests_differ = matches!((a.digest, b.digest), (Some(x), Some(y)) if x != y);
    if digests_differ || a.fingerprint != b.fingerprint {
        return other_data("their rows differ");
    }
    if a.card != b.card {
        return other_data(
            "the data's record differs: file name, target, missing tokens, decimal mark or \
             columns left out",
        );
    }
    if a.keep_draws != b.keep_draws {
        return refuse(format!(
            "{nb} and {na} are not parts of one forest: one keeps draw counts (--keep-draws) and \
             the other does not; train every part with or every part without it"
        ));
    }
    if a.keep_leaf_rows != b.keep_leaf_rows {
        return refuse(format!(
            "{nb} and {na} are not parts of one forest: one keeps its leaves' training rows \
             (--keep-leaf-rows) and the other does not; train every part with or every part \
             without it"
        ));
    }
    // A model taken as a part carries no weights or groups; its card's record of them
    // was compared above.
    if !a.from_model && !b.from_model && (a.case_weights != b.case_weights || a.groups != b.groups)
    {
        return other_data(
            "their case weights (--weights) or row groups (--group) differ; give every part the \
             same",
        );
    }
    if a.oob_importance != b.oob_importance {
        return refuse(format!(
            "{nb} and {na} are not parts of one forest: one has out-of-bag importance and the \
             other does not"
        ));
    }
    Ok(())
}

/// Orders the parts by their first tree and checks they cover `0..N` once, `N` being
/// the forest size the trained parts agree on. Returns the order and `N`.
fn check_ranges(parts: &[ForestPart]) -> Result<(Vec<usize>, usize)> {
    let mut order: Vec<usize> = (0..parts.len()).collect();
    order.sort_by_key(|&i| (parts[i].first, parts[i].trees.len()));
    let mut total = None::<&ForestPart>;
    for p in parts.iter().filter(|p| !p.from_model) {
        match total {
            Some(t) if t.settings.trees != p.settings.trees => {
                return refuse(format!(
                    "{} is a part of a forest of {} trees, {} of one of {}; give every part the \
                     same --trees",
                    range_text(p),
                    p.settings.trees,
                    range_text(t),
                    t.settings.trees
                ))
            }
            _ => total = total.or(Some(p)),
        }
    }
    let n = match total {
        Some(t) => t.settings.trees,
        None => parts.iter().map(|p| p.tree_range().end).max().unwrap_or(0),
    };
    let mut next = 0;
    let mut previous: Option<&ForestPart> = None;
    for &i in &order {
        let p = &parts[i];
        let r = p.tree_range();
        if r.start > next {
            return refuse(format!(
                "no part holds trees {next}..{}; train them with --tree-range {next}..{} and \
                 merge again",
                r.start, r.start
            ));
        }
        if r.start < next {
            let q = previous.map_or_else(String::new, range_text);
            return refuse(format!(
                "{} overlaps {q}: each tree must come from one part only; leave one of them out",
                range_text(p)
            ));
        }
        next = r.end;
        previous = Some(p);
    }
    if next < n {
        return refuse(format!(
            "no part holds trees {next}..{n} of the {n}; train them with --tree-range {next}..{n} \
             and merge again"
        ));
    }
    if next > n {
        let last = previous.map_or_else(String::new, range_text);
        return refuse(format!(
            "{last} reaches past the {n} trees the parts were trained for"
        ));
    }
    Ok((order, n))
}

/// Checks the data given for the merge is the data the parts were trained on.
fn check_data(
    p: &ForestPart,
    x: ArrayView2<'_, f64>,
    meta: &[FeatureMeta],
    outcome: &Outcome,
) -> Result<()> {
    let wrong = |why: String| {
        Err(Error::new(
            ErrorKind::DataMismatch,
            format!(
                "the data given is not the data {} was trained on ({why}); merge with the \
                 training file itself",
                range_text(p)
            ),
        ))
    };
    if x.nrows() != p.training_rows || outcome.len() != x.nrows() {
        return wrong(format!(
            "{} rows, the part's {}",
            x.nrows(),
            p.training_rows
        ));
    }
    if meta != p.meta.as_slice() {
        return wrong("its inputs differ".to_string());
    }
    let classes: &[String] = match outcome {
        Outcome::Classes { labels, .. } => labels,
        Outcome::Values(_) => &[],
    };
    if classes != p.classes.as_slice()
        || outcome.is_classes() != (p.task == crate::task::Task::Classify)
    {
        return wrong("its target differs".to_string());
    }
    if p.digest.is_some_and(|d| d != rows_digest(x, outcome))
        || training_fingerprint(x, outcome) != p.fingerprint
    {
        return wrong("its rows or their order differ".to_string());
    }
    Ok(())
}

impl Forest {
    /// Merges parts of one forest (from [`Forest::train_part`], or a model taken as its
    /// first trees with [`ForestPart::from_model`]) into the model a single run of all
    /// its trees makes, byte for byte. `x`, `meta` and `outcome` are the training data
    /// the parts were grown on: the out-of-bag results and importance are computed from
    /// it again. The parts may come in any order.
    ///
    /// # Errors
    /// `PartsDisagree` for parts of different forests (settings, seed, data, what the
    /// model keeps) or ranges that overlap, leave gaps or fall short of the forest;
    /// `DataMismatch` when the data is not the parts' training data; `EmptyData` for
    /// no parts.
    pub fn merge_parts(
        parts: &[ForestPart],
        x: ArrayView2<'_, f64>,
        meta: &[FeatureMeta],
        outcome: &Outcome,
        progress: Option<&(dyn Fn(Progress) + Sync)>,
    ) -> Result<Trained> {
        let Some(first) = parts.first() else {
            return Err(Error::new(
                ErrorKind::EmptyData,
                "no parts to merge; give one or more",
            ));
        };
        for p in &parts[1..] {
            check_pair(first, p)?;
        }
        let (order, n) = check_ranges(parts)?;
        let reference = parts.iter().find(|p| p.digest.is_some()).unwrap_or(first);
        check_data(reference, x, meta, outcome)?;
        let progress: &(dyn Fn(Progress) + Sync) = progress.unwrap_or(&|_| {});
        let settings = ForestSettings {
            trees: n,
            ..first.settings.clone()
        };
        // The weights and groups come with the grown parts (equal, checked above); a
        // model taken as a part has only its card's record of them.
        let carrier = parts.iter().find(|p| !p.from_model);
        let case_weights = carrier.and_then(|p| p.case_weights.as_deref());
        let groups = carrier.and_then(|p| p.groups.as_deref());
        let card = &first.card;
        if (card.weights.is_some() && case_weights.is_none())
            || (card.groups.is_some() && groups.is_none())
        {
            return refuse(format!(
                "{} was trained with case weights or row groups, which a model file does not \
                 keep; grow it with parts from 'copse train --tree-range', which carry them",
                range_text(first)
            ));
        }
        let options = TrainOptions {
            oob_importance: first.oob_importance,
            keep_draws: first.keep_draws,
            keep_leaf_rows: first.keep_leaf_rows,
            case_weights,
            groups,
            ..TrainOptions::default()
        };
        let plan = Plan::new(x.ncols(), outcome, &settings, &options)?;
        let trees: Vec<Tree> = order
            .iter()
            .flat_map(|&i| parts[i].trees.iter().cloned())
            .collect();
        let samples = plan.resample(&trees, x, settings.seed);
        // Each part brings its trees' importance pieces; a model taken as a part has
        // none, so its trees' pieces are computed here from their samples.
        let importance_pieces = first.oob_importance.then(|| {
            let mut pieces = Vec::with_capacity(n);
            for &i in &order {
                let p = &parts[i];
                match &p.importance {
                    Some(own) => pieces.extend(own.iter().cloned()),
                    None => {
                        let r = p.tree_range();
                        let masks: Vec<_> =
                            samples[r.clone()].iter().map(|s| s.oob().clone()).collect();
                        pieces.extend(oob_tree_increases(
                            &p.trees,
                            &masks,
                            r.start,
                            x,
                            outcome,
                            plan.weights,
                            settings.seed,
                            progress,
                        ));
                    }
                }
            }
            pieces
        });
        Finish {
            x,
            meta,
            outcome,
            settings: &settings,
            bins: first.bins.clone(),
            oob_importance: first.oob_importance,
            card: Some(first.card.clone()),
            importance_pieces,
            plan,
            stop: None,
        }
        .run(trees, samples, progress)
    }
}
