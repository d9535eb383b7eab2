//! Typed errors of the tree core: every failure has a kind a caller can match on and a
//! message a person can act on.
use std::fmt;

/// What went wrong, for callers that react differently to different failures.
#[non_exhaustive]
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ErrorKind {
    /// The data has no rows or no inputs.
    EmptyData,
    /// Only one usable row: nothing can be learned or estimated from it.
    SingleRow,
    /// Every target value is missing.
    NoTargets,
    /// Two things that must have the same length do not.
    LengthMismatch,
    /// A numeric input holds an infinite value (NaN is the missing marker and is fine).
    NonFinite,
    /// A categorical input holds a code outside its list of categories.
    BadCategory,
    /// More inputs, categories or classes than the compact layout can address.
    TooLarge,
    /// A setting is out of its allowed range.
    InvalidSetting,
    /// A tree or model that came from outside is damaged or inconsistent.
    InvalidModel,
}

/// An error from the tree core.
#[derive(Debug, Clone, PartialEq)]
pub struct Error {
    kind: ErrorKind,
    message: String,
}

impl Error {
    /// Builds an error of `kind` with a message saying what happened and what to do.
    pub fn new(kind: ErrorKind, message: impl Into<String>) -> Self {
        Error {
            kind,
            message: message.into(),
        }
    }

    /// The kind of failure.
    pub fn kind(&self) -> ErrorKind {
        self.kind
    }

    /// The human-readable message.
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

/// Result with the tree core's [`Error`].
pub type Result<T> = std::result::Result<T, Error>;
