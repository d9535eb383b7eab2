//! Talking to the person at the terminal: notes and warnings on standard error with the
//! `copse:` prefix, progress bars only when standard error is a terminal, colour only
//! when the stream is a terminal and `NO_COLOR` is unset (<https://no-color.org>).
//!
//! Every message is one line: control characters in its text (a line break or a NUL
//! from a cell or a column name) are escaped. A message that cannot be written (standard
//! error closed or full) is dropped without a fault: the run's outcome and exit code do
//! not depend on it.
use indicatif::{ProgressBar, ProgressDrawTarget, ProgressStyle};
use std::io::{IsTerminal, Write};
use std::sync::atomic::{AtomicUsize, Ordering};
use std::time::Duration;

/// What the run may show on standard error.
#[derive(Debug, Clone, Copy)]
pub struct Ui {
    quiet: bool,
    stderr_tty: bool,
    stdout_colour: bool,
    stderr_colour: bool,
}

/// Writes one line to standard error, ignoring a failure (there is nowhere else to
/// report it).
pub fn say(prefix: &str, text: &str) {
    let mut err = std::io::stderr().lock();
    let _ = writeln!(err, "{prefix}{}", one_line(text));
}

pub use copse_data::one_line;

/// Most threads per core `--threads` may ask for: more only add switching between
/// threads, never speed (each thread grows whole trees or scores whole blocks).
pub const THREADS_PER_CORE: usize = 8;

/// The threads to run for `--threads asked`: at most [`THREADS_PER_CORE`] per core,
/// with a note when the request is cut.
pub fn thread_count(asked: usize, ui: &Ui) -> usize {
    let cores = std::thread::available_parallelism().map_or(1, usize::from);
    let most = cores * THREADS_PER_CORE;
    if asked > most {
        ui.note(&format!(
            "--threads {asked} is more than {THREADS_PER_CORE} per core on this machine's {cores} \
             core(s); using {most} (results do not depend on the thread count)"
        ));
        most
    } else {
        asked
    }
}

fn no_color() -> bool {
    std::env::var_os("NO_COLOR").is_some_and(|v| !v.is_empty())
}

impl Ui {
    /// Looks at the streams and the environment.
    pub fn detect(quiet: bool) -> Self {
        let stderr_tty = std::io::stderr().is_terminal();
        let stdout_tty = std::io::stdout().is_terminal();
        Ui {
            quiet,
            stderr_tty,
            stdout_colour: stdout_tty && !no_color(),
            stderr_colour: stderr_tty && !no_color(),
        }
    }

    /// True when report text on standard output may use colour.
    pub fn stdout_colour(&self) -> bool {
        self.stdout_colour
    }

    /// A remark (suppressed by `--quiet`).
    pub fn note(&self, text: &str) {
        if !self.quiet {
            say("copse: note: ", text);
        }
    }

    /// Where an output went (suppressed by `--quiet`).
    pub fn wrote(&self, text: &str) {
        if !self.quiet {
            say("copse: wrote ", text);
        }
    }

    /// A warning (always shown).
    pub fn warn(&self, text: &str) {
        if self.stderr_colour {
            say("copse: \x1b[33mwarning\x1b[0m: ", text);
        } else {
            say("copse: warning: ", text);
        }
    }

    /// An error (always shown).
    pub fn error(&self, text: &str) {
        if self.stderr_colour {
            say("copse: \x1b[31merror\x1b[0m: ", text);
        } else {
            say("copse: error: ", text);
        }
    }

    /// A progress bar for `total` units, or a hidden one when bars are not wanted.
    pub fn bar(&self, total: u64, label: &str) -> Bar {
        if self.quiet || !self.stderr_tty {
            return Bar::hidden();
        }
        let pb = ProgressBar::with_draw_target(Some(total), ProgressDrawTarget::stderr());
        let template = if self.stderr_colour {
            "copse: {msg:<22} {wide_bar:.green/black} {pos}/{len} {elapsed}"
        } else {
            "copse: {msg:<22} {wide_bar} {pos}/{len} {elapsed}"
        };
        if let Ok(style) = ProgressStyle::with_template(template) {
            pb.set_style(style.progress_chars("=> "));
        }
        pb.set_message(label.to_string());
        pb.enable_steady_tick(Duration::from_millis(200));
        Bar {
            bar: Some(pb),
            high: AtomicUsize::new(0),
        }
    }

    /// A counter of rows for a stream of unknown length (bytes when the size is known).
    pub fn bytes_bar(&self, total: Option<u64>, label: &str) -> Bar {
        if self.quiet || !self.stderr_tty {
            return Bar::hidden();
        }
        let pb = ProgressBar::with_draw_target(total, ProgressDrawTarget::stderr());
        let template = match total {
            Some(_) => "copse: {msg:<22} {wide_bar} {bytes}/{total_bytes} {elapsed}",
            None => "copse: {msg:<22} {spinner} {bytes} {elapsed}",
        };
        if let Ok(style) = ProgressStyle::with_template(template) {
            pb.set_style(style.progress_chars("=> "));
        }
        pb.set_message(label.to_string());
        pb.enable_steady_tick(Duration::from_millis(200));
        Bar {
            bar: Some(pb),
            high: AtomicUsize::new(0),
        }
    }
}

/// A progress bar that may be hidden; safe to update from many threads.
pub struct Bar {
    bar: Option<ProgressBar>,
    high: AtomicUsize,
}

impl Bar {
    /// A bar that shows nothing.
    pub fn hidden() -> Self {
        Bar {
            bar: None,
            high: AtomicUsize::new(0),
        }
    }

    /// Moves to `done` units unless a later report got there first (reports from
    /// several threads may arrive slightly out of order).
    pub fn advance_to(&self, done: usize) {
        if let Some(b) = &self.bar {
            let prev = self.high.fetch_max(done, Ordering::Relaxed);
            if done > prev {
                b.set_position(done as u64);
            }
        }
    }

    /// Restarts the bar for a new stage.
    pub fn restart(&self, total: usize, label: &str) {
        if let Some(b) = &self.bar {
            self.high.store(0, Ordering::Relaxed);
            b.set_length(total as u64);
            b.set_position(0);
            b.set_message(label.to_string());
        }
    }

    /// Removes the bar from the terminal.
    pub fn finish(&self) {
        if let Some(b) = &self.bar {
            b.finish_and_clear();
        }
    }
}

impl Drop for Bar {
    fn drop(&mut self) {
        self.finish();
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn messages_are_one_line() {
        assert_eq!(one_line("plain"), "plain");
        assert_eq!(one_line("a\nb\0c\u{1b}"), "a\\nb\\0c\\u{1b}");
    }
}
