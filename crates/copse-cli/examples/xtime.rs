use copse_data::{CsvInput, Delimiter, Missing, RowEncoder};
use copse_forest::Forest;
use ndarray::Array2;
use std::time::Instant;
fn main() {
    let a: Vec<String> = std::env::args().collect();
    let f = Forest::load(std::path::Path::new(&a[1])).unwrap();
    let mut input = CsvInput::open(&a[2], Delimiter::Comma).unwrap();
    let mut enc = RowEncoder::new(&input, &f, Missing::of_model(&f), false).unwrap();
    let p = f.n_features();
    let mut rows = Vec::new();
    let mut rec = csv::StringRecord::new();
    while input.read(&mut rec).unwrap() {
        let mut x = vec![0.0; p];
        enc.encode(&rec, &mut x).unwrap();
        rows.extend(x);
    }
    let n = rows.len() / p;
    let x = Array2::from_shape_vec((n, p), rows).unwrap();
    let nodes: usize = f.trees().iter().map(|t| t.nodes().len()).sum();
    let depth: usize = f.trees().iter().map(|t| t.depth()).max().unwrap();
    let leaves: usize = f.trees().iter().map(|t| t.leaves().count()).sum();
    eprintln!(
        "{} trees, mean nodes {}, max depth {}, mean leaves {}",
        f.trees().len(),
        nodes / f.trees().len(),
        depth,
        leaves / f.trees().len()
    );
    let t = Instant::now();
    let walk = if a.get(3).map(String::as_str) == Some("paths") {
        copse_forest::ContributionWalk::Paths
    } else {
        copse_forest::ContributionWalk::Leaves
    };
    let c = f.contributions_by(x.view(), walk).unwrap();
    eprintln!("{n} rows in {:.2?}", t.elapsed());
    let pr = f.predict(x.view()).unwrap();
    let mut worst: f64 = 0.0;
    for r in 0..n {
        for o in 0..pr.ncols() {
            let s = c.base[o] + c.values.index_axis(ndarray::Axis(0), r).column(o).sum();
            worst = worst.max((s - pr[[r, o]]).abs());
        }
    }
    eprintln!(
        "worst additivity {worst:e}; checksum {}",
        c.values.iter().map(|v| v.abs()).sum::<f64>()
    );
}
