//! `copse tune`: read a CSV file once, bin it once, grow a forest for each setting of a
//! small grid, judge each by its out-of-bag losses against the default's, and print the
//! table, the recommendation (if any) and the `copse train` line to use.
use crate::args::TuneArgs;
use crate::commands::{check_output, emit, read_training, tree_settings};
use crate::error::{forest_error, CliError, CliResult};
use crate::output::write_file;
use crate::plots_tune;
use crate::report::tune::{TrainLine, TuneView};
use crate::report::{self, Style};
use crate::ui::Ui;
use copse_forest::tune::{tune, TuneGrid};
use copse_forest::{CutChoice, FeaturesPerSplit, ForestSettings, Prepared, Sampling};

/// Runs `copse tune`.
///
/// # Errors
/// Input errors for bad data or settings; failures when writing.
pub fn run(a: &TuneArgs, ui: &Ui) -> CliResult<()> {
    if a.sampling == Sampling::Whole {
        return Err(CliError::input(
            "--sampling none leaves no row out of bag, and tune judges settings by their \
             out-of-bag error; use bootstrap or subsample:F",
        ));
    }
    if let Some(plot) = &a.plot {
        check_output(&a.data, plot, "chart file")?;
    }
    let data = read_training(&a.data, &a.roles, &a.csv, ui)?;
    let p = data.features.len();
    for rule in &a.try_features {
        if let FeaturesPerSplit::Count(k) = rule {
            if *k > p {
                return Err(CliError::input(format!(
                    "--try-features {k} is more than the {p} inputs in {}; choose 1 to {p}",
                    data.source
                )));
            }
        }
    }
    let classes = data.outcome.is_classes();
    let base = ForestSettings {
        trees: a.trees as usize,
        sampling: a.sampling,
        tree: tree_settings(a.impurity, a.max_depth, 1),
        bins: a.bins as usize,
        seed: a.seed,
        ..ForestSettings::default()
    };
    let cannot =
        |e: &copse_forest::Error| forest_error(e, &format!("cannot tune on {}", data.source));
    let mut grid = TuneGrid::around(&base, p, classes).map_err(|e| cannot(&e))?;
    if !a.try_features.is_empty() {
        let mut ks = Vec::new();
        for rule in &a.try_features {
            ks.push(rule.resolve(p, classes).map_err(|e| cannot(&e))?);
        }
        ks.sort_unstable();
        ks.dedup();
        grid.features_per_split = ks;
    }
    if !a.try_min_leaf.is_empty() {
        let mut leaves: Vec<f64> = a.try_min_leaf.iter().map(|&l| f64::from(l)).collect();
        leaves.sort_by(f64::total_cmp);
        leaves.dedup();
        grid.min_leaf = leaves;
    }
    if !a.try_cuts.is_empty() {
        let mut cuts: Vec<CutChoice> = a.try_cuts.iter().map(|&c| c.into()).collect();
        cuts.dedup();
        // Best first, whatever order they were given in.
        cuts.sort_by_key(|c| *c == CutChoice::Random);
        cuts.dedup();
        grid.cuts = cuts;
    }
    let prepared = Prepared::new(data.x.view(), &data.features, &data.outcome, base.bins)
        .map_err(|e| cannot(&e))?;
    let planned = 1 + grid.features_per_split.len() * grid.min_leaf.len() * grid.cuts.len();
    let bar = ui.bar(planned as u64, "forests tried");
    let result = tune(&prepared, &base, &grid, &|done, total| {
        if done == 1 {
            bar.restart(total, "forests tried");
        }
        bar.advance_to(done);
    });
    bar.finish();
    let r = result.map_err(|e| cannot(&e))?;
    let line = TrainLine {
        data: &a.data,
        roles: &a.roles,
        csv: &a.csv,
        impurity: a.impurity,
        max_depth: a.max_depth,
        bins: a.bins,
        seed: a.seed,
        sampling: a.sampling,
    };
    let view = TuneView::new(&r, &data, &line);
    if let Some(path) = &a.plot {
        let svg = plots_tune::tune_svg(&view)
            .map_err(|e| CliError::failure(format!("could not draw the chart: {e}")))?;
        write_file(path, svg.as_bytes())?;
        crate::output::commit_all()?;
        ui.wrote(&format!("tuning chart: {}", path.display()));
    }
    if a.json {
        return report::print_json(&view);
    }
    emit(&view.text(Style::new(ui.stdout_colour())))
}
