//! Model files: damaged, foreign and hostile model files refused with a message, never a
//! crash.
use super::*;

#[test]
fn m31_model_path_is_a_folder_absent_or_a_csv() {
    let dir = tmp();
    std::fs::create_dir(dir.path().join("models")).expect("mkdir");
    let i = iris();
    refused(
        dir.path(),
        &["inspect", "--model", "models"],
        None,
        2,
        &["models is a folder, not a model file"],
    );
    refused(
        dir.path(),
        &["score", "--model", "gone.copse", "--data", &i],
        None,
        2,
        &[
            "cannot read the model gone.copse: no such file",
            "check the path",
        ],
    );
    put(dir.path(), "iris.csv", std::fs::read(&i).expect("iris"));
    refused(
        dir.path(),
        &["inspect", "--model", "iris.csv"],
        None,
        2,
        &["iris.csv is not a copse model file", "copse train"],
    );
}

/// A hostile file with a correct checksum whose first length field claims 2^40 items:
/// refused as unreadable, no allocation attempted.
#[test]
fn m32_hostile_payload_with_a_valid_checksum() {
    let dir = tmp();
    let mut payload = vec![0xFD];
    payload.extend_from_slice(&(1u64 << 40).to_le_bytes());
    payload.extend_from_slice(b"abcdefgh");
    put(
        dir.path(),
        "h.copse",
        copse_cli::harness::wrap_payload(&payload),
    );
    refused(
        dir.path(),
        &["inspect", "--model", "h.copse"],
        None,
        2,
        &[
            "h.copse passed its checksum but its contents could not be read",
            "retrain",
        ],
    );
}

/// Decoding never allocates more than the file justifies: under an address-space limit
/// of 1 GiB, files of a few kilobytes whose length fields claim 2 GiB and more are
/// refused with exit 2, where an attempt to allocate would abort the process. The
/// length fields sit at the start of the payload (the input list's length, then the
/// first input's name) and, for the rest, wherever a sweep of offsets puts them.
#[test]
fn m33_hostile_lengths_stay_within_memory() {
    if !Path::new("/bin/sh").exists() {
        return;
    }
    let dir = tmp();
    iris_model(dir.path());
    let good = std::fs::read(dir.path().join("iris.copse")).expect("model");
    let payload = &good[20..good.len() - 4];
    let mut written = Vec::new();
    for (k, at) in [0usize, 1, 2, 3, 5, 8, 13, 40, 100, 400, payload.len() / 2]
        .into_iter()
        .enumerate()
    {
        for claim in [1u64 << 31, 1u64 << 44] {
            let mut p = payload.to_vec();
            let mut field = vec![0xFD];
            field.extend_from_slice(&claim.to_le_bytes());
            let end = (at + field.len()).min(p.len());
            p.splice(at..end, field);
            let name = format!("h{k}_{}.copse", claim.trailing_zeros());
            put(dir.path(), &name, copse_cli::harness::wrap_payload(&p));
            written.push(name);
        }
    }
    let exe = env!("CARGO_BIN_EXE_copse");
    for name in &written {
        let out = Command::new("/bin/sh")
            .arg("-c")
            .arg("ulimit -v 1048576 && exec \"$0\" --threads 1 inspect --model \"$1\"")
            .arg(exe)
            .arg(name)
            .current_dir(dir.path())
            .stdout(Stdio::piped())
            .stderr(Stdio::piped())
            .output()
            .expect("sh runs");
        let se = text(&out.stderr);
        // A claim that lands inside a number rather than a length field can leave a
        // model that still reads (exit 0); anything else must be a clean refusal, not
        // an abort for want of memory.
        match out.status.code() {
            Some(0) if !name.starts_with("h0_") && !name.starts_with("h1_") => {}
            Some(2) => {
                one_clean_error(&se);
                assert!(se.contains(name.as_str()), "{name}: {se}");
            }
            other => panic!("{name}: exit {other:?}: {se}"),
        }
    }
}

/// A file cut to its 20-byte header: the header promises a payload that is not there.
#[test]
fn m34_model_cut_after_its_header() {
    let dir = tmp();
    iris_model(dir.path());
    let good = std::fs::read(dir.path().join("iris.copse")).expect("model");
    put(dir.path(), "cut.copse", &good[..20]);
    refused(
        dir.path(),
        &["inspect", "--model", "cut.copse"],
        None,
        2,
        &[
            "cut.copse is damaged",
            "shorter than its header says",
            "copy it again or retrain",
        ],
    );
}
