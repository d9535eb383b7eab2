//! `copse stability`: train one tree, bagged trees and a random forest with several
//! seeds on the same data and report how much each one's error, held-out answers and
//! importance ranking move from seed to seed: the evidence for choosing an ensemble.
use crate::args::StabilityArgs;
use crate::commands::{check_features_per_split, check_output, emit, read_training, tree_settings};
use crate::error::{forest_error, CliError, CliResult};
use crate::output::write_file;
use crate::plots;
use crate::report::stability::StabilityView;
use crate::report::{self, Style};
use crate::ui::Ui;
use copse_forest::{stability_report_grouped, ForestSettings, StabilitySettings};

/// Runs `copse stability`.
///
/// # Errors
/// Input errors for bad data or settings; failures when writing.
pub fn run(a: &StabilityArgs, ui: &Ui) -> CliResult<()> {
    if let Some(plot) = &a.plot {
        check_output(&a.data, plot, "chart file")?;
    }
    if a.roles.weights.is_some() {
        return Err(CliError::input(
            "copse stability does not take case weights yet: drop --weights (--group is taken)",
        ));
    }
    let data = read_training(&a.data, &a.roles, &a.csv, ui)?;
    let labelled = data.outcome.n_labelled();
    if (a.folds as usize) > labelled {
        return Err(CliError::input(format!(
            "--folds {} is more than the {labelled} rows with a target value in {}; choose 2 to \
             {labelled}",
            a.folds, data.source
        )));
    }
    if let Some(rule) = a.features_per_split {
        check_features_per_split(rule, &data)?;
    }
    let settings = StabilitySettings {
        seeds: a.seeds as usize,
        folds: a.folds as usize,
        forest: ForestSettings {
            trees: a.trees as usize,
            features_per_split: a.features_per_split.unwrap_or_default(),
            tree: tree_settings(a.impurity, a.max_depth, a.min_leaf),
            bins: a.bins as usize,
            seed: a.seed,
            ..ForestSettings::default()
        },
    };
    let total = (a.seeds * (a.folds + 2)) as u64;
    let bar = ui.bar(total, "training models");
    let result = stability_report_grouped(
        data.x.view(),
        &data.features,
        &data.outcome,
        data.groups.as_ref().map(|(_, g)| g.as_slice()),
        &settings,
        &|done, _| bar.advance_to(done),
    );
    bar.finish();
    let r = result
        .map_err(|e| forest_error(&e, &format!("cannot compare models on {}", data.source)))?;
    let names: Vec<String> = data.features.iter().map(|f| f.name.clone()).collect();
    let target = &data.target;

    if let Some(path) = &a.plot {
        let sub = format!(
            "{} seeds, {} rows of {}, target '{target}'; ensembles of {} trees",
            r.seeds, r.rows, data.source, r.trees
        );
        let svg = plots::stability_svg(&r, &sub)
            .map_err(|e| CliError::failure(format!("could not draw the chart: {e}")))?;
        write_file(path, svg.as_bytes())?;
        crate::output::commit_all()?;
        ui.wrote(&format!("stability chart: {}", path.display()));
    }
    let view = StabilityView::new(&r, &data.source, target, &names);
    if a.json {
        return report::print_json(&view);
    }
    emit(&view.text(Style::new(ui.stdout_colour())))
}
