//! The report of `copse importance`: permutation importance on labelled rows the model
//! has not seen, with its tests, beside the model summary (whose out-of-bag importance
//! is listed as `oob_importance` in JSON).
use super::model::ModelView;
use super::ranking::{
    importance_intro, importance_with_tests, oob_baseline, ImportanceView, RankView, TestView,
};
use super::{caution, Style, LABEL};
use crate::numbers::count;
use copse_forest::{Forest, PermutationImportance};
use serde::Serialize;
use std::fmt::Write;
use std::path::Path;

/// The held-out importance report.
#[derive(Serialize)]
pub struct ImportanceReport<'a> {
    #[serde(flatten)]
    model: ModelView<'a>,
    /// The model's out-of-bag ranking (empty when it has none).
    oob_importance: Vec<RankView<'a>>,
    /// The tests of the out-of-bag ranking (null when it has none).
    oob_importance_tests: Option<Vec<TestView>>,
    /// The ranking on the held-out rows.
    #[serde(flatten)]
    held_out: ImportanceView<'a>,
    source: &'a str,
    rows_read: usize,
    repeats: u32,
    #[serde(skip)]
    imp: &'a PermutationImportance,
    #[serde(skip)]
    baseline: Option<f64>,
    #[serde(skip)]
    model_path: &'a Path,
}

impl<'a> ImportanceReport<'a> {
    /// The report of `imp`, measured with `repeats` shuffles per input on the
    /// `rows_read` rows of `source` with `forest` (read from `model_path`); for numbers
    /// `baseline` is the forest's mean squared error on those rows.
    pub fn new(
        forest: &'a Forest,
        model_path: &'a Path,
        imp: &'a PermutationImportance,
        source: &'a str,
        rows_read: usize,
        repeats: u32,
        baseline: Option<f64>,
    ) -> Self {
        let oob = ImportanceView::new(forest.oob_importance(), None, oob_baseline(forest));
        ImportanceReport {
            model: ModelView::new("importance", forest),
            oob_importance: oob.importance,
            oob_importance_tests: oob.importance_tests,
            held_out: ImportanceView::new(Some(imp), None, baseline),
            source,
            rows_read,
            repeats,
            imp,
            baseline,
            model_path,
        }
    }

    /// The printed report.
    pub fn text(&self, st: Style) -> String {
        let mut text = String::new();
        let _ = writeln!(text, "copse importance report\n");
        let _ = writeln!(text, "  {:<LABEL$}{}", "model", self.model_path.display());
        let _ = writeln!(
            text,
            "  {:<LABEL$}{} ({})\n",
            "data",
            self.source,
            count(self.rows_read, "row", "rows")
        );
        let _ = writeln!(text, "{}", st.head("WHICH INPUTS MATTER ON THESE ROWS"));
        let _ = writeln!(
            text,
            "{}\n",
            importance_intro(&self.imp.error, true, self.baseline)
        );
        importance_with_tests(
            &mut text,
            self.imp,
            true,
            None,
            self.baseline,
            "see 'copse train --shuffled-target-runs'.",
        );
        let _ = writeln!(text);
        caution(&mut text, st);
        text
    }
}
