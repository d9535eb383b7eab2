//! `copse pool MODEL... --out MODEL`: pool models each trained on one partition of
//! the rows into one model whose score is the mean over all their trees, and print
//! the report `copse inspect` gives of it (with each partition's own out-of-bag
//! figures, and no pooled one).
use crate::args::PoolArgs;
use crate::commands::{check_destination, emit, load_model};
use crate::error::{forest_error, CliError, CliResult};
use crate::output::write_file;
use crate::report::inspect::InspectView;
use crate::report::{self, Style};
use crate::ui::Ui;
use copse_forest::Forest;

/// Pools and writes the model, then prints its report.
///
/// # Errors
/// Input errors for unreadable models, models that cannot be pooled and an output
/// that is one of the models; failures when writing.
pub fn run(a: &PoolArgs, ui: &Ui) -> CliResult<()> {
    check_destination(&a.out)?;
    if let Some(p) = a.models.iter().find(|p| **p == a.out) {
        return Err(CliError::input(format!(
            "--out {} is also one of the models; write the pooled model to another file",
            p.display()
        )));
    }
    let models = a
        .models
        .iter()
        .map(|p| load_model(p))
        .collect::<CliResult<Vec<_>>>()?;
    let names: Vec<String> = a.models.iter().map(|p| p.display().to_string()).collect();
    let named: Vec<(&str, &Forest)> = names.iter().map(String::as_str).zip(&models).collect();
    let pooled = Forest::pool(&named)
        .map_err(|e| forest_error(&e, &format!("cannot pool {} models", models.len())))?;
    let bytes = pooled
        .to_bytes()
        .map_err(|e| CliError::failure(format!("{}; nothing was written", e.message())))?;
    write_file(&a.out, &bytes)?;
    crate::output::commit_all()?;
    ui.wrote(&format!("model: {}", a.out.display()));
    let view = InspectView::new(&pooled, &a.out, bytes.len() as u64, None).made_by("pool");
    if a.json {
        return report::print_json(&view);
    }
    emit(&view.text(Style::new(ui.stdout_colour())))
}
