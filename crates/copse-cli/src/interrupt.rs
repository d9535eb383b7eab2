//! Ctrl-C (SIGINT, and SIGTERM where the platform has it): end the run at once, leave
//! no partial output behind, and say exactly what was written.
//!
//! Outputs are written to temporary files beside their destinations (see
//! [`crate::output`]) and renamed into place all together at the end of a command. A
//! signal ends the process without running destructors, so every temporary file is
//! listed here before it is created, and the handler deletes those still listed before
//! exiting with code 130 (128 + the signal number of SIGINT, the shells' convention).
//! The same lock guards the final renames, so a signal comes either before them (every
//! destination untouched) or after them (every output complete), never in between; and
//! the handler names the files already replaced, or the rows already sent to standard
//! output.
use std::io::Write;
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicU64, Ordering};
use std::sync::{Mutex, MutexGuard, OnceLock};

/// Exit code after an interruption.
pub const INTERRUPTED: i32 = 130;

/// What the handler must know.
#[derive(Default)]
pub(crate) struct State {
    /// Temporary files that exist (or are about to be created).
    pub(crate) partial: Vec<PathBuf>,
    /// Destinations already replaced by this run, as named to the user.
    pub(crate) written: Vec<String>,
}

fn state() -> &'static Mutex<State> {
    static STATE: OnceLock<Mutex<State>> = OnceLock::new();
    STATE.get_or_init(|| Mutex::new(State::default()))
}

/// Rows written (and flushed) to standard output so far; `u64::MAX` when no rows go
/// there.
static STDOUT_ROWS: AtomicU64 = AtomicU64::new(u64::MAX);

/// The state, even if a thread panicked while holding it (it is always usable).
pub(crate) fn lock() -> MutexGuard<'static, State> {
    state()
        .lock()
        .unwrap_or_else(std::sync::PoisonError::into_inner)
}

/// What the handler says, from what it knows.
fn message(removed: usize, written: &[String], stdout_rows: u64) -> String {
    let what = if !written.is_empty() {
        format!("{} had already been written in full", written.join(", "))
    } else if stdout_rows != u64::MAX {
        format!("{stdout_rows} rows had been written to standard output, which is incomplete")
    } else {
        "nothing was written".to_string()
    };
    let removed = match removed {
        0 => String::new(),
        1 => " (1 unfinished output file removed)".to_string(),
        n => format!(" ({n} unfinished output files removed)"),
    };
    format!("copse: interrupted; {what}{removed}")
}

/// Installs the handler. Called once by the binary; a failure (another handler already
/// installed, as in a test harness) leaves the default behaviour, which still never
/// leaves a file at the destination, only possibly a stray temporary file (removed by a
/// later run in that folder, see [`crate::output`]).
pub fn install() {
    let _ = ctrlc::set_handler(|| {
        // Holding the lock until exit stops any rename from starting.
        let st = lock();
        for f in &st.partial {
            let _ = std::fs::remove_file(f);
        }
        let text = message(
            st.partial.len(),
            &st.written,
            STDOUT_ROWS.load(Ordering::Relaxed),
        );
        // A closed or full standard error must not stop the exit.
        let _ = writeln!(std::io::stderr(), "{text}");
        std::process::exit(INTERRUPTED);
    });
}

/// Lists a temporary file to delete on interruption (before it is created).
pub fn register(path: &Path) {
    lock().partial.push(path.to_path_buf());
}

/// Takes a temporary file off the list (it was renamed or deleted).
pub fn unregister(path: &Path) {
    let mut st = lock();
    if let Some(i) = st.partial.iter().position(|f| f == path) {
        st.partial.swap_remove(i);
    }
}

/// Records that `rows` scored rows have been written and flushed to standard output.
pub fn rows_to_stdout(rows: u64) {
    STDOUT_ROWS.store(rows, Ordering::Relaxed);
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn registered_files_come_off_the_list() {
        let a = Path::new("/nonexistent/.copse-a.partial");
        let b = Path::new("/nonexistent/.copse-b.partial");
        register(a);
        register(b);
        unregister(a);
        assert!(!lock().partial.iter().any(|p| p == a));
        unregister(b);
        assert!(!lock().partial.iter().any(|p| p == b));
    }

    #[test]
    fn the_message_says_what_was_written() {
        assert_eq!(
            message(1, &[], u64::MAX),
            "copse: interrupted; nothing was written (1 unfinished output file removed)"
        );
        let both = ["m.copse".to_string(), "o.csv".to_string()];
        assert_eq!(
            message(0, &both, u64::MAX),
            "copse: interrupted; m.copse, o.csv had already been written in full"
        );
        assert!(
            message(0, &[], 610_305).contains("610305 rows had been written to standard output")
        );
    }
}
