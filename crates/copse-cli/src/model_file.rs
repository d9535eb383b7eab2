//! The model file container. Layout (all integers little-endian):
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
//! The marker's high first byte and CR LF pair show up damage from text-mode copies.
//! The codec lives only in this file, so it can change behind a new format version.
//! Reading never trusts the file: the length must match the file's size before any
//! payload is read, the checksum must match before decoding starts, and decoding runs
//! under a byte limit scaled to the payload's size, so a hostile length inside the
//! payload cannot make copse allocate more than a small multiple of the file's size.
use crate::output::write_file;
use serde::de::DeserializeOwned;
use serde::Serialize;
use std::fmt;
use std::fs::File;
use std::io::Read;
use std::path::Path;

/// First eight bytes of every model file.
pub const MAGIC: [u8; 8] = [0xC0, b'P', b'S', b'E', b'M', b'D', b'\r', b'\n'];
/// The format this build writes and the only one it reads. Format 2 keeps each
/// leaf's output and weight inside its 16-byte node (format 1, copse before the
/// compact leaves, stored them in tables beside the nodes).
pub const FORMAT_VERSION: u16 = 2;
/// Bytes before the payload.
pub const HEADER_LEN: usize = 20;
/// Bytes after the payload.
pub const TRAILER_LEN: usize = 4;
/// Largest model file copse agrees to read (64 GiB).
pub const MAX_FILE_BYTES: u64 = 64 << 30;

/// What is wrong with a model file.
#[non_exhaustive]
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ModelFileErrorKind {
    /// The file cannot be opened or read.
    Io,
    /// The file does not start with the marker: not a model file.
    NotAModel,
    /// Written by a newer copse.
    NewerVersion,
    /// Written by an earlier copse, in a format this one no longer reads.
    OlderVersion,
    /// Cut short, padded, or altered: length or checksum does not match.
    Damaged,
    /// Checksum fine, but the payload does not decode as a model.
    Undecodable,
    /// Larger than copse agrees to read.
    TooLarge,
}

/// An error reading or writing a model file, with a message naming the file.
#[derive(Debug, Clone)]
pub struct ModelFileError {
    #[allow(dead_code)]
    kind: ModelFileErrorKind,
    message: String,
}

impl ModelFileError {
    fn new(kind: ModelFileErrorKind, message: String) -> Self {
        ModelFileError { kind, message }
    }

    /// The kind of fault (the CLI reports every kind the same way, as an input error;
    /// tests and fuzz targets tell them apart).
    #[allow(dead_code)]
    pub fn kind(&self) -> ModelFileErrorKind {
        self.kind
    }
}

impl fmt::Display for ModelFileError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(&self.message)
    }
}

impl std::error::Error for ModelFileError {}

fn config() -> bincode::config::Configuration {
    bincode::config::standard()
}

/// Encodes `value` into the complete bytes of a model file.
///
/// # Errors
/// A message when the value cannot be encoded.
pub fn encode<T: Serialize>(value: &T) -> Result<Vec<u8>, String> {
    let payload = bincode::serde::encode_to_vec(value, config()).map_err(|e| e.to_string())?;
    let mut bytes = Vec::with_capacity(HEADER_LEN + payload.len() + TRAILER_LEN);
    bytes.extend_from_slice(&MAGIC);
    bytes.extend_from_slice(&FORMAT_VERSION.to_le_bytes());
    bytes.extend_from_slice(&0u16.to_le_bytes());
    bytes.extend_from_slice(&(payload.len() as u64).to_le_bytes());
    bytes.extend_from_slice(&payload);
    let crc = crc32fast::hash(&bytes);
    bytes.extend_from_slice(&crc.to_le_bytes());
    Ok(bytes)
}

/// Checks the header of a model file and returns the payload length it claims.
fn check_header(header: &[u8], file_len: u64, name: &str) -> Result<u64, ModelFileError> {
    use ModelFileErrorKind::*;
    if file_len == 0 {
        return Err(ModelFileError::new(
            NotAModel,
            format!("{name} is empty, not a copse model; make one with 'copse train'"),
        ));
    }
    if header.len() < MAGIC.len() || header[..MAGIC.len()] != MAGIC {
        return Err(ModelFileError::new(
            NotAModel,
            format!(
                "{name} is not a copse model file (it lacks the model marker at its start); \
                 check the path, or make a model with 'copse train'"
            ),
        ));
    }
    if header.len() < HEADER_LEN {
        return Err(ModelFileError::new(
            Damaged,
            format!(
                "{name} is damaged: it ends inside its header ({file_len} bytes); copy it again or retrain"
            ),
        ));
    }
    let version = u16::from_le_bytes([header[8], header[9]]);
    if version > FORMAT_VERSION {
        return Err(ModelFileError::new(
            NewerVersion,
            format!(
                "{name} was written by a newer copse (model format {version}; this copse reads format \
                 {FORMAT_VERSION} and older); upgrade copse to use it"
            ),
        ));
    }
    if (1..FORMAT_VERSION).contains(&version) {
        return Err(ModelFileError::new(
            OlderVersion,
            format!(
                "{name} was written by an earlier copse (model format {version}; this copse reads \
                 format {FORMAT_VERSION} only); the model must be trained again with this copse \
                 ('copse train')"
            ),
        ));
    }
    if version == 0 {
        return Err(ModelFileError::new(
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
        return Err(ModelFileError::new(
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
/// [`ModelFileErrorKind::NotAModel`], `NewerVersion`, `OlderVersion`, `Damaged` or
/// `Undecodable`, each
/// with a message saying what to do.
pub fn decode<T: DeserializeOwned>(bytes: &[u8], name: &str) -> Result<T, ModelFileError> {
    let head = &bytes[..bytes.len().min(HEADER_LEN)];
    let claimed = check_header(head, bytes.len() as u64, name)?;
    let body_end = HEADER_LEN + claimed as usize;
    let mut stored = [0u8; 4];
    stored.copy_from_slice(&bytes[body_end..body_end + TRAILER_LEN]);
    let stored = u32::from_le_bytes(stored);
    let computed = crc32fast::hash(&bytes[..body_end]);
    if stored != computed {
        return Err(ModelFileError::new(
            ModelFileErrorKind::Damaged,
            format!(
                "{name} is damaged: its checksum does not match its contents (stored {stored:08x}, \
                 computed {computed:08x}); copy it again or retrain"
            ),
        ));
    }
    decode_payload(&bytes[HEADER_LEN..body_end], name)
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

fn decode_payload<T: DeserializeOwned>(payload: &[u8], name: &str) -> Result<T, ModelFileError> {
    // The limit bounds what the decoder may claim, and so allocate, to at most eight
    // times the payload's size (and at least 128 KiB).
    let result: Result<(T, usize), _> =
        decode_with_limit!(payload, 16, 18, 20, 22, 24, 26, 28, 30, 32, 34, 36);
    match result {
        Ok((value, used)) if used == payload.len() => Ok(value),
        Ok((_, used)) => Err(ModelFileError::new(
            ModelFileErrorKind::Undecodable,
            format!(
                "{name} could not be read: {} unexpected bytes follow the model; it was not written by this \
                 copse; retrain the model",
                payload.len() - used
            ),
        )),
        Err(e) => Err(ModelFileError::new(
            ModelFileErrorKind::Undecodable,
            format!(
                "{name} passed its checksum but its contents could not be read as a model ({e}); \
                 it was not written by this copse; retrain the model"
            ),
        )),
    }
}

/// Reads and decodes the model file at `path`.
///
/// # Errors
/// As for [`decode`], plus [`ModelFileErrorKind::Io`] and `TooLarge`.
pub fn read<T: DeserializeOwned>(path: &Path) -> Result<T, ModelFileError> {
    let name = path.display().to_string();
    let io_err = |e: std::io::Error| {
        ModelFileError::new(
            ModelFileErrorKind::Io,
            format!(
                "cannot read the model {name}: {}; check the path",
                crate::reader::io_reason(&e)
            ),
        )
    };
    if path.is_dir() {
        return Err(ModelFileError::new(
            ModelFileErrorKind::Io,
            format!("{name} is a folder, not a model file; give the path of a model file"),
        ));
    }
    let mut f = File::open(path).map_err(io_err)?;
    let file_len = f.metadata().map_err(io_err)?.len();
    if file_len > MAX_FILE_BYTES {
        return Err(ModelFileError::new(
            ModelFileErrorKind::TooLarge,
            format!(
                "{name} is {file_len} bytes, more than the {MAX_FILE_BYTES} copse reads; it is not a model copse wrote"
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
    check_header(&head, file_len, &name)?;
    let mut bytes = Vec::with_capacity(file_len as usize);
    bytes.extend_from_slice(&head);
    f.take(file_len - HEADER_LEN as u64)
        .read_to_end(&mut bytes)
        .map_err(io_err)?;
    decode(&bytes, &name)
}

/// Encodes `value` and writes it to `path` through a temporary file and a rename.
///
/// # Errors
/// A message when encoding or writing fails.
pub fn write<T: Serialize>(path: &Path, value: &T) -> crate::error::CliResult<()> {
    let bytes = encode(value)
        .map_err(|e| crate::error::CliError::failure(format!("could not encode the model: {e}")))?;
    write_file(path, &bytes)
}

#[cfg(test)]
mod tests {
    use super::*;
    use serde::Deserialize;

    #[derive(Debug, PartialEq, Serialize, Deserialize)]
    struct Sample {
        name: String,
        values: Vec<f64>,
        labels: Vec<String>,
    }

    fn sample() -> Sample {
        Sample {
            name: "pipes".into(),
            values: vec![1.5, -2.0, 3.25],
            labels: vec!["cast_iron".into(), "pvc".into()],
        }
    }

    #[test]
    fn round_trip() {
        let bytes = encode(&sample()).unwrap();
        let back: Sample = decode(&bytes, "m").unwrap();
        assert_eq!(back, sample());
    }

    #[test]
    fn every_single_flipped_bit_is_caught() {
        let bytes = encode(&sample()).unwrap();
        for i in 0..bytes.len() {
            for bit in 0..8 {
                let mut b = bytes.clone();
                b[i] ^= 1 << bit;
                assert!(decode::<Sample>(&b, "m").is_err(), "byte {i} bit {bit}");
            }
        }
    }

    #[test]
    fn every_truncation_is_caught() {
        let bytes = encode(&sample()).unwrap();
        for n in 0..bytes.len() {
            let e = decode::<Sample>(&bytes[..n], "m").unwrap_err();
            assert!(matches!(
                e.kind(),
                ModelFileErrorKind::NotAModel | ModelFileErrorKind::Damaged
            ));
        }
    }

    #[test]
    fn newer_version_is_named() {
        let mut bytes = encode(&sample()).unwrap();
        bytes[8..10].copy_from_slice(&(FORMAT_VERSION + 1).to_le_bytes());
        let e = decode::<Sample>(&bytes, "m").unwrap_err();
        assert_eq!(e.kind(), ModelFileErrorKind::NewerVersion);
        assert!(e.to_string().contains("newer copse"));
    }

    #[test]
    fn older_version_says_to_train_again() {
        let mut bytes = encode(&sample()).unwrap();
        bytes[8..10].copy_from_slice(&1u16.to_le_bytes());
        let e = decode::<Sample>(&bytes, "old.copse").unwrap_err();
        assert_eq!(e.kind(), ModelFileErrorKind::OlderVersion);
        let m = e.to_string();
        assert!(
            m.contains("old.copse") && m.contains("earlier copse"),
            "{m}"
        );
        assert!(
            m.contains("model format 1") && m.contains("trained again"),
            "{m}"
        );
    }

    #[test]
    fn terabyte_length_field_is_refused_before_reading() {
        let mut bytes = encode(&sample()).unwrap();
        bytes[12..20].copy_from_slice(&(1u64 << 42).to_le_bytes());
        let e = decode::<Sample>(&bytes, "m").unwrap_err();
        assert_eq!(e.kind(), ModelFileErrorKind::Damaged);
    }

    /// The size goal of issue 5: at most 16 bytes per tree node in a model file, for
    /// two-class and regression forests. Each node's record takes at most 16 bytes and
    /// usually fewer (see copse-tree's `NodeRecord`), which leaves room for the rest
    /// of the file (settings, per-tree sums, out-of-bag summary).
    #[test]
    fn a_forest_file_takes_at_most_16_bytes_per_node() {
        use copse_forest::{synth, Forest, ForestSettings};
        for (name, d) in [
            ("two classes", synth::twonorm(2000, 5)),
            ("regression", synth::friedman1(2000, 5)),
        ] {
            let s = ForestSettings {
                trees: 4,
                seed: 2,
                ..ForestSettings::default()
            };
            let f = Forest::train(d.x.view(), &d.meta, &d.outcome, &s, &Default::default())
                .unwrap()
                .forest;
            let per_node = encode(&f).unwrap().len() as f64 / f.n_nodes() as f64;
            assert!(per_node <= 16.0, "{name}: {per_node:.2} bytes per node");
        }
    }

    /// A hostile payload with a valid checksum whose string claims 2^40 bytes must be
    /// refused by the limit, not attempted as an allocation.
    #[test]
    fn hostile_inner_length_with_valid_checksum_is_refused() {
        // bincode's varint: 0xFD then a u64 little-endian length.
        let mut payload = vec![0xFD];
        payload.extend_from_slice(&(1u64 << 40).to_le_bytes());
        payload.extend_from_slice(b"abc");
        let mut bytes = Vec::new();
        bytes.extend_from_slice(&MAGIC);
        bytes.extend_from_slice(&FORMAT_VERSION.to_le_bytes());
        bytes.extend_from_slice(&0u16.to_le_bytes());
        bytes.extend_from_slice(&(payload.len() as u64).to_le_bytes());
        bytes.extend_from_slice(&payload);
        let crc = crc32fast::hash(&bytes);
        bytes.extend_from_slice(&crc.to_le_bytes());
        let e = decode::<Sample>(&bytes, "m").unwrap_err();
        assert_eq!(e.kind(), ModelFileErrorKind::Undecodable);
    }
}
