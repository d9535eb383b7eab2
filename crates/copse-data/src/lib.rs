//! copse-data: tabular input for copse. Reading CSV (a file or standard input, three
//! delimiters, quoted fields, CRLF or LF), inferring each column's kind with notes for
//! the user, the training table a forest is grown on, and encoding new rows against a
//! model's inputs (category codes, missing tokens, unseen categories counted). Every
//! fault names the file, line (for Parquet: row group and row) and column and says what
//! to do.
//!
//! The pieces, one concept per file:
//! - [`csv_input`]: the CSV reader ([`CsvInput`]);
//! - [`records`]: records and fields line by line, under the reader (size cap, blank
//!   lines, restarting after a quote that never closes);
//! - [`plain`]: lines without quotes taken in blocks and read in pieces in parallel;
//! - [`cells`]: missing tokens and numbers ([`Missing`]);
//! - [`roles`]: which column is the outcome, which are left out ([`Roles`]);
//! - [`row_roles`]: case weights and group labels of training rows;
//! - `infer` (private): column kinds, the task, category labels;
//! - [`training`]: the training table ([`TrainingTable`]) and training on it;
//! - `parquet_input` (feature `parquet`, default): Parquet files read as the CSV text
//!   of the same data, row group by row group, and the type mapping; `parquet_output`:
//!   scored rows written as Parquet, a row group per block;
//! - [`place`]: how messages name a row's place ([`Place`]): a line, or a Parquet row
//!   group and row;
//! - [`parts`]: trees `a..b` grown on a table, and parts merged into one model;
//! - [`encode`]: new rows read the way a model's training rows were ([`RowEncoder`]);
//! - [`frame`]: columns held in memory, read as the CSV file they would make
//!   ([`frame::Frame`]).
//!
//! # Example
//! ```
//! use copse_data::{read_labelled, CsvInput, Delimiter, Missing, Roles, TrainingTable};
//! use copse_forest::{Forest, ForestSettings};
//! # let dir = std::env::temp_dir().join("copse-data-doc-lib");
//! # std::fs::create_dir_all(&dir).unwrap();
//! # let path = dir.join("pipes.csv");
//! # let mut text = String::from("age,material,burst\n");
//! # for i in 0..80 { text.push_str(&format!("{},{},{}\n", i, if i % 3 == 0 { "pvc" } else { "iron" }, if i > 40 { "yes" } else { "no" })); }
//! # std::fs::write(&path, text).unwrap();
//! let table = TrainingTable::read_csv(&path, &Roles::target("burst"))?;
//! let settings = ForestSettings { trees: 25, seed: 3, ..Default::default() };
//! let forest = table.train(&settings, &Default::default())?.forest;
//! forest.save(dir.join("pipes.copse"))?;
//! let model = Forest::load(dir.join("pipes.copse"))?;
//! let input = CsvInput::open(&path.to_string_lossy(), Delimiter::Comma)?;
//! let rows = read_labelled(input, &model, Missing::of_model(&model))?;
//! let check = model.evaluate(rows.x.view(), &rows.outcome)?;
//! println!("error on the training file: {:.3}", check.metrics.error());
//! # Ok::<(), Box<dyn std::error::Error>>(())
//! ```
#![forbid(unsafe_code)]
#![deny(missing_docs)]
#![cfg_attr(test, allow(clippy::unwrap_used))]

pub mod cells;
pub mod csv_input;
pub mod encode;
pub mod error;
pub mod frame;
mod infer;
#[cfg(feature = "parquet")]
pub mod parquet_input;
#[cfg(feature = "parquet")]
pub mod parquet_output;
pub mod parts;
pub mod place;
pub mod plain;
pub mod records;
pub mod roles;
pub mod row_roles;
pub mod training;

pub use cells::{clip, looks_decimal_comma, one_line, parse_number, read_number, Missing};
pub use copse_forest::DecimalMark;
pub use csv_input::{CsvInput, Delimiter, Row};
pub use encode::{
    read_inputs, read_labelled, read_labelled_with_column, ColumnCells, InputRows, Labelled,
    RowEncoder, UnseenTally,
};
pub use error::{Error, ErrorKind, Result};
pub use infer::MAX_TARGET_SIZE;
pub use place::Place;
pub use records::MAX_RECORD_BYTES;
pub use roles::Roles;
pub use training::{TrainingTable, MAX_CATEGORIES};

/// The README's Rust examples, compiled as doctests so they cannot drift from the API
/// (here, the crate that sees both the data layer and the engine).
#[cfg(doctest)]
#[doc = include_str!("../../../README.md")]
pub struct ReadmeExamples;
