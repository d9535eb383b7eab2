//! `copse evaluate`: measure a model on labelled rows it has not seen.
use crate::args::EvaluateArgs;
use crate::commands::{emit, load_labelled};
use crate::error::{forest_error, CliResult};
use crate::report::evaluate::EvaluateView;
use crate::report::{self, Style};
use crate::ui::Ui;

/// Runs `copse evaluate`.
///
/// # Errors
/// Input errors for a bad model or data; failures when writing.
pub fn run(a: &EvaluateArgs, ui: &Ui) -> CliResult<()> {
    let (model, source, data) = load_labelled(&a.model, &a.data, &a.csv, ui)?;
    let eval = model
        .evaluate(data.x.view(), &data.outcome)
        .map_err(|e| forest_error(&e, &format!("cannot evaluate on {source}")))?;
    let unseen: u64 = data.encoder.unseen_counts().iter().sum();

    let view = EvaluateView::new(&model, &a.model, &eval, &source, data.rows, unseen);
    if a.json {
        return report::print_json(&view);
    }
    emit(&view.text(Style::new(ui.stdout_colour())))
}
