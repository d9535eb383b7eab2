//! D2M in memory: the demo's kind of model (500 trees grown on the 2,000-row invented
//! water-main register, min leaf 1, seed 1, as `copse demo` grows it) scoring rows of
//! `make-demo-data` on one thread, by the node walk (`Forest::predict`) and by leaf
//! masks (`copse_forest::leaf_masks`, after Lucchese et al. 2015, "QuickScorer",
//! SIGIR), in turns, as CPU time (the machine may be shared). Same predictions to the
//! bit, checked here on every row.
use crate::config::{pool, Config};
use crate::table::{fmt_rate, Table};
use copse_cli::demo_data::TRAIN_HEADER;
use copse_cli::demo_data::{score_header, scoring_segments, training_segments, write_line};
use copse_data::{read_inputs, CsvInput, Delimiter, Missing, Roles, TrainingTable};
use copse_forest::leaf_masks::LeafMasks;
use copse_forest::{Forest, ForestSettings, Sampling, TrainOptions, TreeRules};
use ndarray::Array2;
use std::hint::black_box;

/// Rows scored by default (before the scale).
const ROWS: usize = 20_000;

/// Adds the section.
pub fn section(cfg: &Config, table: &mut Table) {
    let rows = cfg.rows(ROWS);
    table.section(&format!(
        "D2M in memory: the demo's model (500 trees), {rows} rows, 1 thread, node walk \
         against leaf masks (Lucchese et al. 2015)"
    ));
    if cfg.skip("masks") {
        table.note("skipped (COPSE_BENCH_SKIP)");
        return;
    }
    eprintln!("D2M in memory: walk against leaf masks on {rows} rows ...");
    let (forest, x) = match demo_model(rows) {
        Ok(m) => m,
        Err(msg) => {
            table.note(&format!("not measured: {msg}"));
            return;
        }
    };
    let Some(bare) = LeafMasks::new(&forest) else {
        table.note("not measured: the layout cannot hold the model");
        return;
    };
    // Snapshots every `spacing` masks (at most 64 MB of them).
    let spacings = [2000usize, 1000, 500];
    let mut layouts = vec![("leaf masks, bare".to_string(), bare.clone())];
    for &spacing in &spacings {
        let mut m = bare.clone();
        m.keep_snapshots(spacing, 64 << 20);
        layouts.push((
            format!(
                "leaf masks, snapshots every {spacing} masks ({:.1} MB)",
                m.snapshot_bytes() as f64 / 1e6
            ),
            m,
        ));
    }
    let one = pool(1);
    let walk_out = forest.predict(x.view()).expect("walk");
    let same = layouts.iter().all(|(_, m)| {
        let out = forest.predict_by_masks(m, x.view()).expect("masks");
        walk_out
            .iter()
            .zip(out.iter())
            .all(|(a, b)| a.to_bits() == b.to_bits())
    });
    let mut walk = f64::INFINITY;
    let mut cpu = vec![f64::INFINITY; layouts.len()];
    for _ in 0..cfg.repeat.max(3) {
        walk = walk.min(cpu_of(|| {
            one.install(|| black_box(forest.predict(x.view()).expect("walk")));
        }));
        for ((_, m), c) in layouts.iter().zip(cpu.iter_mut()) {
            *c = c.min(cpu_of(|| {
                one.install(|| black_box(forest.predict_by_masks(m, x.view()).expect("masks")));
            }));
        }
    }
    table.row(
        "rows per CPU second, node walk, 1 thread",
        fmt_rate(rows as f64 / walk),
        String::new(),
        "",
    );
    for ((name, _), c) in layouts.iter().zip(&cpu) {
        table.row(
            &format!("rows per CPU second, {name}, 1 thread"),
            fmt_rate(rows as f64 / c),
            String::new(),
            "",
        );
    }
    let visits = crate::scoring::count_visits(&forest, x.view()) / rows as f64;
    let sample = rows.min(2000);
    for (name, m) in &layouts {
        let (read, snaps) = (0..sample)
            .map(|r| m.masks_read(x.row(r).as_slice().expect("standard layout")))
            .fold((0, 0), |(a, b), (c, d)| (a + c, b + d));
        table.note(&format!(
            "{name}: masks read a row {:.0}, snapshots AND-ed a row {:.1}",
            read as f64 / sample as f64,
            snaps as f64 / sample as f64
        ));
    }
    table.note(&format!(
        "node visits a row {visits:.0}; masks {} ({:.1} MB, 12 bytes each); bit vector {} \
         words a row; leaves a tree {:.0}; same predictions to the bit: {}",
        bare.n_masks(),
        bare.n_masks() as f64 * 12e-6,
        bare.n_words(),
        forest.trees().iter().map(|t| t.n_leaves()).sum::<usize>() as f64
            / forest.trees().len() as f64,
        if same { "yes" } else { "NO" }
    ));
    let best = cpu.iter().copied().fold(f64::INFINITY, f64::min);
    table.note(&format!(
        "verdict: the best leaf-mask layout takes {:.2} times the walk's CPU time",
        best / walk
    ));
}

/// CPU seconds (all threads of this process) that `f` takes.
fn cpu_of(f: impl FnOnce()) -> f64 {
    let before = process_cpu_ns();
    f();
    (process_cpu_ns() - before) as f64 * 1e-9
}

/// CPU nanoseconds of this process's live threads, from each one's
/// /proc/self/task/*/schedstat (its first field); 0 where /proc is not available.
fn process_cpu_ns() -> u64 {
    let Ok(dir) = std::fs::read_dir("/proc/self/task") else {
        return 0;
    };
    dir.filter_map(|e| e.ok())
        .filter_map(|e| std::fs::read_to_string(e.path().join("schedstat")).ok())
        .filter_map(|s| {
            s.split_whitespace()
                .next()
                .and_then(|v| v.parse::<u64>().ok())
        })
        .sum()
}

/// The demo's model and `rows` rows to score, read as `copse score` reads them.
fn demo_model(rows: usize) -> Result<(Forest, Array2<f64>), String> {
    let dir = std::env::temp_dir().join(format!("copse-bench-masks-{}", std::process::id()));
    std::fs::create_dir_all(&dir).map_err(|e| format!("{}: {e}", dir.display()))?;
    let result = (|| {
        let train_csv = dir.join("register.csv");
        let score_csv = dir.join("to_score.csv");
        let mut text = format!("{TRAIN_HEADER}\n");
        training_segments(2000, 1).for_each(|s| write_line(&mut text, &s, true));
        std::fs::write(&train_csv, &text).map_err(|e| e.to_string())?;
        let mut text = format!("{}\n", score_header());
        scoring_segments(rows as u64, 2000, 1).for_each(|s| write_line(&mut text, &s, false));
        std::fs::write(&score_csv, &text).map_err(|e| e.to_string())?;
        let roles = Roles {
            ignore: vec!["segment_id".into()],
            ..Roles::target("failed_within_year")
        };
        let table = TrainingTable::read_csv(&train_csv, &roles).map_err(|e| e.to_string())?;
        let settings = ForestSettings {
            trees: 500,
            sampling: Sampling::Bootstrap,
            tree: TreeRules {
                min_leaf: 1.0,
                ..TreeRules::default()
            },
            seed: 1,
            ..ForestSettings::default()
        };
        let options = TrainOptions {
            oob_importance: false,
            ..TrainOptions::default()
        };
        let forest = table
            .train(&settings, &options)
            .map_err(|e| e.to_string())?
            .forest;
        let path = score_csv
            .to_str()
            .ok_or("a temporary path that is not UTF-8")?;
        let input = CsvInput::open(path, Delimiter::Comma).map_err(|e| e.to_string())?;
        let read =
            read_inputs(input, &forest, Missing::of_model(&forest)).map_err(|e| e.to_string())?;
        Ok((forest, read.x))
    })();
    let _ = std::fs::remove_dir_all(&dir);
    result
}
