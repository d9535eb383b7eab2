//! The command's one catch-all error: a message for people plus the exit code it earns.
//!
//! Library crates return typed errors; here they are turned into sentences that name the
//! file, line and column involved and say what to do, and sorted into the three exits
//! the command documents (0 quiet stop on a closed pipe, 1 failure while running, 2 bad
//! usage or bad input).
use std::fmt;
use std::io;

/// How a failed command ends.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Exit {
    /// Bad usage or bad input (flags, unreadable or malformed files, schema mismatch): 2.
    Input,
    /// Something failed while running (writing output, a fault in training): 1.
    Failure,
    /// The reader of our standard output went away (`copse score ... | head`): end
    /// quietly with 0.
    ClosedPipe,
}

impl Exit {
    /// The process exit code.
    pub fn code(self) -> i32 {
        match self {
            Exit::Input => 2,
            Exit::Failure => 1,
            Exit::ClosedPipe => 0,
        }
    }
}

/// An error on its way to the user.
#[derive(Debug)]
pub struct CliError {
    exit: Exit,
    message: String,
}

impl CliError {
    /// Bad usage or input; `message` says where and what to do.
    pub fn input(message: impl Into<String>) -> Self {
        CliError {
            exit: Exit::Input,
            message: message.into(),
        }
    }

    /// A failure while running.
    pub fn failure(message: impl Into<String>) -> Self {
        CliError {
            exit: Exit::Failure,
            message: message.into(),
        }
    }

    /// The downstream reader closed our standard output.
    pub fn closed_pipe() -> Self {
        CliError {
            exit: Exit::ClosedPipe,
            message: String::new(),
        }
    }

    /// An error writing to `what` (a file name or "standard output"). A closed pipe is
    /// not a failure: the reader has all it wanted.
    pub fn write(what: &str, e: &io::Error) -> Self {
        if e.kind() == io::ErrorKind::BrokenPipe {
            return CliError::closed_pipe();
        }
        CliError::failure(format!(
            "could not write {what}: {}; check the disk has room and the folder is writable",
            copse_forest::io_reason(e)
        ))
    }

    /// How the command ends.
    pub fn exit(&self) -> Exit {
        self.exit
    }

    /// The message (empty for a closed pipe).
    pub fn message(&self) -> &str {
        &self.message
    }
}

impl fmt::Display for CliError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(&self.message)
    }
}

impl std::error::Error for CliError {}

impl From<copse_data::Error> for CliError {
    /// Every fault of the data layer is bad input: its message already names the
    /// file, line and column.
    fn from(e: copse_data::Error) -> Self {
        CliError::input(e.message())
    }
}

/// Result with [`CliError`].
pub type CliResult<T> = std::result::Result<T, CliError>;

/// An error from the forest engine, as input error when the data or settings are at
/// fault and as failure otherwise. `context` names the file or step ("training on
/// data.csv").
pub fn forest_error(e: &copse_forest::Error, context: &str) -> CliError {
    use copse_forest::ErrorKind as K;
    let text = format!("{context}: {}", e.message());
    match e.kind() {
        K::InvalidSetting
        | K::EmptyData
        | K::LengthMismatch
        | K::NoTargets
        | K::BadValue
        | K::TooLarge
        | K::OutcomeMismatch
        | K::InvalidModel
        | K::NotAModel
        | K::NewerFormat
        | K::OlderFormat
        | K::Damaged
        | K::Undecodable
        | K::FileTooLarge
        | K::PartsDisagree
        | K::DataMismatch
        | K::PoolMismatch => CliError::input(text),
        _ => CliError::failure(text),
    }
}
