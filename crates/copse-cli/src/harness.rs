//! Entry points that run copse's readers on arbitrary bytes, for the fuzz targets in
//! `fuzz/` and the property and regression tests: whatever the bytes, these must
//! return (an error is fine) and never panic, hang or allocate without bound.
//!
//! Each takes one byte of settings from the front of the input, so a fuzzer explores
//! the options too.
use crate::report::inspect::InspectView;
use crate::report::{self, ranking, sections, Style};
use copse_data::{CsvInput, DecimalMark, Delimiter, Missing, Roles, RowEncoder, TrainingTable};
use copse_forest::model_file::{FORMAT_VERSION, HEADER_LEN, MAGIC};
use copse_forest::{Forest as Model, ForestSettings, Task, TrainOptions, TreeRules};
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
/// Only when copse has a fault: the engine fails on data that reading accepted, a
/// model it just trained fails to read back, or the training rows do not score
/// cleanly with their own model.
pub fn ingest_csv(data: &[u8]) -> Option<usize> {
    let (&ctrl, rest) = data.split_first()?;
    // Settings byte: bits 0-1 delimiter, 2-4 target column, 5-6 task, 7 decimal comma.
    let delimiter = match ctrl & 3 {
        1 => Delimiter::Tab,
        2 => Delimiter::Semicolon,
        _ => Delimiter::Comma,
    };
    let task = match (ctrl >> 5) & 3 {
        1 => Some(Task::Classify),
        2 => Some(Task::Regress),
        _ => None,
    };
    let mark = if ctrl & 0x80 == 0 {
        DecimalMark::Point
    } else {
        DecimalMark::Comma
    };
    let input = csv_input(rest, delimiter)?.with_decimal(mark);
    let headers = input.headers().to_vec();
    let target = headers[usize::from((ctrl >> 2) & 7) % headers.len()].clone();
    let roles = Roles {
        target,
        task,
        ..Roles::default()
    };
    let training = TrainingTable::from_csv(input, &roles, Missing::standard()).ok()?;
    if training.x.nrows() > TRAIN_ROWS {
        return None;
    }
    let settings = ForestSettings {
        trees: 2,
        tree: TreeRules {
            max_depth: Some(8),
            ..TreeRules::default()
        },
        bins: 31,
        seed: u64::from(ctrl),
        ..ForestSettings::default()
    };
    let trained = match training.train(&settings, &TrainOptions::default()) {
        Ok(t) => t,
        // Data that passed reading may still be refused by the engine for a reason
        // about the data; anything else (a fault inside a tree, exit 1 in the command)
        // means reading let through what it should have explained.
        Err(e) if crate::error::forest_error(&e, "fuzz").exit() == crate::error::Exit::Input => {
            return None
        }
        Err(e) => panic!(
            "training on data that passed reading failed: {}",
            e.message()
        ),
    };
    let model = trained.forest;
    let bytes = model.to_bytes().ok()?;
    let back = match Model::from_bytes(&bytes, "fuzz.copse") {
        Ok(m) => m,
        Err(e) => panic!("a freshly trained model does not read back: {e}"),
    };
    exercise(&back);

    // Score the same bytes with the model, the way `copse score` does.
    let Some(input) = csv_input(rest, delimiter) else {
        panic!("the training bytes fail to open a second time");
    };
    // As `copse score` does: the mark from the model's card.
    let mut input = input.with_decimal(back.card().decimal_mark);
    let mut enc = match RowEncoder::new(&input, &back, Missing::of_model(&back), false) {
        Ok(enc) => enc,
        Err(e) => panic!("the training file lacks columns of its own model: {e}"),
    };
    let p = back.n_features();
    let mut row = vec![0.0; p];
    let mut record = csv::StringRecord::new();
    let mut values = Vec::new();
    let mut rows = 0;
    // The rows were read once already: every one reads again, encodes without error
    // (every numeric cell parsed, every category is known) and nothing is unseen.
    loop {
        match input.read(&mut record) {
            Ok(true) => {}
            Ok(false) => break,
            Err(e) => panic!("a row read in training fails to read again: {e}"),
        }
        if let Err(e) = enc.encode(&record, &mut row) {
            panic!("a training row does not encode with its own model: {e}");
        }
        values.extend_from_slice(&row);
        rows += 1;
    }
    assert!(
        enc.unseen_counts().iter().all(|&n| n == 0),
        "categories of the training data unseen by its own model"
    );
    assert_eq!(rows, training.rows_read, "every row scored once");
    let x = Array2::from_shape_vec((rows, p), values).ok()?;
    let preds = match back.predict(x.view()) {
        Ok(p) => p,
        Err(e) => panic!(
            "a model cannot score its own training rows: {}",
            e.message()
        ),
    };
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
    let p = model.n_features();
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
    let _ = model.predict(x.view());
    let _ = model.outcome_intervals(x.view(), 0.9);
    let classes = (!model.classes().is_empty()).then(|| model.classes());
    for t in model.trees().iter().take(8) {
        let _ = copse_tree::render::render(t, model.meta(), classes);
    }
    let st = Style::new(false);
    let mut text = String::new();
    sections::data_section(&mut text, st, model, None);
    sections::settings_section(&mut text, st, model, None);
    sections::oob_section(&mut text, st, model);
    ranking::importance_section(&mut text, st, model, None);
    let _ = sections::rare_class_advice(model);
    let view = InspectView::new(model, std::path::Path::new("fuzz.copse"), 0, Some(0));
    let _ = view.text(st);
    let _ = report::json_text(&view);
}
