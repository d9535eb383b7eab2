//! Ctrl-C (SIGINT, and SIGTERM where the platform has it): end the run at once and
//! leave no partial output behind.
//!
//! Outputs are written to temporary files beside their destinations (see
//! [`crate::output`]), which are deleted when dropped; but a signal ends the process
//! without running destructors. So every temporary file in progress is listed here,
//! and the handler deletes them before exiting with code 130 (128 + the signal number
//! of SIGINT, the shells' convention). The same lock guards the final rename, so a
//! signal either comes before it (the temporary file goes, the destination is
//! untouched) or after it (the output is complete); never in between.
use std::path::{Path, PathBuf};
use std::sync::{Mutex, MutexGuard, OnceLock};

/// Exit code after an interruption.
pub const INTERRUPTED: i32 = 130;

fn pending() -> &'static Mutex<Vec<PathBuf>> {
    static PENDING: OnceLock<Mutex<Vec<PathBuf>>> = OnceLock::new();
    PENDING.get_or_init(|| Mutex::new(Vec::new()))
}

/// The list of temporary files, even if a thread panicked while holding it (the list
/// itself is always in a usable state).
fn lock() -> MutexGuard<'static, Vec<PathBuf>> {
    pending()
        .lock()
        .unwrap_or_else(std::sync::PoisonError::into_inner)
}

/// Installs the handler. Called once by the binary; a failure (another handler already
/// installed, as in a test harness) leaves the default behaviour, which still never
/// leaves a file at the destination, only possibly a stray temporary file.
pub fn install() {
    let _ = ctrlc::set_handler(|| {
        // Holding the lock until exit stops any rename from starting.
        let files = lock();
        for f in files.iter() {
            let _ = std::fs::remove_file(f);
        }
        eprintln!(
            "copse: interrupted; nothing was written{}",
            if files.is_empty() {
                String::new()
            } else {
                format!(
                    " ({} unfinished output file{} removed)",
                    files.len(),
                    if files.len() == 1 { "" } else { "s" }
                )
            }
        );
        std::process::exit(INTERRUPTED);
    });
}

/// Lists a temporary file to delete on interruption.
pub fn register(path: &Path) {
    lock().push(path.to_path_buf());
}

/// Takes a temporary file off the list (it was renamed or deleted).
pub fn unregister(path: &Path) {
    let mut files = lock();
    if let Some(i) = files.iter().position(|f| f == path) {
        files.swap_remove(i);
    }
}

/// Runs `f` (the rename of a finished temporary file) so that no interruption falls
/// inside it, then takes `path` off the list.
pub fn while_holding<T>(path: &Path, f: impl FnOnce() -> T) -> T {
    let mut files = lock();
    let out = f();
    if let Some(i) = files.iter().position(|p| p == path) {
        files.swap_remove(i);
    }
    out
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
        assert!(!lock().iter().any(|p| p == a));
        let v = while_holding(b, || 7);
        assert_eq!(v, 7);
        assert!(!lock().iter().any(|p| p == b));
    }
}
