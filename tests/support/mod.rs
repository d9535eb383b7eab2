//! Test support shared by the tree and forest checks: an open data set under
//! `tests/data/` (sources in `tests/data/README.md`) read into an input matrix, the
//! inputs' descriptions and the target column; and the seed offset that reruns every
//! statistical check on other random draws.
// Each test binary uses a part of this module.
#![allow(dead_code)]
use copse_tree::FeatureMeta;
use ndarray::Array2;
use std::sync::OnceLock;

/// Environment variable holding the offset added to every seed of the statistical
/// tests (a whole number, default 0). With 0 the tests run on their committed seeds;
/// any other value reruns them on independent draws, which shows whether a check's
/// tolerance covers its sampling error or only the committed seed
/// (`COPSE_TEST_SEED_OFFSET=1 cargo test --release`, see DEVELOPERS.md).
pub const SEED_OFFSET_VAR: &str = "COPSE_TEST_SEED_OFFSET";

/// The offset read from [`SEED_OFFSET_VAR`], once per test binary.
///
/// # Panics
/// When the variable is set to something other than a whole number.
pub fn seed_offset() -> u64 {
    static OFFSET: OnceLock<u64> = OnceLock::new();
    *OFFSET.get_or_init(|| match std::env::var(SEED_OFFSET_VAR) {
        Ok(v) => v.trim().parse().unwrap_or_else(|_| {
            panic!("{SEED_OFFSET_VAR} must be a whole number such as 1, not '{v}'")
        }),
        Err(_) => 0,
    })
}

/// The seed a statistical test uses in place of `base`: `base` itself at offset 0,
/// else `base` moved by the offset times a large odd constant (the 64-bit golden
/// ratio), so that distinct seeds of one test stay distinct under any offset and an
/// offset's draws do not overlap another offset's.
pub fn seed(base: u64) -> u64 {
    base.wrapping_add(seed_offset().wrapping_mul(0x9e37_79b9_7f4a_7c15))
}

/// A data file encoded for training: every column but the target as an input.
pub struct DataSet {
    /// Inputs, one row per record: numbers as read, categories as codes, NaN missing.
    pub x: Array2<f64>,
    /// Description of each input column, in file order.
    pub meta: Vec<FeatureMeta>,
    /// The target column's cells as written (`NA` included).
    pub target: Vec<String>,
}

/// Reads `tests/data/<name>`, encoding every column but `target`: numeric when every
/// cell other than `NA` or an empty one parses as a number, else categorical with
/// sorted levels. `NA` and an empty cell become NaN (missing); rows with missing values
/// are kept. (`../../demo-data/<file>` names the invented demo register.)
pub fn read_data_set(name: &str, target: &str) -> DataSet {
    let path = format!("{}/../../tests/data/{name}", env!("CARGO_MANIFEST_DIR"));
    let mut r = csv::Reader::from_path(&path).expect("test data file opens");
    let header: Vec<String> = r
        .headers()
        .expect("header")
        .iter()
        .map(String::from)
        .collect();
    let rows: Vec<Vec<String>> = r
        .records()
        .map(|rec| rec.expect("record").iter().map(String::from).collect())
        .collect();
    let ti = header
        .iter()
        .position(|h| h == target)
        .expect("target column");
    let mut meta = Vec::new();
    let mut cols: Vec<Vec<f64>> = Vec::new();
    for (j, name) in header.iter().enumerate() {
        if j == ti {
            continue;
        }
        let cells: Vec<&str> = rows.iter().map(|r| r[j].as_str()).collect();
        if cells
            .iter()
            .all(|c| *c == "NA" || c.is_empty() || c.parse::<f64>().is_ok())
        {
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
                .filter(|c| **c != "NA" && !c.is_empty())
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
                            .map_or(f64::NAN, |k| k as f64)
                    })
                    .collect(),
            );
            meta.push(FeatureMeta::categorical(name, levels));
        }
    }
    let n = rows.len();
    let x = Array2::from_shape_fn((n, cols.len()), |(i, j)| cols[j][i]);
    let target = rows.into_iter().map(|mut r| r.swap_remove(ti)).collect();
    DataSet { x, meta, target }
}
