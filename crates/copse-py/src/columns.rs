//! Named columns handed over by the Python half: each one a float64 array (NaN for a
//! missing cell) or a list of texts (`None` for a missing cell). They become a
//! [`Frame`], which the data layer reads exactly as the CSV file the columns would
//! make, so kinds, notes and messages are the command's.
use crate::errors;
use copse_data::frame::{Column, Frame};
use numpy::PyReadonlyArray1;
use pyo3::prelude::*;

/// One column as it arrives from Python.
#[derive(FromPyObject)]
pub enum PyColumn<'py> {
    /// Numbers.
    Numbers(PyReadonlyArray1<'py, f64>),
    /// Texts.
    Texts(Vec<Option<String>>),
}

impl PyColumn<'_> {
    fn into_column(self) -> Column {
        match self {
            PyColumn::Numbers(a) => Column::Numbers(a.as_array().to_vec()),
            PyColumn::Texts(t) => Column::Texts(t),
        }
    }
}

/// The columns `columns` named `names`, the whole called `source`.
///
/// # Errors
/// `BadInputError` when names and columns differ in number or columns in length.
pub fn frame(source: &str, names: Vec<String>, columns: Vec<PyColumn<'_>>) -> PyResult<Frame> {
    let columns = columns.into_iter().map(PyColumn::into_column).collect();
    Frame::new(source.to_string(), names, columns).map_err(|e| errors::data(&e))
}
