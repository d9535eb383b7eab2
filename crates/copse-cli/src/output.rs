//! Writing outputs so that an error never leaves a half-written file: every file goes
//! to a temporary file in the destination's own folder and is renamed over the
//! destination only once it is complete and flushed to disk. Standard output and
//! device files (such as `/dev/null`) are written directly.
use crate::error::{CliError, CliResult};
use copse_forest::io_reason;
use std::fs::{self, File, OpenOptions};
use std::io::{self, BufWriter, Stdout, Write};
use std::path::{Path, PathBuf};
use tempfile::NamedTempFile;

/// Where a stream of output goes.
pub enum Output {
    /// Standard output.
    Stdout(BufWriter<Stdout>),
    /// A regular file, written to a temporary file first.
    Staged(Staged),
    /// A device or pipe given by path, written directly.
    Device(BufWriter<File>, String),
}

/// A temporary file that becomes `dest` on [`Staged::commit`]; dropped without a
/// commit, it is deleted.
pub struct Staged {
    /// `None` only once committed.
    writer: Option<BufWriter<NamedTempFile>>,
    /// The temporary file's path, listed for removal on Ctrl-C while it exists.
    tmp_path: PathBuf,
    dest: PathBuf,
    name: String,
}

impl Drop for Staged {
    fn drop(&mut self) {
        // Dropping the writer deletes an uncommitted temporary file; it need no longer
        // be deleted on Ctrl-C.
        drop(self.writer.take());
        crate::interrupt::unregister(&self.tmp_path);
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

impl Staged {
    /// Opens a temporary file beside `dest`.
    ///
    /// # Errors
    /// An input error when the folder does not exist; a failure when the temporary file
    /// cannot be created.
    pub fn create(dest: &Path) -> CliResult<Self> {
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
        let mut builder = tempfile::Builder::new();
        builder.prefix(".copse-").suffix(".partial");
        #[cfg(unix)]
        {
            use std::os::unix::fs::PermissionsExt;
            // Ordinary file permissions (the umask still applies), not the private
            // 0600 of a temporary file: a model or a scored file is meant to be shared.
            builder.permissions(fs::Permissions::from_mode(0o666));
        }
        let tmp = builder.tempfile_in(&dir).map_err(|e| {
            CliError::failure(format!(
                "cannot create a file in {}: {}; check the folder is writable",
                dir.display(),
                io_reason(&e)
            ))
        })?;
        let tmp_path = tmp.path().to_path_buf();
        crate::interrupt::register(&tmp_path);
        Ok(Staged {
            writer: Some(BufWriter::with_capacity(1 << 16, tmp)),
            tmp_path,
            dest: dest.to_path_buf(),
            name,
        })
    }

    /// Flushes, syncs and renames the temporary file over the destination.
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
        let tmp = writer
            .into_inner()
            .map_err(|e| CliError::write(&name, e.error()))?;
        tmp.as_file()
            .sync_all()
            .map_err(|e| CliError::write(&name, &e))?;
        // No interruption between the rename and taking the file off the list.
        crate::interrupt::while_holding(&self.tmp_path, || tmp.persist(&self.dest))
            .map_err(|e| CliError::write(&name, &e.error))?;
        Ok(())
    }

    fn writer(&mut self) -> io::Result<&mut BufWriter<NamedTempFile>> {
        self.writer
            .as_mut()
            .ok_or_else(|| io::Error::other("output already finished"))
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

/// Writes `bytes` to `path` in one go, through a temporary file and a rename.
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
