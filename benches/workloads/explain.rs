//! X: per-row contributions (`copse explain`), in rows per second on 2 threads, for
//! the demo model (500 trees on the 2000-row demo register, trained as `copse demo`
//! trains it, explaining its 500 scoring rows) and for the T100k model, by both exact
//! walks: the leaf-wise default and Algorithm 2 of Lundberg et al. 2020. The goal is
//! the demo's 500 rows in under 10 s.
use crate::config::pool;
use crate::table::{fmt_rate, Table};
use copse_data::{CsvInput, Delimiter, Missing, Roles, RowEncoder, TrainingTable};
use copse_forest::{ContributionWalk, Forest, ForestSettings};
use ndarray::{Array2, ArrayView2};
use std::hint::black_box;
use std::path::Path;
use std::time::Instant;

/// Threads of the explain figures (the goal is stated on 2).
const THREADS: usize = 2;
/// Rows of the T100k model explained per walk.
pub const T100K_ROWS: usize = 64;

/// Adds the X section: the demo model, then `forest` (T100k) on the rows of `score`.
pub fn section(forest: &Forest, score: ArrayView2<'_, f64>, table: &mut Table) {
    table.section(&format!(
        "X: explain (exact contributions), {THREADS} threads"
    ));
    let root = Path::new(env!("CARGO_MANIFEST_DIR")).join("../..");
    match demo(&root) {
        Ok((model, rows)) => walks(&model, rows.view(), "demo model", "500 rows < 10 s", table),
        Err(e) => table.note(&format!("demo model not measured: {e}")),
    }
    walks(forest, score, "T100k model", "", table);
}

/// The demo model and its scoring rows, encoded.
fn demo(root: &Path) -> Result<(Forest, Array2<f64>), Box<dyn std::error::Error>> {
    let roles = Roles {
        ignore: vec!["segment_id".into()],
        ..Roles::target("failed_within_year")
    };
    let train = root.join("demo-data/water_mains.csv");
    let table = TrainingTable::read_csv(&train, &roles)?;
    let settings = ForestSettings {
        trees: 500,
        seed: 1,
        ..Default::default()
    };
    eprintln!("X: training the demo model ...");
    let model = table.train(&settings, &Default::default())?.forest;
    let path = root.join("demo-data/water_mains_to_score.csv");
    let mut input = CsvInput::open(&path.to_string_lossy(), Delimiter::Comma)?;
    let mut enc = RowEncoder::new(&input, &model, Missing::of_model(&model), false)?;
    let p = model.n_features();
    let (mut values, mut record) = (Vec::new(), csv::StringRecord::new());
    let mut row = vec![0.0; p];
    while input.read(&mut record)? {
        enc.encode(&record, &mut row)?;
        values.extend_from_slice(&row);
    }
    let rows = Array2::from_shape_vec((values.len() / p, p), values)?;
    Ok((model, rows))
}

/// One row per walk: rows per second, with the seconds for all the rows in the note.
fn walks(forest: &Forest, rows: ArrayView2<'_, f64>, what: &str, goal: &str, table: &mut Table) {
    let pool = pool(THREADS);
    let n = rows.nrows();
    let mut seconds = Vec::new();
    for (walk, name) in [
        (ContributionWalk::Leaves, "leaf-wise"),
        (ContributionWalk::Paths, "Algorithm 2"),
    ] {
        eprintln!("X: {what}, {name}, {n} rows ...");
        let start = Instant::now();
        let c = pool.install(|| forest.contributions_by(rows, walk));
        let wall = start.elapsed().as_secs_f64();
        black_box(c.expect("contributions"));
        seconds.push(wall);
        eprintln!("X: {what}, {name}: {n} rows in {wall:.2} s");
        table.row(
            &format!("{what}: rows explained per second, {name}"),
            fmt_rate(n as f64 / wall),
            String::new(),
            if walk == ContributionWalk::Leaves {
                goal
            } else {
                ""
            },
        );
    }
    let nodes = forest.n_nodes() / forest.trees().len().max(1);
    table.note(&format!(
        "{what}: {n} rows in {:.2} s leaf-wise, {:.2} s by Algorithm 2 ({:.1}x); {} trees \
         of {nodes} nodes on average",
        seconds[0],
        seconds[1],
        seconds[1] / seconds[0],
        forest.trees().len()
    ));
}
