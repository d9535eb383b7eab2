//! The Rust side of the Python scoring benchmark (`benches/python/score_numpy.py`):
//! reads the model file and the rows-by-inputs matrix the script wrote, and times the
//! work the package does in Rust for a numpy matrix, `Forest::predict`, each row's
//! predicted class and the check for values outside the training ranges, on rayon's
//! global pool (one thread per core, as the package's
//! default). Prints the fastest of the runs as `rust_seconds <s>`.
//!
//! Run through the script (it builds and runs this with the file paths set); run
//! alone, without them, it says so and does nothing.
//!
//! Environment: `COPSE_SCORE_MODEL` (model file), `COPSE_SCORE_MATRIX` (raw
//! little-endian float64, row after row), `COPSE_SCORE_INPUTS` (columns per row),
//! `COPSE_SCORE_RUNS` (default 3).
use copse_forest::ndarray::{Array1, Array2};
use copse_forest::{predicted_class, Forest, Unfamiliar};
use std::time::Instant;

fn main() {
    let (Some(model), Some(matrix), Some(inputs)) = (
        std::env::var_os("COPSE_SCORE_MODEL"),
        std::env::var_os("COPSE_SCORE_MATRIX"),
        std::env::var("COPSE_SCORE_INPUTS").ok(),
    ) else {
        eprintln!("score_matrix: run benches/python/score_numpy.py, which sets the files to read");
        return;
    };
    let runs: usize = std::env::var("COPSE_SCORE_RUNS")
        .ok()
        .and_then(|r| r.parse().ok())
        .unwrap_or(3);
    let forest = Forest::load(&model).expect("the script's model file");
    let p: usize = inputs.parse().expect("COPSE_SCORE_INPUTS is a count");
    let bytes = std::fs::read(&matrix).expect("the script's matrix file");
    let values: Vec<f64> = bytes
        .chunks_exact(8)
        .map(|b| f64::from_le_bytes(b.try_into().expect("8 bytes")))
        .collect();
    let x = Array2::from_shape_vec((values.len() / p, p), values).expect("whole rows");
    let mut best = f64::INFINITY;
    let mut check = 0i64;
    let mut flagged = 0;
    for _ in 0..runs {
        let t = Instant::now();
        let out = forest.predict(x.view()).expect("the model's inputs");
        let codes: Array1<i64> = out
            .rows()
            .into_iter()
            .map(|r| r.as_slice().map_or(0, predicted_class) as i64)
            .collect();
        let mut flags = vec![false; x.nrows()];
        Unfamiliar::of(&forest).check_block(x.view(), &mut flags);
        best = best.min(t.elapsed().as_secs_f64());
        check = codes.sum();
        flagged = flags.iter().filter(|&&f| f).count();
    }
    println!(
        "rust_seconds {best:.4} rows {} threads {} class_sum {check} unfamiliar_rows {flagged}",
        x.nrows(),
        rayon::current_num_threads()
    );
}
