//! `copse merge PART... --out MODEL`: join part files (and at most one model file,
//! whose trees come first) into the model one run of all the trees makes, reading the
//! training file again for the out-of-bag figures and importance; the report is the
//! one `copse train` prints.
use crate::args::MergeArgs;
use crate::commands::{check_destination, emit};
use crate::error::{forest_error, CliError, CliResult};
use crate::output::write_file;
use crate::report::train::{TrainFacts, TrainView};
use crate::report::{self, Style};
use crate::ui::Ui;
use copse_data::{CsvInput, Missing, Roles, TrainingTable};
use copse_forest::model_file::MAGIC;
use copse_forest::{Forest, ForestPart, Progress, Stage};
use std::io::Read;
use std::path::Path;
use std::sync::atomic::{AtomicU8, Ordering};
use std::time::Instant;

/// Reads a part file, or a model file taken as the first trees of a larger forest.
fn load_part(path: &Path) -> CliResult<ForestPart> {
    let mut head = [0u8; 8];
    let is_model = std::fs::File::open(path)
        .and_then(|mut f| f.read_exact(&mut head))
        .is_ok()
        && head == MAGIC;
    if is_model {
        let model = Forest::load(path).map_err(|e| CliError::input(e.message()))?;
        if model.pool_record().is_some() {
            return Err(CliError::input(format!(
                "{} is a pooled model (from 'copse pool'), whose trees are not the first trees \
                 of one forest; merge parts of one partition's forest, then pool again",
                path.display()
            )));
        }
        Ok(ForestPart::from_model(model, path.display().to_string()))
    } else {
        ForestPart::load(path).map_err(|e| CliError::input(e.message()))
    }
}

/// Merges and writes the model, then prints the report.
///
/// # Errors
/// Input errors for unreadable parts, parts of different forests, ranges that overlap
/// or leave gaps, and data that is not the parts' training data; failures when
/// writing.
pub fn run(a: &MergeArgs, ui: &Ui) -> CliResult<()> {
    let started = Instant::now();
    check_destination(&a.out)?;
    if let Some(p) = a.parts.iter().find(|p| **p == a.out) {
        return Err(CliError::input(format!(
            "--out {} is also one of the parts; write the merged model to another file",
            p.display()
        )));
    }
    let parts = a
        .parts
        .iter()
        .map(|p| load_part(p))
        .collect::<CliResult<Vec<_>>>()?;
    let models: Vec<&str> = parts
        .iter()
        .filter(|p| p.is_model())
        .map(|p| p.name())
        .collect();
    if models.len() > 1 {
        return Err(CliError::input(format!(
            "{} are all model files; a merge grows at most one model, with part files from \
             'copse train --tree-range'",
            models.join(", ")
        )));
    }
    let first = &parts[0];
    let source = first.card().source.clone();
    let data_path = match &a.data {
        Some(d) => d.clone(),
        None if source == "array" || source == "standard input" || source == "-" => {
            return Err(CliError::input(format!(
                "the parts were trained on {source}, which cannot be read again; give the \
                 training data with --data FILE"
            )))
        }
        None => source,
    };
    crate::output::refuse_overwrite(&data_path, Some(&a.out.to_string_lossy()), "merged model")?;
    let input =
        CsvInput::open(&data_path, a.delimiter.into())?.with_decimal(first.card().decimal_mark);
    let data = TrainingTable::from_csv(input, &Roles::of_part(first), Missing::of_part(first))?;

    let bar = ui.bar(0, "out-of-bag check");
    let stage = AtomicU8::new(0);
    let progress = |p: Progress| {
        let (code, label) = match p.stage {
            Stage::Growing => (0, "growing trees"),
            Stage::OutOfBag => (1, "out-of-bag check"),
            Stage::Importance => (2, "importance"),
        };
        if stage.swap(code, Ordering::Relaxed) != code {
            bar.restart(p.total, label);
        }
        bar.advance_to(p.done);
    };
    let merged = data.merge(&parts, Some(&progress));
    bar.finish();
    let merged =
        merged.map_err(|e| forest_error(&e, &format!("cannot merge {} parts", parts.len())))?;
    let merge_secs = started.elapsed().as_secs_f64();
    let model = merged.forest;
    let bytes = model
        .to_bytes()
        .map_err(|e| CliError::failure(format!("{}; nothing was written", e.message())))?;
    write_file(&a.out, &bytes)?;
    crate::output::commit_all()?;
    ui.wrote(&format!("model: {}", a.out.display()));
    let outputs = vec![("model".to_string(), a.out.clone())];
    let missing_cells = data.missing_cells();
    let view = TrainView::new(
        &model,
        &TrainFacts {
            shuffle: None,
            model_bytes: bytes.len() as u64,
            outputs: &outputs,
            threads: rayon::current_num_threads(),
            seconds: started.elapsed().as_secs_f64(),
            training_seconds: merge_secs,
            notes: &model.card().notes,
            missing_cells: &missing_cells,
            judged: None,
        },
    );
    if a.json {
        emit(&format!("{}\n", report::json_text(&view)?))
    } else {
        emit(&view.text(Style::new(ui.stdout_colour())))
    }
}
