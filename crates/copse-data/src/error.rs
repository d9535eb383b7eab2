//! Typed errors of the data layer: a kind a caller can match on, and a message that
//! names the file, line and column involved and says what to do.
use std::fmt;

/// What is wrong with the input.
#[non_exhaustive]
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ErrorKind {
    /// The file cannot be opened or read.
    Unreadable,
    /// The text is not well-formed CSV: a header without names, a row of the wrong
    /// width, text that is not UTF-8.
    Malformed,
    /// A column the roles or the model name is absent, or the roles contradict each
    /// other, or a column cannot serve as an input.
    Columns,
    /// A cell holds a value its column cannot take.
    BadValue,
    /// Too few rows to work with.
    NoRows,
}

/// An error of the data layer.
#[derive(Debug, Clone, PartialEq)]
pub struct Error {
    kind: ErrorKind,
    message: String,
}

impl Error {
    /// An error of `kind`; `message` says where and what to do.
    pub fn new(kind: ErrorKind, message: impl Into<String>) -> Self {
        Error {
            kind,
            message: message.into(),
        }
    }

    /// The kind of fault.
    pub fn kind(&self) -> ErrorKind {
        self.kind
    }

    /// The message for people.
    pub fn message(&self) -> &str {
        &self.message
    }
}

impl fmt::Display for Error {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(&self.message)
    }
}

impl std::error::Error for Error {}

/// Result with the data layer's [`Error`].
pub type Result<T> = std::result::Result<T, Error>;
