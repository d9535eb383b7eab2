//! Typed errors of the forest engine: a kind a caller can match on and a message a
//! person can act on.
use std::fmt;
use std::io;

/// What went wrong, for callers that react differently to different failures.
#[non_exhaustive]
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ErrorKind {
    /// A setting is out of its allowed range, or settings contradict each other.
    InvalidSetting,
    /// The data has no rows or no inputs.
    EmptyData,
    /// Two things that must have the same length do not (rows, outcomes, columns).
    LengthMismatch,
    /// Too few rows have an outcome to learn from.
    NoTargets,
    /// An input value cannot be used: an infinite number or an unlisted category code.
    BadValue,
    /// More inputs, categories or bins than the model layout can address.
    TooLarge,
    /// The outcome does not fit the model: regression values for a class model (or the
    /// reverse), or a class label the model never saw.
    OutcomeMismatch,
    /// A model (typically read from a file) is internally inconsistent.
    InvalidModel,
    /// A failure of the tree core that has no closer match here.
    Tree,
    /// A model file cannot be opened, read or written.
    Io,
    /// A file that is not a copse model (it lacks the model marker).
    NotAModel,
    /// A model file written by a newer copse.
    NewerFormat,
    /// A model file written by an earlier copse, in a format this one no longer reads.
    OlderFormat,
    /// A model file cut short, padded or altered: its length or checksum does not match.
    Damaged,
    /// A model file whose checksum matches but whose contents do not decode as a model.
    Undecodable,
    /// A model file larger than copse agrees to read.
    FileTooLarge,
    /// Parts that do not make one forest: different settings, seeds, data or kept
    /// extras, or tree ranges that overlap, leave a gap or fall short.
    PartsDisagree,
    /// Training was stopped on request ([`crate::TrainOptions::stop`]).
    Stopped,
    /// Data given to complete a model (the merge of parts) is not its training data.
    DataMismatch,
    /// Models that cannot be pooled ([`crate::Forest::pool`]): another task, outcome,
    /// class list, inputs or settings, a model given twice, or one that keeps what a
    /// pooled model cannot.
    PoolMismatch,
}

/// An error from the forest engine.
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

impl From<copse_tree::Error> for Error {
    fn from(e: copse_tree::Error) -> Self {
        use copse_tree::ErrorKind as T;
        let kind = match e.kind() {
            T::EmptyData => ErrorKind::EmptyData,
            T::SingleRow | T::NoTargets => ErrorKind::NoTargets,
            T::LengthMismatch => ErrorKind::LengthMismatch,
            T::NonFinite | T::BadCategory => ErrorKind::BadValue,
            T::TooLarge => ErrorKind::TooLarge,
            T::InvalidSetting => ErrorKind::InvalidSetting,
            _ => ErrorKind::Tree,
        };
        Error::new(kind, e.message())
    }
}

/// Result with the forest engine's [`Error`].
pub type Result<T> = std::result::Result<T, Error>;

/// Shorthand for an `InvalidSetting` error.
pub(crate) fn bad_setting<T>(message: impl Into<String>) -> Result<T> {
    Err(Error::new(ErrorKind::InvalidSetting, message))
}

/// The reason part of an I/O error, without the OS error number.
pub fn io_reason(e: &io::Error) -> String {
    match e.kind() {
        io::ErrorKind::NotFound => "no such file".to_string(),
        io::ErrorKind::PermissionDenied => "permission denied".to_string(),
        _ => {
            let s = e.to_string();
            match s.find(" (os error") {
                Some(i) => s[..i].to_string(),
                None => s,
            }
        }
    }
}
