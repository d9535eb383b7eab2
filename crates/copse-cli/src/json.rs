//! The machine-readable reports (`--json`): one JSON object per command, with the
//! same facts as the printed report. The shape is documented in the README; keys are
//! only ever added, never renamed.
use crate::report::CAUTION;
use copse_forest::Forest as Model;
use copse_forest::Task;
use copse_forest::{
    mirrored_null_test, FeatureKind, Importance, Metrics, PermutationImportance, Sampling,
    Significance, SignificanceTest,
};
use serde_json::{json, Map, Value};

/// Measures as a JSON object: classification keys `error`, `confusion`,
/// `class_error`, `log_loss`, `brier`, `roc_auc`; regression keys `error` (the mean
/// squared error), `mse`, `mae`, `variance_explained`; `rows` for both.
pub fn metrics(m: &Metrics) -> Value {
    match m {
        Metrics::Classes(c) => json!({
            "rows": c.rows,
            "error": c.error,
            "confusion": c.confusion,
            "class_error": c.class_error,
            "log_loss": c.log_loss,
            "brier": c.brier,
            "roc_auc": c.roc_auc,
        }),
        Metrics::Values(v) => json!({
            "rows": v.rows,
            "error": v.mse,
            "mse": v.mse,
            "mae": v.mae,
            "variance_explained": v.variance_explained,
        }),
    }
}

/// The model's out-of-bag summary; `error` is null when no row was out of bag.
pub fn oob(model: &Model) -> Value {
    let o = model.oob();
    let mut v = match &o.metrics {
        Some(m) => metrics(m),
        None => json!({ "rows": 0, "error": null }),
    };
    if let Value::Object(map) = &mut v {
        map.insert("rows_never_out_of_bag".into(), json!(o.rows_never_oob));
        map.insert("rows_without_target".into(), json!(o.rows_missing_outcome));
    }
    v
}

/// A ranked list of `{feature, mean, std_error, rank}`.
pub fn ranking(imp: &Importance) -> Value {
    Value::Array(
        imp.ranked()
            .into_iter()
            .map(|f| {
                json!({
                    "feature": f.name,
                    "mean": f.mean,
                    "std_error": f.std_error,
                    "rank": f.rank,
                })
            })
            .collect(),
    )
}

/// What an importance list measures.
pub fn importance_about(imp: &Importance) -> Value {
    json!({
        "method": imp.method.to_string(),
        "measure": imp.measure.key(),
        "replicates": imp.replicates,
    })
}

/// Adds `importance`, `importance_about` and (classes) `importance_brier`.
pub fn put_permutation(map: &mut Map<String, Value>, imp: Option<&PermutationImportance>) {
    match imp {
        Some(p) => {
            map.insert("importance".into(), ranking(&p.error));
            map.insert("importance_about".into(), importance_about(&p.error));
            if let Some(b) = &p.brier {
                map.insert("importance_brier".into(), ranking(b));
            }
        }
        None => {
            map.insert("importance".into(), json!([]));
            map.insert("importance_about".into(), Value::Null);
        }
    }
}

fn sampling(s: &Sampling) -> Value {
    json!(s.to_string())
}

/// The common part of every command's object: task, target, classes, trees, inputs,
/// settings, training data, out-of-bag summary and out-of-bag importance.
pub fn model_object(command: &str, model: &Model) -> Map<String, Value> {
    let f = model;
    let s = f.settings();
    let t = model.card();
    let mut map = Map::new();
    map.insert("command".into(), json!(command));
    map.insert("copse_version".into(), json!(env!("CARGO_PKG_VERSION")));
    map.insert("task".into(), json!(model.task().name()));
    map.insert("target".into(), json!(model.card().target));
    map.insert("classes".into(), json!(f.classes()));
    map.insert("trees".into(), json!(f.trees().len()));
    let inputs: Vec<Value> = model
        .meta()
        .iter()
        .enumerate()
        .map(|(j, m)| match (&m.kind, model.bins().get(j)) {
            (FeatureKind::Categorical { levels }, _) => {
                json!({ "name": m.name, "kind": "categorical", "categories": levels })
            }
            (_, Some(b)) if b.n_bins > 0 => json!({
                "name": m.name,
                "kind": "numeric",
                "bins": b.n_bins,
                "min": b.lo[0],
                "max": b.hi[b.n_bins - 1],
                "bin_edges": (1..b.n_bins)
                    .map(|k| b.threshold_between(k, k + 1))
                    .collect::<Vec<f64>>(),
            }),
            _ => json!({ "name": m.name, "kind": "numeric", "bins": 0 }),
        })
        .collect();
    map.insert("inputs".into(), Value::Array(inputs));
    map.insert(
        "settings".into(),
        json!({
            "trees": s.trees,
            "features_per_split": f.features_per_split(),
            "features_per_split_rule": t.features_rule,
            "sampling": sampling(&s.sampling),
            "balanced": s.balanced,
            "impurity": if model.task() == Task::Classify {
                json!(format!("{:?}", s.tree.impurity).to_lowercase())
            } else {
                json!("variance")
            },
            "max_depth": s.tree.max_depth,
            "min_leaf": s.tree.min_leaf,
            "bins": s.bins,
            "seed": s.seed,
            "keep_draws": f.draws().is_some(),
        }),
    );
    map.insert(
        "data".into(),
        json!({
            "source": t.source,
            "rows_read": t.rows_read,
            "rows_without_target": t.rows_without_outcome,
            "ignored": t.ignored,
            "class_counts": t.class_counts,
            "missing_tokens": model.card().missing_tokens,
        }),
    );
    map.insert("oob".into(), oob(model));
    put_permutation(&mut map, f.oob_importance());
    if let Some(imp) = f.oob_importance() {
        put_p_values(&mut map, "importance", &imp.error, None);
    }
    map.insert("caution".into(), json!(CAUTION));
    map
}

/// Prints a JSON object on one line of standard output.
///
/// # Errors
/// A write failure, or a quiet stop when the reader has gone.
pub fn print(map: Map<String, Value>) -> crate::error::CliResult<()> {
    use std::io::Write;
    let text = serde_json::to_string(&Value::Object(map))
        .map_err(|e| crate::error::CliError::failure(format!("internal: {e}")))?;
    let mut out = std::io::stdout().lock();
    writeln!(out, "{text}")
        .and_then(|()| out.flush())
        .map_err(|e| crate::error::CliError::write("standard output", &e))
}

fn p_key(t: SignificanceTest) -> &'static str {
    match t {
        SignificanceTest::MirroredNull => "p_mirror",
        SignificanceTest::ResponsePermutation => "p_shuffle",
    }
}

/// Adds p-values to the entries of the ranking under `key` (made by [`ranking`] from
/// `imp`): `p_mirror` from the mirrored-null test of `imp` (null when it has no null
/// sample) and `p_shuffle` from `shuffle` when given; and a list `<key>_tests` saying
/// for each test its null size and smallest possible p-value.
pub fn put_p_values(
    map: &mut Map<String, Value>,
    key: &str,
    imp: &Importance,
    shuffle: Option<&Significance>,
) {
    let mirror = mirrored_null_test(imp);
    let mut tests = vec![match &mirror {
        Some(m) => test_about(m),
        None => json!({
            "test": SignificanceTest::MirroredNull.to_string(),
            "measure": imp.measure.key(),
            "null_size": 0,
            "smallest_p": null,
        }),
    }];
    tests.extend(shuffle.map(test_about));
    if let Some(Value::Array(entries)) = map.get_mut(key) {
        for e in entries.iter_mut() {
            let Some(name) = e.get("feature").and_then(Value::as_str) else {
                continue;
            };
            let Some(j) = imp.features.iter().position(|f| f.name == name) else {
                continue;
            };
            if let Value::Object(o) = e {
                let mp = mirror.as_ref().and_then(|m| m.p_values.get(j).copied());
                o.insert(p_key(SignificanceTest::MirroredNull).into(), json!(mp));
                if let Some(s) = shuffle {
                    o.insert(p_key(s.test).into(), json!(s.p_values.get(j)));
                }
            }
        }
    }
    map.insert(format!("{key}_tests"), Value::Array(tests));
}

fn test_about(s: &Significance) -> Value {
    json!({
        "test": s.test.to_string(),
        "measure": s.measure.key(),
        "null_size": s.null_size,
        "smallest_p": 1.0 / (1.0 + s.null_size as f64),
    })
}
