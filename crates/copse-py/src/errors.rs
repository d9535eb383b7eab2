//! copse's typed errors raised as the package's exceptions (defined in Python, in
//! `copse_forest/_errors.py`, so they can also derive from `ValueError`), with copse's
//! own messages: bad input (data that cannot be read or does not fit the model),
//! a damaged model (a file that is not a readable copse model), usage (settings out of
//! range or contradicting each other); anything else is a plain `CopseError`.
use pyo3::prelude::*;

/// The exception classes, by their Python names.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Kind {
    /// `BadInputError`.
    BadInput,
    /// `DamagedModelError`.
    DamagedModel,
    /// `UsageError`.
    Usage,
    /// `CopseError` itself.
    Other,
}

impl Kind {
    fn class_name(self) -> &'static str {
        match self {
            Kind::BadInput => "BadInputError",
            Kind::DamagedModel => "DamagedModelError",
            Kind::Usage => "UsageError",
            Kind::Other => "CopseError",
        }
    }
}

/// A Python exception of class `kind` with `message`.
pub fn raise(kind: Kind, message: impl Into<String>) -> PyErr {
    let message = message.into();
    Python::attach(|py| {
        let made = py
            .import("copse_forest._errors")
            .and_then(|m| m.getattr(kind.class_name()))
            .and_then(|cls| cls.call1((message.clone(),)));
        match made {
            Ok(exc) => PyErr::from_value(exc),
            Err(e) => e,
        }
    })
}

/// The data layer's error: always bad input.
pub fn data(e: &copse_data::Error) -> PyErr {
    raise(Kind::BadInput, e.message())
}

/// The engine's error, sorted by what the caller must fix.
pub fn forest(e: &copse_forest::Error) -> PyErr {
    use copse_forest::ErrorKind as K;
    let kind = match e.kind() {
        K::InvalidSetting | K::PartsDisagree | K::PoolMismatch => Kind::Usage,
        K::EmptyData
        | K::LengthMismatch
        | K::NoTargets
        | K::BadValue
        | K::TooLarge
        | K::OutcomeMismatch
        | K::DataMismatch
        | K::Io => Kind::BadInput,
        K::InvalidModel
        | K::NotAModel
        | K::NewerFormat
        | K::OlderFormat
        | K::Damaged
        | K::Undecodable
        | K::FileTooLarge => Kind::DamagedModel,
        _ => Kind::Other,
    };
    raise(kind, e.message())
}

/// The command layer's error (its reports and checks): bad input, or a failure.
pub fn command(e: &copse_cli::error::CliError) -> PyErr {
    let kind = match e.exit() {
        copse_cli::error::Exit::Input => Kind::BadInput,
        _ => Kind::Other,
    };
    raise(kind, e.message())
}
