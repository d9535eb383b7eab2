//! The README's shell recipes run as written: the code blocks after a marker comment,
//! and a bash that runs one with this build's `copse` first on the PATH.
use super::repo;
use std::path::Path;

/// The first `n` `sh` code blocks after the README's `<!-- {marker}` comment.
pub(super) fn readme_blocks(marker: &str, n: usize) -> Vec<String> {
    let readme = std::fs::read_to_string(repo("README.md")).expect("README.md");
    let at = readme
        .find(&format!("<!-- {marker}"))
        .unwrap_or_else(|| panic!("the README marks its {marker}"));
    let blocks: Vec<String> = readme[at..]
        .split("```sh\n")
        .skip(1)
        .take(n)
        .map(|b| {
            b.split("```")
                .next()
                .expect("a closed code block")
                .to_string()
        })
        .collect();
    assert_eq!(blocks.len(), n, "{marker}: {n} shell blocks");
    blocks
}

/// Runs `script` with `bash -eu` in `dir`, this build's `copse` first on the PATH, and
/// `TASK_ID` set to `task` when given; fails the test when the script fails.
pub(super) fn run_sh(dir: &Path, script: &str, task: Option<usize>) {
    let bin = Path::new(env!("CARGO_BIN_EXE_copse"))
        .parent()
        .expect("the binary's folder");
    let path = format!(
        "{}:{}",
        bin.display(),
        std::env::var("PATH").unwrap_or_default()
    );
    let mut cmd = std::process::Command::new("bash");
    cmd.args(["-euc", script])
        .current_dir(dir)
        .env("PATH", &path)
        .env("NO_COLOR", "1");
    if let Some(t) = task {
        cmd.env("TASK_ID", t.to_string());
    }
    let out = cmd.output().expect("bash runs");
    assert!(
        out.status.success(),
        "{script}\n{}",
        String::from_utf8_lossy(&out.stderr)
    );
}
