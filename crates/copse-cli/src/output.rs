//! Writing outputs so that an error never leaves a half-written file, and the outputs
//! of one command are replaced together or not at all: every file goes to a temporary
//! file in the destination's own folder, is flushed to disk when complete, and waits;
//! at the end of the command [`commit_all`] renames every waiting file over its
//! destination in one short step that an interruption cannot split (see
//! [`crate::interrupt`]). Standard output and device files (such as `/dev/null`) are
//! written directly.
//!
//! A temporary file is named `.copse-<pid>-<random>.partial` and listed for removal on
//! Ctrl-C before it is created. After `kill -9` (which no handler sees) it stays, but
//! the next run that writes into that folder removes every such file whose process is
//! gone (where `/proc` tells).
use crate::error::{CliError, CliResult};
use copse_forest::io_reason;
use std::fs::{self, File, OpenOptions};
use std::io::{self, BufWriter, Stdout, Write};
use std::path::{Path, PathBuf};
use std::sync::{Mutex, MutexGuard, OnceLock};

/// Where a stream of output goes.
pub enum Output {
    /// Standard output.
    Stdout(BufWriter<Stdout>),
    /// A regular file, written to a temporary file first.
    Staged(Staged),
    /// A device or pipe given by path, written directly.
    Device(BufWriter<File>, String),
}

/// A temporary file that waits, once finished ([`Staged::commit`]), to become `dest`
/// in [`commit_all`]; dropped unfinished, it is deleted.
pub struct Staged {
    /// `None` once finished.
    writer: Option<BufWriter<File>>,
    /// The temporary file; `None` once handed to the waiting list.
    tmp_path: Option<PathBuf>,
    dest: PathBuf,
    name: String,
}

/// A finished temporary file waiting for its rename.
struct Waiting {
    tmp: PathBuf,
    dest: PathBuf,
    name: String,
}

fn waiting() -> MutexGuard<'static, Vec<Waiting>> {
    static WAITING: OnceLock<Mutex<Vec<Waiting>>> = OnceLock::new();
    WAITING
        .get_or_init(|| Mutex::new(Vec::new()))
        .lock()
        .unwrap_or_else(std::sync::PoisonError::into_inner)
}

impl Drop for Staged {
    fn drop(&mut self) {
        drop(self.writer.take());
        if let Some(tmp) = self.tmp_path.take() {
            let _ = fs::remove_file(&tmp);
            crate::interrupt::unregister(&tmp);
        }
    }
}

fn not_a_folder(path: &Path) -> CliError {
    let dir = path
        .parent()
        .filter(|d| !d.as_os_str().is_empty())
        .unwrap_or(Path::new("."));
    CliError::input(format!(
        "cannot write {}: the folder {} does not exist; create it first or choose another path",
        path.display(),
        dir.display()
    ))
}

/// A name no other run picks: the process id, then 64 random bits (std's hasher keys
/// are drawn from the system's random source).
fn temporary_name() -> String {
    use std::hash::{BuildHasher, Hasher};
    let mut h = std::collections::hash_map::RandomState::new().build_hasher();
    let now = std::time::SystemTime::now()
        .duration_since(std::time::UNIX_EPOCH)
        .map_or(0, |d| d.as_nanos());
    h.write_u128(now);
    format!(".copse-{}-{:016x}.partial", std::process::id(), h.finish())
}

/// The process id in a temporary file name of ours, if `name` is one.
fn owner_of(name: &str) -> Option<u32> {
    let rest = name.strip_prefix(".copse-")?.strip_suffix(".partial")?;
    let (pid, tag) = rest.split_once('-')?;
    (tag.len() == 16 && tag.bytes().all(|b| b.is_ascii_hexdigit()))
        .then(|| pid.parse().ok())
        .flatten()
}

/// Removes temporary files left in `dir` by runs whose process is gone (killed with no
/// chance to clean up). Only where `/proc` lists processes; a file whose process id is
/// in use again stays (it may be that process's own).
fn remove_stale(dir: &Path) {
    if !Path::new("/proc/self").exists() {
        return;
    }
    let Ok(entries) = fs::read_dir(dir) else {
        return;
    };
    for e in entries.flatten() {
        let name = e.file_name();
        let Some(pid) = name.to_str().and_then(owner_of) else {
            continue;
        };
        if pid != std::process::id() && !Path::new(&format!("/proc/{pid}")).exists() {
            let _ = fs::remove_file(e.path());
        }
    }
}

impl Staged {
    /// Opens a temporary file beside `dest`.
    ///
    /// # Errors
    /// An input error when the folder does not exist; a failure when the temporary file
    /// cannot be created.
    pub fn create(dest: &Path) -> CliResult<Self> {
        check_file_name(dest)?;
        let name = dest.display().to_string();
        let dir = match dest.parent() {
            Some(d) if !d.as_os_str().is_empty() => d.to_path_buf(),
            _ => PathBuf::from("."),
        };
        if !dir.is_dir() {
            return Err(not_a_folder(dest));
        }
        if dest.is_dir() {
            return Err(CliError::input(format!(
                "cannot write {name}: it is a folder; give a file name"
            )));
        }
        remove_stale(&dir);
        let mut options = OpenOptions::new();
        options.write(true).create_new(true);
        #[cfg(unix)]
        {
            use std::os::unix::fs::OpenOptionsExt;
            // Ordinary file permissions (the umask still applies), not a private
            // temporary file's: a model or a scored file is meant to be shared.
            options.mode(0o666);
        }
        let mut tries = 0;
        let (file, tmp_path) = loop {
            let tmp_path = dir.join(temporary_name());
            // Listed before it exists, so a signal in between cannot leave it behind.
            crate::interrupt::register(&tmp_path);
            match options.open(&tmp_path) {
                Ok(f) => break (f, tmp_path),
                Err(e) => {
                    crate::interrupt::unregister(&tmp_path);
                    tries += 1;
                    if e.kind() != io::ErrorKind::AlreadyExists || tries > 8 {
                        return Err(CliError::failure(format!(
                            "cannot create a file in {}: {}; check the folder is writable",
                            dir.display(),
                            io_reason(&e)
                        )));
                    }
                }
            }
        };
        Ok(Staged {
            writer: Some(BufWriter::with_capacity(1 << 16, file)),
            tmp_path: Some(tmp_path),
            dest: dest.to_path_buf(),
            name,
        })
    }

    /// Flushes and syncs the temporary file, which then waits for [`commit_all`] to
    /// rename it over the destination.
    ///
    /// # Errors
    /// A failure when any step fails; the temporary file is then removed.
    pub fn commit(mut self) -> CliResult<()> {
        let name = self.name.clone();
        let Some(writer) = self.writer.take() else {
            return Err(CliError::failure(format!(
                "internal: {name} was already finished"
            )));
        };
        let file = writer
            .into_inner()
            .map_err(|e| CliError::write(&name, e.error()))?;
        file.sync_all().map_err(|e| CliError::write(&name, &e))?;
        drop(file);
        if let Some(tmp) = self.tmp_path.take() {
            waiting().push(Waiting {
                tmp,
                dest: self.dest.clone(),
                name,
            });
        }
        Ok(())
    }

    fn writer(&mut self) -> io::Result<&mut BufWriter<File>> {
        self.writer
            .as_mut()
            .ok_or_else(|| io::Error::other("output already finished"))
    }
}

/// Renames every finished output over its destination, in one step no interruption
/// falls inside. Called at the end of each command (and before a later step of
/// `copse demo` reads an earlier step's output).
///
/// # Errors
/// A failure when a rename fails; the message names the outputs already replaced, and
/// the waiting files not yet renamed are removed.
pub fn commit_all() -> CliResult<()> {
    let files = std::mem::take(&mut *waiting());
    if files.is_empty() {
        return Ok(());
    }
    let mut st = crate::interrupt::lock();
    let first_new = st.written.len();
    for (i, f) in files.iter().enumerate() {
        if let Err(e) = fs::rename(&f.tmp, &f.dest) {
            for g in &files[i..] {
                let _ = fs::remove_file(&g.tmp);
                st.partial.retain(|p| p != &g.tmp);
            }
            let done = &st.written[first_new..];
            let replaced = if done.is_empty() {
                "no output was replaced".to_string()
            } else {
                format!("only {} replaced", done.join(", "))
            };
            return Err(CliError::failure(format!(
                "{}; {replaced}",
                CliError::write(&f.name, &e).message()
            )));
        }
        st.partial.retain(|p| p != &f.tmp);
        st.written.push(f.name.clone());
    }
    Ok(())
}

/// Removes every finished output still waiting (the command failed: none of its
/// outputs replaces anything).
pub fn discard_all() {
    for f in std::mem::take(&mut *waiting()) {
        let _ = fs::remove_file(&f.tmp);
        crate::interrupt::unregister(&f.tmp);
    }
}

impl Write for Staged {
    fn write(&mut self, buf: &[u8]) -> io::Result<usize> {
        self.writer()?.write(buf)
    }
    fn flush(&mut self) -> io::Result<()> {
        self.writer()?.flush()
    }
}

/// Refuses a file path that can only name a folder (it ends with `/`), before any
/// work is done.
///
/// # Errors
/// An input error saying so.
pub fn check_file_name(path: &Path) -> CliResult<()> {
    let text = path.as_os_str().to_string_lossy();
    if text.ends_with('/') || text.ends_with(std::path::MAIN_SEPARATOR) {
        return Err(CliError::input(format!(
            "cannot write {text}: a path ending in '/' names a folder; give a file name, such as {}model.copse",
            text
        )));
    }
    Ok(())
}

/// True when `path` exists and is something other than a regular file or folder
/// (a character device, a pipe): renaming over it would replace the device.
fn is_special(path: &Path) -> bool {
    fs::metadata(path)
        .map(|m| !m.is_file() && !m.is_dir())
        .unwrap_or(false)
}

/// Resolves a symbolic link so the rename replaces the file it points to, not the link.
fn resolve(path: &Path) -> PathBuf {
    match fs::symlink_metadata(path) {
        Ok(m) if m.file_type().is_symlink() => fs::canonicalize(path).unwrap_or(path.to_path_buf()),
        _ => path.to_path_buf(),
    }
}

impl Output {
    /// Output to `path`, or standard output for `None` or `-`.
    ///
    /// # Errors
    /// As for [`Staged::create`], or when a device cannot be opened.
    pub fn create(path: Option<&str>) -> CliResult<Self> {
        match path {
            None | Some("-") => Ok(Output::Stdout(BufWriter::with_capacity(
                1 << 16,
                io::stdout(),
            ))),
            Some(p) => {
                let path = resolve(Path::new(p));
                if is_special(&path) {
                    let f = OpenOptions::new().write(true).open(&path).map_err(|e| {
                        CliError::input(format!("cannot open {p} for writing: {}", io_reason(&e)))
                    })?;
                    return Ok(Output::Device(BufWriter::new(f), p.to_string()));
                }
                Ok(Output::Staged(Staged::create(&path)?))
            }
        }
    }

    /// Name for messages.
    pub fn name(&self) -> &str {
        match self {
            Output::Stdout(_) => "standard output",
            Output::Staged(s) => &s.name,
            Output::Device(_, n) => n,
        }
    }

    /// Finishes the output: flushes standard output or a device, commits a file.
    ///
    /// # Errors
    /// A failure when flushing or renaming fails; a closed pipe on standard output.
    pub fn finish(self) -> CliResult<()> {
        match self {
            Output::Stdout(mut w) => w
                .flush()
                .map_err(|e| CliError::write("standard output", &e)),
            Output::Device(mut w, name) => w.flush().map_err(|e| CliError::write(&name, &e)),
            Output::Staged(s) => s.commit(),
        }
    }
}

impl Write for Output {
    fn write(&mut self, buf: &[u8]) -> io::Result<usize> {
        match self {
            Output::Stdout(w) => w.write(buf),
            Output::Staged(s) => s.write(buf),
            Output::Device(w, _) => w.write(buf),
        }
    }
    fn flush(&mut self) -> io::Result<()> {
        match self {
            Output::Stdout(w) => w.flush(),
            Output::Staged(s) => s.flush(),
            Output::Device(w, _) => w.flush(),
        }
    }
}

/// Writes `bytes` to `path` in one go, through a temporary file that waits for
/// [`commit_all`].
///
/// # Errors
/// As for [`Output::create`] and [`Output::finish`].
pub fn write_file(path: &Path, bytes: &[u8]) -> CliResult<()> {
    let p = path.to_string_lossy();
    let mut out = Output::create(Some(&p))?;
    let name = out.name().to_string();
    out.write_all(bytes)
        .map_err(|e| CliError::write(&name, &e))?;
    out.finish()
}

/// Refuses to write over an input file: the output would destroy the data as it is
/// read.
///
/// # Errors
/// An input error when `output` names the same file as `input`.
pub fn refuse_overwrite(input: &str, output: Option<&str>, what: &str) -> CliResult<()> {
    let Some(out) = output else { return Ok(()) };
    if input == "-" || out == "-" {
        return Ok(());
    }
    let same = match (fs::canonicalize(input), fs::canonicalize(out)) {
        (Ok(a), Ok(b)) => a == b,
        _ => false,
    };
    if same {
        return Err(CliError::input(format!(
            "the {what} {out} is the input file itself; choose another output path"
        )));
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn temporary_names_carry_the_process_id() {
        let name = temporary_name();
        assert_eq!(owner_of(&name), Some(std::process::id()));
        assert_eq!(owner_of(".copse-abc123.partial"), None);
        assert_eq!(owner_of(".copse-12-0123456789abcdef.partial"), Some(12));
        assert_eq!(owner_of("copse-12-0123456789abcdef.partial"), None);
    }
}
