//! `copse inspect`: describe a model file (inputs, settings, sizes, out-of-bag summary)
//! and optionally print one tree's rules.
use crate::args::InspectArgs;
use crate::commands::emit;
use crate::error::{CliError, CliResult};
use crate::report::inspect::InspectView;
use crate::report::{self, Style};
use crate::ui::Ui;

/// Runs `copse inspect`.
///
/// # Errors
/// Input errors for a bad model or tree number; failures when writing.
pub fn run(a: &InspectArgs, ui: &Ui) -> CliResult<()> {
    let model = crate::commands::load_model(&a.model)?;
    let file_bytes = std::fs::metadata(&a.model).map(|m| m.len()).unwrap_or(0);
    let n_trees = model.trees().len();
    if let Some(k) = a.tree.filter(|&k| k >= n_trees) {
        return Err(CliError::input(format!(
            "--tree {k}: the model has {n_trees} trees, numbered 0 to {}",
            n_trees - 1
        )));
    }
    let view = InspectView::new(&model, &a.model, file_bytes, a.tree);
    if a.json {
        return report::print_json(&view);
    }
    emit(&view.text(Style::new(ui.stdout_colour())))
}
