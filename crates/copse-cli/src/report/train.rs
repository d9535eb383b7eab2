//! The report of `copse train`: the model summary, the out-of-bag importance with its
//! tests, the out-of-bag error curve, the files written, and the time taken.
use super::judged::Judged;
use super::model::ModelView;
use super::ranking::{importance_section, oob_baseline, ImportanceView};
use super::sections::{data_section, oob_section, rare_class_advice, settings_section};
use super::{caution, Style};
use crate::numbers::decimal_bytes;
use copse_forest::{Forest, Significance};
use serde::Serialize;
use std::fmt::Write;
use std::path::PathBuf;

/// The training report.
#[derive(Serialize)]
pub struct TrainView<'a> {
    #[serde(flatten)]
    model: ModelView<'a>,
    #[serde(flatten)]
    importance: ImportanceView<'a>,
    oob_error_curve: &'a [Option<f64>],
    model_file: ModelFile,
    outputs: Vec<OutputView>,
    threads: usize,
    seconds: f64,
    notes: &'a [String],
    /// Missing cells of each input among the rows used, in input order.
    missing_cells: &'a [usize],
    #[serde(flatten)]
    judged: Option<&'a Judged<'a>>,
    /// Seconds spent training, checking out of bag and measuring importance.
    #[serde(skip)]
    training_seconds: f64,
    #[serde(skip)]
    forest: &'a Forest,
    #[serde(skip)]
    shuffle: Option<&'a Significance>,
}

/// The model file written.
#[derive(Serialize)]
struct ModelFile {
    path: String,
    bytes: u64,
    nodes: usize,
}

/// A file written: what it holds and where it went.
#[derive(Serialize)]
struct OutputView {
    what: String,
    path: String,
}

/// What a training run did besides growing the model.
pub struct TrainFacts<'a> {
    /// The shuffled-target test of the out-of-bag importance, if run.
    pub shuffle: Option<&'a Significance>,
    /// Bytes of the model file.
    pub model_bytes: u64,
    /// Files written, the model first: (what, path).
    pub outputs: &'a [(String, PathBuf)],
    /// Worker threads.
    pub threads: usize,
    /// Seconds from start to the last file written.
    pub seconds: f64,
    /// Seconds spent training, checking out of bag and measuring importance.
    pub training_seconds: f64,
    /// Notes about the data.
    pub notes: &'a [String],
    /// Missing cells of each input among the rows used, in input order.
    pub missing_cells: &'a [usize],
    /// The decision layer on the out-of-bag scores.
    pub judged: Option<&'a Judged<'a>>,
}

impl<'a> TrainView<'a> {
    /// The report on `forest`, trained as `facts` says.
    pub fn new(forest: &'a Forest, facts: &TrainFacts<'a>) -> Self {
        let model_path = facts
            .outputs
            .first()
            .map(|(_, p)| p.display().to_string())
            .unwrap_or_default();
        TrainView {
            model: ModelView::new("train", forest),
            importance: ImportanceView::new(
                forest.oob_importance(),
                facts.shuffle,
                oob_baseline(forest),
            ),
            oob_error_curve: &forest.oob().error_curve,
            model_file: ModelFile {
                path: model_path,
                bytes: facts.model_bytes,
                nodes: forest.n_nodes(),
            },
            outputs: facts
                .outputs
                .iter()
                .map(|(w, p)| OutputView {
                    what: w.clone(),
                    path: p.display().to_string(),
                })
                .collect(),
            threads: facts.threads,
            seconds: facts.seconds,
            notes: facts.notes,
            missing_cells: facts.missing_cells,
            judged: facts.judged,
            training_seconds: facts.training_seconds,
            forest,
            shuffle: facts.shuffle,
        }
    }

    /// The printed report.
    pub fn text(&self, st: Style) -> String {
        let model = self.forest;
        let mut text = String::new();
        let _ = writeln!(text, "copse training report\n");
        if let Some(j) = self.judged {
            j.notices_text(&mut text, st);
        }
        data_section(&mut text, st, model, Some(self.missing_cells));
        settings_section(&mut text, st, model, Some(self.threads));
        oob_section(&mut text, st, model);
        if let Some(advice) = rare_class_advice(model) {
            let _ = writeln!(text, "{advice}\n");
        }
        if let Some(j) = self.judged {
            j.text(&mut text, st);
        }
        importance_section(&mut text, st, model, self.shuffle);
        let _ = writeln!(text, "{}", st.head("OUTPUTS"));
        for (k, o) in self.outputs.iter().enumerate() {
            // The model file comes first.
            let size = if k == 0 {
                format!(
                    " ({}, {} nodes)",
                    decimal_bytes(self.model_file.bytes),
                    self.model_file.nodes
                )
            } else {
                String::new()
            };
            let _ = writeln!(text, "  {:<24}{}{size}", o.what, o.path);
        }
        let _ = writeln!(
            text,
            "  {:<24}{:.2} s (training, out-of-bag check and importance {:.2} s)\n",
            "time taken", self.seconds, self.training_seconds
        );
        caution(&mut text, st);
        text
    }
}
