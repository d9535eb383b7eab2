//! Scoring as a stage of someone else's pipeline: pieces of a file without a header
//! (`--columns` names them), output without a header (`--omit-header`) that joins back
//! into the whole file's output, and JSON lines (`--out-format json-lines`) holding the
//! same values as the CSV. Data: the demo register (invented; see `main.rs`).
use super::{copse_in, expect_code, read_csv, repo, tmp};
use std::path::Path;

fn model(dir: &Path) {
    let data = repo("demo-data/water_mains.csv");
    let args = [
        "train",
        "--data",
        data.to_str().expect("utf-8"),
        "--target",
        "failed_within_year",
        "--ignore",
        "segment_id",
        "--trees",
        "20",
        "--out",
        "m.copse",
        "-q",
    ];
    expect_code(&copse_in(dir, &args, None), 0);
}

fn score(dir: &Path, extra: &[&str], stdin: Option<&[u8]>) -> String {
    let mut args = vec!["score", "--model", "m.copse", "--keep", "segment_id", "-q"];
    args.extend_from_slice(extra);
    expect_code(&copse_in(dir, &args, stdin), 0).0
}

#[test]
fn headerless_pieces_scored_without_headers_join_into_the_whole_output() {
    let dir = tmp();
    let d = dir.path();
    model(d);
    let text = std::fs::read_to_string(repo("demo-data/water_mains_to_score.csv")).expect("read");
    let (header, body) = text.split_once('\n').expect("a header line");
    let whole = score(d, &["--data", "-"], Some(text.as_bytes()));
    // Three pieces of the body, as a partitioned pipeline passes them on.
    let lines: Vec<&str> = body.lines().collect();
    let columns = header.trim_end_matches('\r');
    let mut joined = String::new();
    for (i, piece) in lines.chunks(lines.len() / 3 + 1).enumerate() {
        let piece = piece.join("\n") + "\n";
        let mut args = vec!["--data", "-", "--columns", columns];
        if i > 0 {
            args.push("--omit-header");
        }
        joined.push_str(&score(d, &args, Some(piece.as_bytes())));
    }
    assert_eq!(joined, whole);
    assert_eq!(read_csv(whole.as_bytes()).len(), lines.len() + 1);
    // A piece whose rows do not have the named columns is refused, naming the line.
    let args = [
        "score",
        "--model",
        "m.copse",
        "--data",
        "-",
        "--columns",
        columns,
    ];
    let out = copse_in(d, &args, Some(b"1,2,3\n"));
    let (_, err) = expect_code(&out, 2);
    assert!(
        err.contains("line 1: found 3 fields but --columns names 9"),
        "{err}"
    );
}

#[test]
fn json_lines_hold_the_csv_values_one_object_a_row() {
    let dir = tmp();
    let d = dir.path();
    model(d);
    let data = repo("demo-data/water_mains_to_score.csv");
    let data = data.to_str().expect("utf-8");
    let csv = score(d, &["--data", data, "--flag-unfamiliar"], None);
    let json = score(
        d,
        &[
            "--data",
            data,
            "--flag-unfamiliar",
            "--out-format",
            "json-lines",
        ],
        None,
    );
    let rows = read_csv(csv.as_bytes());
    let header = &rows[0];
    let objects: Vec<serde_json::Value> = json
        .lines()
        .map(|l| serde_json::from_str(l).expect("each line is one JSON object"))
        .collect();
    assert_eq!(objects.len(), rows.len() - 1);
    for (row, obj) in rows[1..].iter().zip(&objects) {
        let obj = obj.as_object().expect("an object");
        assert_eq!(obj.len(), header.len());
        for (name, cell) in header.iter().zip(row) {
            let v = &obj[name.as_str()];
            match name.as_str() {
                "segment_id" | "prediction" => assert_eq!(v.as_str(), Some(cell.as_str())),
                "unfamiliar" => assert_eq!(v.as_bool(), Some(cell == "1")),
                _ => {
                    let x: f64 = cell.parse().expect("a number in the CSV");
                    assert_eq!(v.as_f64(), Some(x), "{name}");
                }
            }
        }
    }
}
