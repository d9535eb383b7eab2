//! The model file: a [`Forest`] (trees, summaries and its [`crate::ModelCard`]) in a
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
//! The marker's high first byte and CR LF pair show up damage from text-mode copies.
//! The codec lives only in this file, so it can change behind a new format version.
//! Reading never trusts the file: the length must match the file's size before any
//! payload is read, the checksum must match before decoding starts, and decoding runs
//! under a byte limit scaled to the payload's size, so a hostile length inside the
//! payload cannot make copse allocate more than a small multiple of the file's size.
use crate::error::{io_reason, Error, ErrorKind, Result};
use crate::forest::Forest;
use serde::de::DeserializeOwned;
use serde::Serialize;
use std::fs::File;
use std::io::{self, Read, Write};
use std::path::Path;

/// First eight bytes of every model file.
pub const MAGIC: [u8; 8] = [0xC0, b'P', b'S', b'E', b'M', b'D', b'\r', b'\n'];
/// The format this build writes and the only one it reads. Format 3 is the forest
/// with its model card (format 2 held a command-line schema beside the forest; format
/// 1 stored leaf outputs in tables beside the nodes).
pub const FORMAT_VERSION: u16 = 3;
/// Bytes before the payload.
pub const HEADER_LEN: usize = 20;
/// Bytes after the payload.
pub const TRAILER_LEN: usize = 4;
/// Largest model file copse agrees to read (64 GiB).
pub const MAX_FILE_BYTES: u64 = 64 << 30;

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
    // The payload is measured first (encoded into a counter), then encoded straight
    // after the header into a buffer of exactly the file's size: a model of several
    // gigabytes is held once more as bytes, not two or three times (a growing payload
    // buffer, then a framed copy of it).
    let mut counter = Counter(0);
    bincode::serde::encode_into_std_write(value, &mut counter, config()).map_err(|e| {
        Error::new(
            ErrorKind::InvalidModel,
            format!("could not encode the model: {e}"),
        )
    })?;
    let mut bytes = Vec::with_capacity(HEADER_LEN + counter.0 + TRAILER_LEN);
    bytes.extend_from_slice(&MAGIC);
    bytes.extend_from_slice(&FORMAT_VERSION.to_le_bytes());
    bytes.extend_from_slice(&0u16.to_le_bytes());
    bytes.extend_from_slice(&0u64.to_le_bytes());
    debug_assert_eq!(bytes.len(), HEADER_LEN);
    let len = bincode::serde::encode_into_std_write(value, &mut bytes, config()).map_err(|e| {
        Error::new(
            ErrorKind::InvalidModel,
            format!("could not encode the model: {e}"),
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
fn check_header(header: &[u8], file_len: u64, name: &str) -> Result<u64> {
    use ErrorKind::*;
    if file_len == 0 {
        return Err(fault(
            NotAModel,
            format!("{name} is empty, not a copse model; make one with 'copse train'"),
        ));
    }
    if header.len() < MAGIC.len() || header[..MAGIC.len()] != MAGIC {
        return Err(fault(
            NotAModel,
            format!(
                "{name} is not a copse model file (it lacks the model marker at its start); \
                 check the path, or make a model with 'copse train'"
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
    if version > FORMAT_VERSION {
        return Err(fault(
            NewerFormat,
            format!(
                "{name} was written by a newer copse (model format {version}; this copse reads format \
                 {FORMAT_VERSION} and older); upgrade copse to use it"
            ),
        ));
    }
    if (1..FORMAT_VERSION).contains(&version) {
        return Err(fault(
            OlderFormat,
            format!(
                "{name} was written by an earlier copse (model format {version}; this copse reads \
                 format {FORMAT_VERSION} only); the model must be trained again with this copse \
                 ('copse train')"
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
    let head = &bytes[..bytes.len().min(HEADER_LEN)];
    let claimed = check_header(head, bytes.len() as u64, name)?;
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

fn decode_payload<T: DeserializeOwned>(payload: &[u8], name: &str) -> Result<T> {
    // The limit bounds what the decoder may claim, and so allocate, to at most eight
    // times the payload's size (and at least 128 KiB).
    let result: std::result::Result<(T, usize), bincode::error::DecodeError> =
        decode_with_limit!(payload, 16, 18, 20, 22, 24, 26, 28, 30, 32, 34, 36);
    match result {
        Ok((value, used)) if used == payload.len() => Ok(value),
        Ok((_, used)) => Err(fault(
            ErrorKind::Undecodable,
            format!(
                "{name} could not be read: {} unexpected bytes follow the model; it was not written by this \
                 copse; retrain the model",
                payload.len() - used
            ),
        )),
        Err(e) => Err(fault(
            ErrorKind::Undecodable,
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
/// As for [`decode`], plus [`ErrorKind::Io`] and `FileTooLarge`.
pub fn read<T: DeserializeOwned>(path: &Path) -> Result<T> {
    let name = path.display().to_string();
    let io_err = |e: io::Error| {
        fault(
            ErrorKind::Io,
            format!(
                "cannot read the model {name}: {}; check the path",
                io_reason(&e)
            ),
        )
    };
    if path.is_dir() {
        return Err(fault(
            ErrorKind::Io,
            format!("{name} is a folder, not a model file; give the path of a model file"),
        ));
    }
    let mut f = File::open(path).map_err(io_err)?;
    let file_len = f.metadata().map_err(io_err)?.len();
    if file_len > MAX_FILE_BYTES {
        return Err(fault(
            ErrorKind::FileTooLarge,
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
        decode::<Forest>(bytes, name)?.checked(name)
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
        read::<Forest>(path)?.checked(&path.display().to_string())
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
                ErrorKind::NotAModel | ErrorKind::Damaged
            ));
        }
    }

    #[test]
    fn newer_version_is_named() {
        let mut bytes = encode(&sample()).unwrap();
        bytes[8..10].copy_from_slice(&(FORMAT_VERSION + 1).to_le_bytes());
        let e = decode::<Sample>(&bytes, "m").unwrap_err();
        assert_eq!(e.kind(), ErrorKind::NewerFormat);
        assert!(e.to_string().contains("newer copse"));
    }

    #[test]
    fn older_version_says_to_train_again() {
        let mut bytes = encode(&sample()).unwrap();
        bytes[8..10].copy_from_slice(&1u16.to_le_bytes());
        let e = decode::<Sample>(&bytes, "old.copse").unwrap_err();
        assert_eq!(e.kind(), ErrorKind::OlderFormat);
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
        assert_eq!(e.kind(), ErrorKind::Damaged);
    }

    /// At most 16 bytes per tree node in a model file, for two-class and regression
    /// forests: each node's record takes at most 16 bytes and usually fewer (see
    /// copse-tree's `NodeRecord`).
    #[test]
    fn a_forest_file_takes_at_most_16_bytes_per_node() {
        use crate::{synth, ForestSettings};
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
            // The trees alone: the rest of the file (bin layout, summaries) does not grow
            // with the node count.
            let per_node = encode(&f.trees()).unwrap().len() as f64 / f.n_nodes() as f64;
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
        assert_eq!(e.kind(), ErrorKind::Undecodable);
    }

    /// A small real model: 3 trees on 200 rows of the twonorm problem, with one
    /// categorical input added so category bit sets are present.
    fn small_forest() -> Forest {
        use ndarray::Array2;
        let data = crate::synth::twonorm(200, 5);
        let (n, p) = data.x.dim();
        let x = Array2::from_shape_fn((n, p + 1), |(i, j)| {
            if j < p {
                data.x[[i, j]]
            } else {
                (i % 3) as f64
            }
        });
        let mut meta = data.meta.clone();
        meta.push(copse_tree::FeatureMeta::categorical(
            "shade",
            vec!["a".into(), "b".into(), "c".into()],
        ));
        let settings = crate::ForestSettings {
            trees: 3,
            seed: 2,
            ..crate::ForestSettings::default()
        };
        Forest::train(
            x.view(),
            &meta,
            &data.outcome,
            &settings,
            &Default::default(),
        )
        .unwrap()
        .forest
    }

    /// A hostile file can carry a valid checksum over altered contents. Whatever single
    /// bit is changed (checksum recomputed), reading either refuses the file or gives
    /// a model that predicts and renders without a panic. Both outcomes must occur:
    /// some flips land in bytes the checks cannot tell from real values (a threshold,
    /// a leaf output) and must decode and score, others must be refused.
    #[test]
    fn altered_contents_with_a_valid_checksum_never_panic() {
        use rand::{RngExt, SeedableRng};
        let forest = small_forest();
        let bytes = forest.to_bytes().unwrap();
        let n = bytes.len();
        let p = forest.n_features();
        let rows = ndarray::Array2::from_shape_fn((20, p), |(i, j)| {
            if j + 1 == p {
                (i % 5) as f64 - 1.0
            } else {
                (i as f64 - 10.0) / 4.0
            }
        });
        let mut rng = rand_xoshiro::Xoshiro256PlusPlus::seed_from_u64(11);
        let (mut decoded, mut scored, mut refused) = (0, 0, 0);
        for _ in 0..400 {
            let mut b = bytes.clone();
            let at = rng.random_range(HEADER_LEN..n - TRAILER_LEN);
            b[at] ^= 1 << rng.random_range(0..8);
            let crc = crc32fast::hash(&b[..n - 4]);
            b[n - 4..].copy_from_slice(&crc.to_le_bytes());
            match Forest::from_bytes(&b, "hostile") {
                Ok(m) => {
                    decoded += 1;
                    if m.predict(rows.view()).is_ok() {
                        scored += 1;
                    }
                    for t in m.trees() {
                        let _ = copse_tree::render::render(t, m.meta(), Some(m.classes()));
                    }
                }
                Err(_) => refused += 1,
            }
        }
        // Most bytes of a small model are bin bounds and thresholds, where any value
        // is a valid one, so most altered files decode; a model that passes the
        // checks on reading must also score.
        assert!(
            decoded >= 100,
            "only {decoded} of 400 altered files decoded"
        );
        assert_eq!(
            scored, decoded,
            "a model that passed its checks failed to score"
        );
        assert!(refused >= 1, "no altered file was refused");
    }
}
