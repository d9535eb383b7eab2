//! Reading CSV text as a spreadsheet would: a byte-order mark, CRLF line ends, quoted
//! fields, a stray word in a numeric column, and lines named right in messages.
//!
//! Data: `tests/data/iris.csv` (Fisher 1936, via the vega_datasets package) and
//! `tests/data/penguins.csv` (Gorman, Williams & Fraser 2014, palmerpenguins package);
//! provenance in `tests/data/README.md`.
use super::{copse_in, expect_code, json_of, tmp};

/// A UTF-8 byte-order mark, CRLF line ends, and quoted fields holding the delimiter and
/// a line break are all read as a spreadsheet would.
#[test]
fn bom_crlf_and_quoted_fields() {
    let dir = tmp();
    let mut data = "\u{feff}colour,size,label\r\n".to_string();
    for i in 0..40 {
        let colour = if i % 2 == 0 {
            "\"red, dark\""
        } else {
            "\"blue\nlight\""
        };
        let label = if i % 2 == 0 { "a" } else { "b" };
        data.push_str(&format!("{colour},{},{label}\r\n", i % 7));
    }
    std::fs::write(dir.path().join("odd.csv"), data).expect("write");
    let args = [
        "train", "--data", "odd.csv", "--target", "label", "--out", "m.copse", "--trees", "20",
        "--json",
    ];
    let (so, _) = expect_code(&copse_in(dir.path(), &args, None), 0);
    let j = json_of(&so);
    assert_eq!(
        j["inputs"][0]["name"], "colour",
        "the mark is not part of the name"
    );
    assert_eq!(
        j["inputs"][0]["categories"],
        serde_json::json!(["blue\nlight", "red, dark"])
    );
    assert_eq!(j["classes"], serde_json::json!(["a", "b"]));
    assert_eq!(
        j["oob"]["error"], 0.0,
        "colour separates the labels exactly"
    );
}

#[test]
fn a_stray_word_makes_a_column_categorical_and_the_lines_are_named() {
    let dir = tmp();
    let mut data = String::from("depth,y\n");
    for i in 0..30 {
        data.push_str(&format!("{},{}\n", i, if i < 15 { "lo" } else { "hi" }));
    }
    data.push_str("deep,hi\n");
    std::fs::write(dir.path().join("d.csv"), data).expect("write");
    let args = [
        "train", "--data", "d.csv", "--target", "y", "--out", "m.copse", "--trees", "10",
    ];
    let (_, se) = expect_code(&copse_in(dir.path(), &args, None), 0);
    assert!(se.contains("column 'depth' is read as categorical"), "{se}");
    assert!(se.contains("line 32 'deep'"), "{se}");
    // Forcing numbers turns the stray word into an error naming line and column.
    let args = [
        "train",
        "--data",
        "d.csv",
        "--target",
        "y",
        "--out",
        "m.copse",
        "--numeric",
        "depth",
    ];
    let (_, se) = expect_code(&copse_in(dir.path(), &args, None), 2);
    assert!(se.contains("d.csv line 32, column 'depth'"), "{se}");
}

/// Line numbers in messages count the header as line 1, with LF or CRLF line ends
/// (regression: CRLF files were reported one line early).
#[test]
fn crlf_files_report_the_right_line() {
    let dir = tmp();
    for (name, eol) in [("lf.csv", "\n"), ("crlf.csv", "\r\n")] {
        let data = ["a,b,y", "1,2,x", "3,4,y", "5,6,x", "7,8"].join(eol) + eol;
        std::fs::write(dir.path().join(name), data).expect("write");
        let args = ["train", "--data", name, "--target", "y", "--out", "m.copse"];
        let (_, se) = expect_code(&copse_in(dir.path(), &args, None), 2);
        assert!(
            se.contains(&format!("{name} line 5: found 2 fields")),
            "{se}"
        );
    }
}
