//! Checks of the single-tree core against published worked examples and facts of the
//! trade. Each check names its source beside it.
use copse_tree::{render::render, BinnedData, FeatureMeta, Grower, Impurity, Target, TreeSettings};
use ndarray::Array2;
use rand::SeedableRng;
use rand_xoshiro::Xoshiro256PlusPlus;

/// A small CSV table read into column strings.
struct Table {
    header: Vec<String>,
    rows: Vec<Vec<String>>,
}

fn read_table(name: &str) -> Table {
    let path = format!("{}/../../tests/data/{name}", env!("CARGO_MANIFEST_DIR"));
    let mut r = csv::Reader::from_path(&path).expect("test data file opens");
    let header = r
        .headers()
        .expect("header")
        .iter()
        .map(String::from)
        .collect();
    let rows = r
        .records()
        .map(|rec| rec.expect("record").iter().map(String::from).collect())
        .collect();
    Table { header, rows }
}

/// Encodes every column of `t` except `target`: numeric when all non-`NA` cells parse.
fn encode(t: &Table, target: &str) -> (Array2<f64>, Vec<FeatureMeta>, Vec<u32>, Vec<String>) {
    let ti = t
        .header
        .iter()
        .position(|h| h == target)
        .expect("target column");
    let mut meta = Vec::new();
    let mut cols: Vec<Vec<f64>> = Vec::new();
    for (j, name) in t.header.iter().enumerate() {
        if j == ti {
            continue;
        }
        let cells: Vec<&str> = t.rows.iter().map(|r| r[j].as_str()).collect();
        let numeric = cells.iter().all(|c| *c == "NA" || c.parse::<f64>().is_ok());
        if numeric {
            meta.push(FeatureMeta::numeric(name));
            cols.push(
                cells
                    .iter()
                    .map(|c| c.parse().unwrap_or(f64::NAN))
                    .collect(),
            );
        } else {
            let mut levels: Vec<String> = cells
                .iter()
                .filter(|c| **c != "NA")
                .map(|c| c.to_string())
                .collect();
            levels.sort();
            levels.dedup();
            cols.push(
                cells
                    .iter()
                    .map(|c| {
                        levels
                            .iter()
                            .position(|l| l == c)
                            .map_or(f64::NAN, |p| p as f64)
                    })
                    .collect(),
            );
            meta.push(FeatureMeta::categorical(name, levels));
        }
    }
    let n = t.rows.len();
    let x = Array2::from_shape_fn((n, cols.len()), |(i, j)| cols[j][i]);
    let mut classes: Vec<String> = t.rows.iter().map(|r| r[ti].clone()).collect();
    classes.sort();
    classes.dedup();
    let y = t
        .rows
        .iter()
        .map(|r| classes.iter().position(|c| *c == r[ti]).expect("class") as u32)
        .collect();
    (x, meta, y, classes)
}

#[test]
fn playtennis_entropy_tree_has_outlook_at_the_root() {
    // Quinlan (1986), "Induction of decision trees", Table 1 and section 4: the
    // entropy tree splits on outlook at the root; overcast is pure P.
    let t = read_table("playtennis.csv");
    let (x, meta, y, classes) = encode(&t, "class");
    let data = BinnedData::new(x.view(), &meta, 256).expect("bins");
    let target = Target::classes(&y, classes.len()).expect("target");
    let settings = TreeSettings {
        impurity: Impurity::Entropy,
        ..TreeSettings::default()
    };
    let mut g = Grower::new(settings);
    let mut rng = Xoshiro256PlusPlus::seed_from_u64(1);
    let tree = g.grow(&data, &target, &[1.0; 14], &mut rng).expect("grows");
    let root = tree.nodes()[0];
    assert_eq!(meta[root.feature().expect("split")].name, "outlook");
    println!("{}", render(&tree, &meta, Some(&classes)));
}
