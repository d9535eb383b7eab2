//! Entry points that run copse's readers on arbitrary bytes, for the fuzz targets in
//! `fuzz/` and the property and regression tests: whatever the bytes, these must
//! return (an error is fine) and never panic, hang or allocate without bound.
//!
//! Each takes one byte of settings from the front of the input, so a fuzzer explores
//! the options too.
use crate::encode::RowEncoder;
use crate::model::Model;
use crate::model_file::{self, FORMAT_VERSION, HEADER_LEN, MAGIC};
use crate::reader::{CsvInput, Delimiter};
use crate::report::{self, Style};
use crate::schema::{load_training, Missing, Roles, Task};
use copse_forest::{ForestSettings, TreeSettings};
use ndarray::Array2;
use std::io::Cursor;

/// Largest training set the CSV harness grows a forest on (bigger ones are only read),
/// so each run stays fast.
const TRAIN_ROWS: usize = 300;

fn csv_input(bytes: &[u8], delimiter: Delimiter) -> Option<CsvInput> {
    let source = Box::new(Cursor::new(bytes.to_vec()));
    CsvInput::from_reader(
        "fuzz.csv".to_string(),
        source,
        Some(bytes.len() as u64),
        delimiter,
    )
    .ok()
}

/// CSV ingestion end to end: header, schema inference with the target and task the
/// first byte picks, then (for small inputs) a tiny forest, its model file written and
/// read back, and the same bytes scored with it. Returns the number of rows scored
/// (for tests), or `None` when the input was refused along the way.
///
/// # Panics
/// Only when copse has a fault: a model it just trained fails to read back.
pub fn ingest_csv(data: &[u8]) -> Option<usize> {
    let (&ctrl, rest) = data.split_first()?;
    let delimiter = match ctrl % 3 {
        0 => Delimiter::Comma,
        1 => Delimiter::Tab,
        _ => Delimiter::Semicolon,
    };
    let task = match (ctrl >> 5) % 3 {
        0 => None,
        1 => Some(Task::Classify),
        _ => Some(Task::Regress),
    };
    let input = csv_input(rest, delimiter)?;
    let headers = input.headers().to_vec();
    let target = headers[usize::from((ctrl >> 2) & 7) % headers.len()].clone();
    let roles = Roles {
        target,
        task,
        ..Roles::default()
    };
    let training = load_training(input, &roles, Missing::standard()).ok()?;
    if training.x.nrows() > TRAIN_ROWS {
        return None;
    }
    let settings = ForestSettings {
        trees: 2,
        tree: TreeSettings {
            max_depth: Some(8),
            ..TreeSettings::default()
        },
        bin_limit: 32,
        seed: u64::from(ctrl),
        ..ForestSettings::default()
    };
    let trained = copse_forest::Forest::train(
        training.x.view(),
        &training.schema.features,
        &training.outcome,
        &settings,
    )
    .ok()?;
    let mut model = crate::commands::train::build_model(&training, trained.forest, "fuzz");
    model.schema.bins = copse_tree::BinnedData::new(
        training.x.view(),
        &training.schema.features,
        settings.bin_limit,
    )
    .ok()?
    .bins()
    .to_vec();
    let bytes = model_file::encode(&model).ok()?;
    let back = match Model::from_bytes(&bytes, "fuzz.copse") {
        Ok(m) => m,
        Err(e) => panic!("a freshly trained model does not read back: {e}"),
    };
    exercise(&back);

    // Score the same bytes with the model, the way `copse score` does.
    let mut input = csv_input(rest, delimiter)?;
    let mut enc = RowEncoder::new(&input, &back.schema, back.schema.missing.clone(), false).ok()?;
    let p = back.forest.n_features();
    let mut row = vec![0.0; p];
    let mut record = csv::StringRecord::new();
    let mut values = Vec::new();
    let mut rows = 0;
    while let Ok(true) = input.read(&mut record) {
        if enc.encode(&record, &mut row).is_err() {
            return None;
        }
        values.extend_from_slice(&row);
        rows += 1;
    }
    let x = Array2::from_shape_vec((rows, p), values).ok()?;
    let preds = back.forest.predict(x.view()).ok()?;
    assert_eq!(preds.nrows(), rows, "one prediction per row");
    let _ = enc.unseen_warning();
    Some(rows)
}

/// Model file decoding. When the first byte is odd, the rest is wrapped as the payload
/// of a well-formed container with a correct checksum, so the fuzzer reaches the
/// decoder and the model checks behind it; otherwise the rest is taken as a whole
/// file. A model that reads is then used: predictions on awkward rows, tree rules,
/// reports and JSON. Returns whether the bytes read as a model.
pub fn decode_model(data: &[u8]) -> bool {
    let Some((&ctrl, rest)) = data.split_first() else {
        return false;
    };
    let file = if ctrl & 1 == 1 {
        wrap_payload(rest)
    } else {
        rest.to_vec()
    };
    match Model::from_bytes(&file, "fuzz.copse") {
        Ok(model) => {
            exercise(&model);
            true
        }
        Err(_) => false,
    }
}

/// A model file around `payload`: marker, this build's version, length, checksum.
pub fn wrap_payload(payload: &[u8]) -> Vec<u8> {
    let mut bytes = Vec::with_capacity(HEADER_LEN + payload.len() + 4);
    bytes.extend_from_slice(&MAGIC);
    bytes.extend_from_slice(&FORMAT_VERSION.to_le_bytes());
    bytes.extend_from_slice(&0u16.to_le_bytes());
    bytes.extend_from_slice(&(payload.len() as u64).to_le_bytes());
    bytes.extend_from_slice(payload);
    let crc = crc32fast::hash(&bytes);
    bytes.extend_from_slice(&crc.to_le_bytes());
    bytes
}

/// Uses a model the way the commands do: predictions on rows of awkward values, every
/// tree's rules, the reports and the JSON object.
fn exercise(model: &Model) {
    let p = model.forest.n_features();
    let awkward = [
        f64::NAN,
        0.0,
        -1.0,
        1.0,
        2.0,
        1e300,
        -1e300,
        f64::from(u32::MAX),
    ];
    let x = Array2::from_shape_fn((awkward.len(), p), |(i, j)| {
        awkward[(i + j) % awkward.len()]
    });
    let _ = model.forest.predict(x.view());
    let classes = (!model.forest.classes().is_empty()).then(|| model.forest.classes());
    for t in model.forest.trees().iter().take(8) {
        let _ = copse_tree::render::render(t, model.forest.meta(), classes);
    }
    let st = Style::new(false);
    let mut text = String::new();
    report::data_section(&mut text, st, model);
    report::settings_section(&mut text, st, model, None);
    report::oob_section(&mut text, st, model);
    report::importance_section(&mut text, st, model);
    let _ = report::rare_class_advice(model);
    let _ = serde_json::to_string(&crate::json::model_object("inspect", model));
}
