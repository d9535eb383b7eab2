//! The model file: a [`crate::Forest`] (trees, summaries and its [`crate::ModelCard`]) in a
//! checked container. Layout (all integers little-endian):
//!
//! | bytes | content |
//! | --- | --- |
//! | 8 | marker `C0 'P' 'S' 'E' 'M' 'D' CR LF` |
//! | 2 | format version ([`FORMAT_VERSION`]) |
//! | 2 | reserved, zero |
//! | 8 | payload length in bytes |
//! | n | payload: the model, encoded with bincode 2 through serde |
//! | 4 | CRC-32 (IEEE) of every byte before it |
//!
//! A part file ([`crate::part`]: some trees of a forest, to be merged) uses the same
//! container under its own marker and format version.
//!
//! The marker's high first byte and CR LF pair show up damage from text-mode copies.
//! The codec lives only in this file, so it can change behind a new format version.
//! Reading never trusts the file: the length must match the file's size before any
//! payload is read, the checksum must match before decoding starts, and decoding runs
//! under a byte limit scaled to the payload's size, so a hostile length inside the
//! payload cannot make copse allocate more than a small multiple of the file's size.
use crate::error::{io_reason, Error, ErrorKind, Result};
use serde::de::DeserializeOwned;
use serde::Serialize;
use std::fs::File;
use std::io::{self, Read, Write};
use std::path::Path;

/// First eight bytes of every model file.
pub const MAGIC: [u8; 8] = [0xC0, b'P', b'S', b'E', b'M', b'D', b'\r', b'\n'];
/// The format this build writes and the only one it reads. Format 5 adds the record
/// of the partitions a pooled model was made of (`Forest::pool`); format 4 added case weights
/// and row groups to the model card, weighted totals to the out-of-bag measures, the
/// cut-point mode to the settings and the leaf rows a model may keep
/// (`Forest::leaf_rows`); format 3 was the forest with its model card (format 2 held
/// a command-line schema beside the forest; format 1 stored leaf outputs in tables
/// beside the nodes).
pub const FORMAT_VERSION: u16 = 5;
/// The oldest format this build reads (formats before it must be trained again).
pub const OLDEST_READ_VERSION: u16 = 5;
/// Bytes before the payload.
pub const HEADER_LEN: usize = 20;
/// Bytes after the payload.
pub const TRAILER_LEN: usize = 4;
/// Largest model file copse agrees to read (64 GiB).
pub const MAX_FILE_BYTES: u64 = 64 << 30;

/// One kind of file in the container: its marker, the format version this build
/// writes and reads, and the words its messages use.
pub(crate) struct Kind {
    pub(crate) magic: [u8; 8],
    pub(crate) version: u16,
    /// The oldest format version this build reads.
    pub(crate) oldest: u16,
    /// What the file holds, as in "not a copse model".
    pub(crate) noun: &'static str,
    /// The command that makes one, quoted.
    pub(crate) tool: &'static str,
}

/// The model file.
pub(crate) const MODEL: Kind = Kind {
    magic: MAGIC,
    version: FORMAT_VERSION,
    oldest: OLDEST_READ_VERSION,
    noun: "model",
    tool: "'copse train'",
};

fn fault(kind: ErrorKind, message: String) -> Error {
    Error::new(kind, message)
}

fn config() -> bincode::config::Configuration {
    bincode::config::standard()
}

/// Encodes `value` into the complete bytes of a model file.
///
/// # Errors
/// `InvalidModel` when the value cannot be encoded.
pub fn encode<T: Serialize>(value: &T) -> Result<Vec<u8>> {
    encode_as(&MODEL, value)
}

/// Encodes `value` into the complete bytes of a file of kind `kind`.
pub(crate) fn encode_as<T: Serialize>(kind: &Kind, value: &T) -> Result<Vec<u8>> {
    // The payload is measured first (encoded into a counter), then encoded straight
    // after the header into a buffer of exactly the file's size: a model of several
    // gigabytes is held once more as bytes, not two or three times (a growing payload
    // buffer, then a framed copy of it).
    let mut counter = Counter(0);
    bincode::serde::encode_into_std_write(value, &mut counter, config()).map_err(|e| {
        Error::new(
            ErrorKind::InvalidModel,
            format!("could not encode the {}: {e}", kind.noun),
        )
    })?;
    let mut bytes = Vec::with_capacity(HEADER_LEN + counter.0 + TRAILER_LEN);
    bytes.extend_from_slice(&kind.magic);
    bytes.extend_from_slice(&kind.version.to_le_bytes());
    bytes.extend_from_slice(&0u16.to_le_bytes());
    bytes.extend_from_slice(&0u64.to_le_bytes());
    debug_assert_eq!(bytes.len(), HEADER_LEN);
    let len = bincode::serde::encode_into_std_write(value, &mut bytes, config()).map_err(|e| {
        Error::new(
            ErrorKind::InvalidModel,
            format!("could not encode the {}: {e}", kind.noun),
        )
    })?;
    bytes[HEADER_LEN - 8..HEADER_LEN].copy_from_slice(&(len as u64).to_le_bytes());
    let crc = crc32fast::hash(&bytes);
    bytes.extend_from_slice(&crc.to_le_bytes());
    Ok(bytes)
}

/// A writer that only counts the bytes it is given.
struct Counter(usize);

impl Write for Counter {
    fn write(&mut self, buf: &[u8]) -> io::Result<usize> {
        self.0 += buf.len();
        Ok(buf.len())
    }
    fn flush(&mut self) -> io::Result<()> {
        Ok(())
    }
}

/// Checks the header of a model file and returns the payload length it claims.
fn check_header(kind: &Kind, header: &[u8], file_len: u64, name: &str) -> Result<u64> {
    let (noun, tool, current) = (kind.noun, kind.tool, kind.version);
    use ErrorKind::*;
    if file_len == 0 {
        return Err(fault(
            NotAModel,
            format!("{name} is empty, not a copse {noun}; make one with {tool}"),
        ));
    }
    if header.len() < kind.magic.len() || header[..kind.magic.len()] != kind.magic {
        return Err(fault(
            NotAModel,
            format!(
                "{name} is not a copse {noun} file (it lacks the {noun} marker at its start); \
                 check the path, or make a {noun} with {tool}"
            ),
        ));
    }
    if header.len() < HEADER_LEN {
        return Err(fault(
            Damaged,
            format!(
                "{name} is damaged: it ends inside its header ({file_len} bytes); copy it again or retrain"
            ),
        ));
    }
    let version = u16::from_le_bytes([header[8], header[9]]);
    if version > current {
        return Err(fault(
            NewerFormat,
            format!(
                "{name} was written by a newer copse ({noun} format {version}; this copse reads format \
                 {current} and older); upgrade copse to use it"
            ),
        ));
    }
    if (1..kind.oldest).contains(&version) {
        return Err(fault(
            OlderFormat,
            format!(
                "{name} was written by an earlier copse ({noun} format {version}; this copse reads \
                 format {current} only); the {noun} must be trained again with this copse \
                 ({tool})"
            ),
        ));
    }
    if version == 0 {
        return Err(fault(
            Damaged,
            format!("{name} is damaged: its format version is 0, which copse never writes; copy it again or retrain"),
        ));
    }
    let mut len = [0u8; 8];
    len.copy_from_slice(&header[12..20]);
    let claimed = u64::from_le_bytes(len);
    let expected_total = claimed.saturating_add((HEADER_LEN + TRAILER_LEN) as u64);
    if expected_total != file_len {
        let how = if expected_total > file_len {
            "shorter than its header says (it may have been cut off while copying)"
        } else {
            "longer than its header says (something was appended)"
        };
        return Err(fault(
            Damaged,
            format!(
                "{name} is damaged: it is {how}: {file_len} bytes, header promises {}; copy it again or retrain",
                if expected_total == u64::MAX {
                    "more than can exist".to_string()
                } else {
                    expected_total.to_string()
                }
            ),
        ));
    }
    Ok(claimed)
}

/// Decodes the complete bytes of a model file; `name` names it in messages.
///
/// # Errors
/// [`ErrorKind::NotAModel`], `NewerFormat`, `OlderFormat`, `Damaged` or
/// `Undecodable`, each
/// with a message saying what to do.
pub fn decode<T: DeserializeOwned>(bytes: &[u8], name: &str) -> Result<T> {
    decode_as(&MODEL, bytes, name)
}

/// Decodes the complete bytes of a file of kind `kind`.
pub(crate) fn decode_as<T: DeserializeOwned>(kind: &Kind, bytes: &[u8], name: &str) -> Result<T> {
    decode_payload(kind, open_as(kind, bytes, name)?, name)
}

/// Checks the container of a file of kind `kind` (marker, version, length, checksum)
/// and returns its payload; `name` names it in messages.
pub(crate) fn open_as<'a>(kind: &Kind, bytes: &'a [u8], name: &str) -> Result<&'a [u8]> {
    let head = &bytes[..bytes.len().min(HEADER_LEN)];
    let claimed = check_header(kind, head, bytes.len() as u64, name)?;
    let body_end = HEADER_LEN + claimed as usize;
    let mut stored = [0u8; 4];
    stored.copy_from_slice(&bytes[body_end..body_end + TRAILER_LEN]);
    let stored = u32::from_le_bytes(stored);
    let computed = crc32fast::hash(&bytes[..body_end]);
    if stored != computed {
        return Err(fault(
            ErrorKind::Damaged,
            format!(
                "{name} is damaged: its checksum does not match its contents (stored {stored:08x}, \
                 computed {computed:08x}); copy it again or retrain"
            ),
        ));
    }
    Ok(&bytes[HEADER_LEN..body_end])
}

/// Runs the decoder with a byte limit of `$bits` bits, the first that covers the payload.
macro_rules! decode_with_limit {
    ($payload:expr, $($bits:literal),+) => {{
        let len = $payload.len();
        $(
            if len <= (1usize << $bits) {
                bincode::serde::decode_from_slice(
                    $payload,
                    config().with_limit::<{ 1usize << ($bits + 1) }>(),
                )
            } else
        )+
        {
            Err(bincode::error::DecodeError::LimitExceeded)
        }
    }};
}

fn decode_payload<T: DeserializeOwned>(kind: &Kind, payload: &[u8], name: &str) -> Result<T> {
    let noun = kind.noun;
    // The limit bounds what the decoder may claim, and so allocate, to at most eight
    // times the payload's size (and at least 128 KiB).
    let result: std::result::Result<(T, usize), bincode::error::DecodeError> =
        decode_with_limit!(payload, 16, 18, 20, 22, 24, 26, 28, 30, 32, 34, 36);
    match result {
        Ok((value, used)) if used == payload.len() => Ok(value),
        Ok((_, used)) => Err(fault(
            ErrorKind::Undecodable,
            format!(
                "{name} could not be read: {} unexpected bytes follow the {noun}; it was not written by this \
                 copse; retrain the {noun}",
                payload.len() - used
            ),
        )),
        Err(e) => Err(fault(
            ErrorKind::Undecodable,
            format!(
                "{name} passed its checksum but its contents could not be read as a {noun} ({e}); \
                 it was not written by this copse; retrain the {noun}"
            ),
        )),
    }
}

/// Reads and decodes the model file at `path`.
///
/// # Errors
/// As for [`decode`], plus [`ErrorKind::Io`] and `FileTooLarge`.
pub fn read<T: DeserializeOwned>(path: &Path) -> Result<T> {
    read_as(&MODEL, path)
}

/// Reads and decodes the file of kind `kind` at `path`.
pub(crate) fn read_as<T: DeserializeOwned>(kind: &Kind, path: &Path) -> Result<T> {
    decode_as(
        kind,
        &read_file_as(kind, path)?,
        &path.display().to_string(),
    )
}

/// The bytes of the file of kind `kind` at `path`, its header checked before the rest
/// is read.
///
/// # Errors
/// `Io`, `FileTooLarge`, and the header's faults as for [`decode`].
pub(crate) fn read_file_as(kind: &Kind, path: &Path) -> Result<Vec<u8>> {
    let noun = kind.noun;
    let name = path.display().to_string();
    let io_err = |e: io::Error| {
        fault(
            ErrorKind::Io,
            format!(
                "cannot read the {noun} {name}: {}; check the path",
                io_reason(&e)
            ),
        )
    };
    if path.is_dir() {
        return Err(fault(
            ErrorKind::Io,
            format!("{name} is a folder, not a {noun} file; give the path of a {noun} file"),
        ));
    }
    let mut f = File::open(path).map_err(io_err)?;
    let file_len = f.metadata().map_err(io_err)?.len();
    if file_len > MAX_FILE_BYTES {
        return Err(fault(
            ErrorKind::FileTooLarge,
            format!(
                "{name} is {file_len} bytes, more than the {MAX_FILE_BYTES} copse reads; it is not a {noun} copse wrote"
            ),
        ));
    }
    // Read the header first: a wrong marker or version is reported without reading a
    // possibly huge file, and the size is checked before the buffer grows.
    let mut head = Vec::with_capacity(HEADER_LEN);
    (&mut f)
        .take(HEADER_LEN as u64)
        .read_to_end(&mut head)
        .map_err(io_err)?;
    check_header(kind, &head, file_len, &name)?;
    let mut bytes = Vec::with_capacity(file_len as usize);
    bytes.extend_from_slice(&head);
    f.take(file_len - HEADER_LEN as u64)
        .read_to_end(&mut bytes)
        .map_err(io_err)?;
    Ok(bytes)
}

mod forest_file;

#[cfg(test)]
mod tests;
