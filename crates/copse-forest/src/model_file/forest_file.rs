//! Saving and loading a [`Forest`]: its file bytes through the container, written
//! through a temporary file and a rename, read back with every check. Files of format
//! 3 (before leaf rows could be kept) are read as models without leaf rows.
use super::{decode_as, encode, read_file_as, MODEL};
use crate::error::{io_reason, Error, ErrorKind, Result};
use crate::forest::Forest;
use std::io::{self, Write};
use std::path::Path;

impl Forest {
    /// The complete bytes of this model's file (what [`Forest::save`] writes).
    ///
    /// # Errors
    /// `InvalidModel` when the model fails the checks it would meet when read back
    /// (a model from training always passes).
    ///
    /// # Example
    /// ```
    /// use copse_forest::{synth, Forest, ForestSettings};
    /// let d = synth::twonorm(100, 1);
    /// let s = ForestSettings { trees: 3, ..Default::default() };
    /// let forest = Forest::train(d.x.view(), &d.meta, &d.outcome, &s, &Default::default())?.forest;
    /// let bytes = forest.to_bytes()?;
    /// assert_eq!(Forest::from_bytes(&bytes, "in memory")?, forest);
    /// # Ok::<(), copse_forest::Error>(())
    /// ```
    pub fn to_bytes(&self) -> Result<Vec<u8>> {
        // A model that would be refused when read back is never written.
        self.check().map_err(|e| {
            Error::new(
                ErrorKind::InvalidModel,
                format!(
                    "the model fails the checks it would meet when read back ({}); this is a \
                     fault in copse, please report it with the data",
                    e.message()
                ),
            )
        })?;
        encode(self)
    }

    /// Decodes a model from the complete bytes of a model file and checks it as
    /// [`Forest::load`] does; `name` names it in messages.
    ///
    /// # Errors
    /// As for [`Forest::load`], without `Io`.
    pub fn from_bytes(bytes: &[u8], name: &str) -> Result<Forest> {
        let forest: Forest = decode_as(&MODEL, bytes, name)?;
        forest.checked(name)
    }

    /// Writes the model file to `path` through a temporary file in the same folder
    /// and a rename, so `path` holds either its old content or the whole new model.
    ///
    /// # Errors
    /// `Io` when the file cannot be written; as [`Forest::to_bytes`].
    ///
    /// # Example
    /// ```
    /// use copse_forest::{synth, Forest, ForestSettings};
    /// let d = synth::friedman1(200, 3);
    /// let s = ForestSettings { trees: 5, ..Default::default() };
    /// let forest = Forest::train(d.x.view(), &d.meta, &d.outcome, &s, &Default::default())?.forest;
    /// let path = std::env::temp_dir().join("copse-doc-example.copse");
    /// forest.save(&path)?;
    /// assert_eq!(Forest::load(&path)?, forest);
    /// # std::fs::remove_file(&path).ok();
    /// # Ok::<(), copse_forest::Error>(())
    /// ```
    pub fn save(&self, path: impl AsRef<Path>) -> Result<()> {
        let path = path.as_ref();
        let bytes = self.to_bytes()?;
        let name = path.display();
        let io_err = |e: io::Error| {
            Error::new(
                ErrorKind::Io,
                format!(
                    "could not write the model {name}: {}; check the disk has room and the folder is writable",
                    io_reason(&e)
                ),
            )
        };
        let dir = match path.parent() {
            Some(d) if !d.as_os_str().is_empty() => d,
            _ => Path::new("."),
        };
        let mut tmp = tempfile::Builder::new()
            .prefix(".copse-")
            .suffix(".partial")
            .tempfile_in(dir)
            .map_err(io_err)?;
        tmp.write_all(&bytes).map_err(io_err)?;
        tmp.as_file().sync_all().map_err(io_err)?;
        tmp.persist(path).map_err(|e| io_err(e.error))?;
        Ok(())
    }

    /// Reads a model file and checks everything a file from elsewhere must pass:
    /// marker, format version, length, checksum, a decode bounded by the file's size,
    /// and the model's own consistency ([`Forest::check`]).
    ///
    /// # Errors
    /// `Io`, `NotAModel`, `NewerFormat`, `OlderFormat`, `Damaged`, `Undecodable`,
    /// `FileTooLarge` or `InvalidModel`, each naming the file and saying what to do.
    pub fn load(path: impl AsRef<Path>) -> Result<Forest> {
        let path = path.as_ref();
        Forest::from_bytes(&read_file_as(&MODEL, path)?, &path.display().to_string())
    }

    fn checked(self, name: &str) -> Result<Forest> {
        self.check().map_err(|e| {
            Error::new(
                ErrorKind::InvalidModel,
                format!(
                    "{name} is not a usable model: {}; retrain it with 'copse train'",
                    e.message()
                ),
            )
        })?;
        Ok(self)
    }
}
