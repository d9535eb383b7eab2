//! The model summary every report about a model shares: task, target, classes, trees,
//! inputs, settings, training data and the out-of-bag check. As JSON these are the
//! common keys of `train`, `evaluate`, `importance` and `inspect`.
use super::measures::MeasuresView;
use super::CAUTION;
use copse_forest::{FeatureKind, Forest, GroupsRecord, Task, WeightsRecord};
use serde::Serialize;

/// The model summary.
#[derive(Debug, Serialize)]
pub struct ModelView<'a> {
    /// The command that made the report.
    pub command: &'static str,
    /// The copse that made the report.
    pub copse_version: &'static str,
    /// `classify` or `regress`.
    pub task: &'static str,
    /// The target column.
    pub target: &'a str,
    /// The classes, in the model's order (empty for numbers).
    pub classes: &'a [String],
    /// Trees in the model.
    pub trees: usize,
    /// Each input: its kind, and its categories or bins.
    pub inputs: Vec<InputView<'a>>,
    /// How the model was trained.
    pub settings: SettingsView,
    /// The training data.
    pub data: DataView<'a>,
    /// The out-of-bag check (for a pooled model, none: see `pooled`).
    pub oob: OobView<'a>,
    /// For a pooled model, its partitions and their own out-of-bag figures.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub pooled: Option<super::pooled::PooledView<'a>>,
    /// The caution under every report.
    pub caution: &'static str,
}

impl<'a> ModelView<'a> {
    /// The summary of `model` in the report of `command`.
    pub fn new(command: &'static str, model: &'a Forest) -> Self {
        let card = model.card();
        ModelView {
            command,
            copse_version: env!("CARGO_PKG_VERSION"),
            task: model.task().name(),
            target: &card.target,
            classes: model.classes(),
            trees: model.trees().len(),
            inputs: InputView::all(model),
            settings: SettingsView::new(model),
            data: DataView::new(model),
            oob: OobView::new(model),
            pooled: super::pooled::PooledView::of(model),
            caution: CAUTION,
        }
    }
}

/// One input of the model: `categories` for a categorical input; `bins`, and when it
/// has any, `min`, `max` and `bin_edges` for a numeric one.
#[derive(Debug, Serialize)]
pub struct InputView<'a> {
    name: &'a str,
    kind: &'static str,
    #[serde(skip_serializing_if = "Option::is_none")]
    categories: Option<&'a [String]>,
    #[serde(skip_serializing_if = "Option::is_none")]
    bins: Option<usize>,
    #[serde(skip_serializing_if = "Option::is_none")]
    min: Option<f64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    max: Option<f64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    bin_edges: Option<Vec<f64>>,
}

impl<'a> InputView<'a> {
    fn all(model: &'a Forest) -> Vec<Self> {
        model
            .meta()
            .iter()
            .enumerate()
            .map(|(j, m)| {
                let blank = InputView {
                    name: &m.name,
                    kind: "numeric",
                    categories: None,
                    bins: None,
                    min: None,
                    max: None,
                    bin_edges: None,
                };
                match (&m.kind, model.bins().get(j)) {
                    (FeatureKind::Categorical { levels }, _) => InputView {
                        kind: "categorical",
                        categories: Some(levels),
                        ..blank
                    },
                    (_, Some(b)) if b.n_bins > 0 => InputView {
                        bins: Some(b.n_bins),
                        min: Some(b.lo[0]),
                        max: Some(b.hi[b.n_bins - 1]),
                        bin_edges: Some(
                            (1..b.n_bins)
                                .map(|k| b.threshold_between(k, k + 1))
                                .collect(),
                        ),
                        ..blank
                    },
                    _ => InputView {
                        bins: Some(0),
                        ..blank
                    },
                }
            })
            .collect()
    }
}

/// How the model was trained.
#[derive(Debug, Serialize)]
pub struct SettingsView {
    trees: usize,
    features_per_split: usize,
    features_per_split_rule: String,
    sampling: String,
    balanced: bool,
    impurity: String,
    cuts: &'static str,
    max_depth: Option<usize>,
    min_leaf: CaseWeight,
    bins: usize,
    seed: u64,
    keep_draws: bool,
    keep_leaf_rows: bool,
}

impl SettingsView {
    fn new(model: &Forest) -> Self {
        let s = model.settings();
        SettingsView {
            trees: s.trees,
            features_per_split: model.features_per_split(),
            features_per_split_rule: s.features_per_split.to_string(),
            sampling: s.sampling.to_string(),
            balanced: s.balanced,
            impurity: impurity_name(model),
            cuts: s.tree.cuts.word(),
            max_depth: s.tree.max_depth,
            min_leaf: CaseWeight::new(s.tree.min_leaf),
            bins: s.bins,
            seed: s.seed,
            keep_draws: model.draws().is_some(),
            keep_leaf_rows: model.leaf_rows().is_some(),
        }
    }
}

/// A case weight in JSON: an integer when whole (the command line only gives whole
/// ones), else the number as it is.
#[derive(Debug, Serialize)]
#[serde(untagged)]
enum CaseWeight {
    Whole(u64),
    Part(f64),
}

impl CaseWeight {
    fn new(w: f64) -> Self {
        if w.fract() == 0.0 && (0.0..9.0e15).contains(&w) {
            CaseWeight::Whole(w as u64)
        } else {
            CaseWeight::Part(w)
        }
    }
}

/// The split measure's name: the class impurity (`gini`, `entropy`) or `variance`.
pub fn impurity_name(model: &Forest) -> String {
    match model.task() {
        // The tree crate gives its impurities no names of their own; the variant's is
        // the one the command line takes.
        Task::Classify => format!("{:?}", model.settings().tree.impurity).to_lowercase(),
        Task::Regress => "variance".to_string(),
    }
}

/// The training data as read.
#[derive(Debug, Serialize)]
pub struct DataView<'a> {
    source: &'a str,
    rows_read: usize,
    rows_without_target: usize,
    ignored: &'a [String],
    class_counts: &'a [u64],
    missing_tokens: &'a [String],
    /// The case weights column, their total and rows of weight 0 (absent without).
    #[serde(skip_serializing_if = "Option::is_none")]
    case_weights: Option<&'a WeightsRecord>,
    /// The group column, the number of groups and their smallest and largest sizes
    /// (absent without).
    #[serde(skip_serializing_if = "Option::is_none")]
    row_groups: Option<&'a GroupsRecord>,
}

impl<'a> DataView<'a> {
    fn new(model: &'a Forest) -> Self {
        let t = model.card();
        DataView {
            source: &t.source,
            rows_read: t.rows_read,
            rows_without_target: t.rows_without_outcome,
            ignored: &t.ignored,
            class_counts: &t.class_counts,
            missing_tokens: &t.missing_tokens,
            case_weights: t.weights.as_ref(),
            row_groups: t.groups.as_ref(),
        }
    }
}

/// The out-of-bag check: its measures (`error` null when no row was out of bag) and
/// the rows it could not judge.
#[derive(Debug, Serialize)]
pub struct OobView<'a> {
    #[serde(flatten)]
    measures: MeasuresView<'a>,
    rows_never_out_of_bag: usize,
    rows_without_target: usize,
    /// With kept leaf rows: how often training outcomes fell inside their out-of-bag
    /// range.
    #[serde(skip_serializing_if = "Option::is_none")]
    outcome_range: Option<RangeCheckView>,
}

/// The out-of-bag check of the outcome ranges (`--keep-leaf-rows`): the coverage asked
/// for, the rows judged, the share whose outcome lay inside, the mean width.
#[derive(Debug, Serialize)]
pub struct RangeCheckView {
    coverage: f64,
    rows: usize,
    share_inside: f64,
    mean_width: f64,
}

impl<'a> OobView<'a> {
    fn new(model: &'a Forest) -> Self {
        let o = model.oob();
        OobView {
            measures: MeasuresView::new(o.metrics.as_ref()),
            rows_never_out_of_bag: o.rows_never_oob,
            rows_without_target: o.rows_missing_outcome,
            outcome_range: model
                .leaf_rows()
                .and_then(|r| r.oob_check())
                .map(|c| RangeCheckView {
                    coverage: c.level,
                    rows: c.rows,
                    share_inside: c.share_inside(),
                    mean_width: c.mean_width,
                }),
        }
    }
}
