//! What every command's help shows besides its options: two or three worked examples
//! at its end (on the demo register where it fits). The tests check the help's layout:
//! required options first, the shared `--threads` and `-q` last, then the examples.

/// Examples of `copse train`.
pub const TRAIN_EXAMPLES: &str = "\
Examples:
  copse train --data demo-data/water_mains.csv --target failed_within_year \\
      --ignore segment_id --out mains.copse
  copse train --data demo-data/water_mains.csv --target failed_within_year \\
      --ignore segment_id --out mains.copse --oob-out oob.csv --plots plots --balanced
  copse train --data prices.csv --target price --out prices.copse \\
      --features-per-split 33% --min-leaf 5 --json > report.json";

/// Examples of `copse score`.
pub const SCORE_EXAMPLES: &str = "\
Examples:
  copse score --model mains.copse --data demo-data/water_mains_to_score.csv \\
      --keep segment_id --out scored.csv
  copse score --model mains.copse --data - < new_segments.csv | head
  copse score --model with_draws.copse --data new_segments.csv --uncertainty \\
      --out scored_se.csv    # a model trained with --keep-draws";

/// Examples of `copse explain`.
pub const EXPLAIN_EXAMPLES: &str = "\
Examples:
  copse explain --model mains.copse --data demo-data/water_mains_to_score.csv \\
      --keep segment_id --out explained.csv
  copse explain --model mains.copse --data new_segments.csv --top 5 | head";

/// Examples of `copse evaluate`.
pub const EVALUATE_EXAMPLES: &str = "\
Examples:
  copse evaluate --model mains.copse --data held_out.csv
  copse evaluate --model mains.copse --data held_out.csv --json > evaluation.json";

/// Examples of `copse importance`.
pub const IMPORTANCE_EXAMPLES: &str = "\
Examples:
  copse importance --model mains.copse --data held_out.csv
  copse importance --model mains.copse --data held_out.csv --repeats 30 \\
      --plot importance.svg";

/// Examples of `copse effect`.
pub const EFFECT_EXAMPLES: &str = "\
Examples:
  copse effect --model mains.copse --data demo-data/water_mains.csv \\
      --input install_year --input material
  copse effect --model mains.copse --data demo-data/water_mains.csv \\
      --pair install_year,soil_corrosivity --out-dir effects --json > effects.json";

/// Examples of `copse stability`.
pub const STABILITY_EXAMPLES: &str = "\
Examples:
  copse stability --data demo-data/water_mains.csv --target failed_within_year \\
      --ignore segment_id
  copse stability --data demo-data/water_mains.csv --target failed_within_year \\
      --ignore segment_id --seeds 10 --trees 200 --plot stability.svg";

/// Examples of `copse tune`.
pub const TUNE_EXAMPLES: &str = "\
Examples:
  copse tune --data demo-data/water_mains.csv --target failed_within_year \\
      --ignore segment_id
  copse tune --data demo-data/water_mains.csv --target failed_within_year \\
      --ignore segment_id --trees 100 --try-min-leaf 1,10 --plot tune.svg
  copse tune --data prices.csv --target price --try-features 2,4,every --json > tune.json";

/// Examples of `copse inspect`.
pub const INSPECT_EXAMPLES: &str = "\
Examples:
  copse inspect --model mains.copse
  copse inspect --model mains.copse --tree 0
  copse inspect --model mains.copse --tree 3 --json > tree3.json";

/// Examples of `copse merge`.
pub const MERGE_EXAMPLES: &str = "\
Examples:
  copse train --data demo-data/water_mains.csv --target failed_within_year \\
      --ignore segment_id --trees 500 --tree-range 0..250 --out part0.copsepart
  copse merge part0.copsepart part1.copsepart --out mains.copse
  copse merge mains.copse more.copsepart --out mains_500.copse    # grow a model";

/// Examples of `copse pool`.
pub const POOL_EXAMPLES: &str = "\
Examples:
  copse train --data rows_part1.csv --target failed_within_year --seed 1 --out part1.copse
  copse train --data rows_part2.csv --target failed_within_year --seed 2 --out part2.copse
  copse pool part1.copse part2.copse --out pooled.copse
  copse pool part*.copse --out pooled.copse --json > pooled.json";

/// Examples of `copse demo`.
pub const DEMO_EXAMPLES: &str = "\
Examples:
  copse demo
  copse demo --out /tmp/copse-demo
  copse demo --out /tmp/copse-demo --threads 1 -q";

/// Examples of `copse make-demo-data`.
pub const MAKE_DEMO_DATA_EXAMPLES: &str = "\
Examples:
  copse make-demo-data --out demo-data
  copse make-demo-data --out big --rows 1000000 --score-rows 5000000 --seed 7";

#[cfg(test)]
mod tests {
    use crate::args::Cli;
    use clap::CommandFactory;

    #[test]
    fn every_help_lists_required_options_first_shared_ones_last_then_examples() {
        let mut cli = Cli::command();
        cli.build();
        for sub in cli.get_subcommands_mut() {
            let name = sub.get_name().to_string();
            if name == "help" {
                continue;
            }
            let help = sub.render_long_help().to_string();
            let lines: Vec<&str> = help.lines().collect();
            // The help line that opens option `long`.
            let line_of = |long: &str| {
                lines
                    .iter()
                    .position(|l| {
                        let t = l.trim_start();
                        t.starts_with(&format!("--{long} "))
                            || t == format!("--{long}")
                            || t.starts_with(&format!("-q, --{long}"))
                    })
                    .unwrap_or_else(|| panic!("{name} --help lists --{long}"))
            };
            let mut shown: Vec<(usize, bool, &str)> = sub
                .get_arguments()
                .filter(|a| !a.is_hide_set())
                .filter_map(|a| a.get_long().map(|l| (a.is_required_set(), l)))
                .filter(|(_, l)| !["help", "version"].contains(l))
                .map(|(req, l)| (line_of(l), req, l))
                .collect();
            shown.sort();
            let order: Vec<&str> = shown.iter().map(|s| s.2).collect();
            let required = shown.iter().filter(|s| s.1).count();
            assert!(shown[..required].iter().all(|s| s.1), "{name}: {order:?}");
            assert_eq!(order[order.len() - 2..], ["threads", "quiet"], "{name}");
            let examples = lines
                .iter()
                .position(|l| *l == "Examples:")
                .unwrap_or_else(|| panic!("{name} --help ends with examples"));
            assert!(examples > shown[shown.len() - 1].0, "{name}");
            let runs = lines[examples..]
                .iter()
                .map(|l| l.trim_start())
                .filter(|t| {
                    *t == format!("copse {name}") || t.starts_with(&format!("copse {name} "))
                })
                .count();
            assert!((2..=3).contains(&runs), "{name}: {runs} examples");
        }
    }

    #[test]
    fn train_help_gives_the_training_default_of_missing() {
        let mut cli = Cli::command();
        for (name, want) in [
            ("train", "[default: NA,NaN]"),
            ("score", "the model was trained with"),
        ] {
            let help = cli
                .find_subcommand_mut(name)
                .expect("the subcommand")
                .render_long_help()
                .to_string();
            let at = help.find("--missing <").expect("--missing");
            let end = help[at..].find("\n\n").map_or(help.len(), |e| at + e);
            let text = &help[at..end];
            assert!(text.contains(want), "{name}: {text}");
            if name == "train" {
                assert!(!text.contains("scor"), "{text}");
            }
        }
    }
}
