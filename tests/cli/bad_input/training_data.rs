//! Reading training data: empty and ragged files, bad headers, impossible targets, odd
//! cells and encodings, each refused (or allowed and noted) with file, line and column.
use super::*;

#[test]
fn m01_empty_file() {
    train_refused("", "y", &["d.csv is empty", "needs a header row"]);
}

#[test]
fn m02_empty_standard_input() {
    let dir = tmp();
    refused(
        dir.path(),
        &train_args("-", "y"),
        Some(b""),
        2,
        &["standard input is empty", "needs a header row"],
    );
}

#[test]
fn m03_header_only() {
    train_refused(
        "a,b,y\n",
        "y",
        &[
            "d.csv has a header but no data rows",
            "add at least two rows",
        ],
    );
}

#[test]
fn m04_ragged_row() {
    train_refused(
        "a,b,y\n1,2,p\n3,4,q\n5,6,p,extra\n7,8,q\n",
        "y",
        &[
            "d.csv line 4: found 4 fields but the header has 3",
            "quoted",
        ],
    );
}

/// An opening quote never closed swallows the line break; the row comes out short.
#[test]
fn m05_unterminated_quote() {
    train_refused(
        "a,b,y\n1,2,p\n3,\"4,q\n5,6,p\n",
        "y",
        &["d.csv line 3", "no quote is missing"],
    );
}

#[test]
fn m06_duplicate_column_names() {
    train_refused(
        "depth,y,depth\n1,p,2\n3,q,4\n",
        "y",
        &[
            "d.csv line 1",
            "'depth' is used by column 1 and column 3",
            "give each column its own name",
        ],
    );
}

#[test]
fn m07_unnamed_column() {
    train_refused(
        "a,,y\n1,2,p\n3,4,q\n",
        "y",
        &["d.csv line 1, column 2", "name every column"],
    );
}

#[test]
fn m08_target_column_absent() {
    train_refused(
        "a,b,y\n1,2,p\n3,4,q\n",
        "outcome",
        &[
            "--target",
            "'outcome'",
            "d.csv has no such column",
            "a, b, y",
        ],
    );
}

#[test]
fn m09_target_all_missing() {
    train_refused(
        "a,b,y\n1,2,NA\n3,4,\n5,6,NaN\n",
        "y",
        &[
            "d.csv",
            "every row's target 'y' is missing",
            "check --target",
        ],
    );
}

#[test]
fn m10_single_row() {
    train_refused(
        "a,b,y\n1,2,p\n",
        "y",
        &["d.csv has only one row", "at least two are needed"],
    );
}

/// A single class is allowed: the model says it is trivial and predicts that class.
#[test]
fn m11_single_class_is_allowed_and_called_trivial() {
    let dir = tmp();
    put(dir.path(), "d.csv", "a,b,y\n1,2,p\n3,4,p\n5,1,p\n");
    let (_, se) = expect_code(&copse_in(dir.path(), &train_args("d.csv", "y"), None), 0);
    assert!(
        se.contains("single class 'p': the model is trivial"),
        "{se}"
    );
    let (so, _) = expect_code(
        &copse_in(
            dir.path(),
            &["score", "--model", "m.copse", "--data", "d.csv"],
            None,
        ),
        0,
    );
    assert_eq!(
        so,
        "prediction,prob_p\np,1.000000\np,1.000000\np,1.000000\n"
    );
}

/// Every input constant: allowed, with a note that the model cannot split and only
/// predicts the overall class shares.
#[test]
fn m12_every_input_constant_is_allowed_and_called_trivial() {
    let dir = tmp();
    put(dir.path(), "d.csv", "a,b,y\n1,x,p\n1,x,q\n1,x,p\n1,x,q\n");
    let (_, se) = expect_code(&copse_in(dir.path(), &train_args("d.csv", "y"), None), 0);
    assert!(
        se.contains("input 'a' has the same value in every row"),
        "{se}"
    );
    assert!(
        se.contains("input 'b' has the same value in every row"),
        "{se}"
    );
    assert!(
        se.contains("no input of d.csv varies") && se.contains("the model is trivial"),
        "{se}"
    );
}

/// `inf`, `-inf` and `1e400` (beyond the largest double) are not finite numbers: the
/// column is read as categorical and the note names the lines; forced numeric, the
/// first is an error naming line and column.
#[test]
fn m13_infinities_and_overflow_in_a_numeric_column() {
    let dir = tmp();
    let mut d = String::from("x,y\n");
    for i in 0..20 {
        d.push_str(&format!("{i},{}\n", if i % 2 == 0 { "p" } else { "q" }));
    }
    d.push_str("inf,p\n-inf,q\n1e400,p\n");
    put(dir.path(), "d.csv", &d);
    let (_, se) = expect_code(&copse_in(dir.path(), &train_args("d.csv", "y"), None), 0);
    assert!(
        se.contains("column 'x' is read as categorical")
            && se.contains("line 22 'inf', line 23 '-inf', line 24 '1e400'")
            && se.contains("--missing"),
        "{se}"
    );
    std::fs::remove_file(dir.path().join("m.copse")).expect("remove");
    let mut args = train_args("d.csv", "y");
    args.extend(["--numeric", "x"]);
    refused(
        dir.path(),
        &args,
        None,
        2,
        &[
            "d.csv line 22, column 'x'",
            "'inf' is not a finite number",
            "fix the value",
        ],
    );
}

/// A regression target holding one word: the error names the line and column.
#[test]
fn m14_stray_word_in_a_regression_target() {
    let dir = tmp();
    put(dir.path(), "d.csv", "a,y\n1,2.5\n2,3.5\n3,n/a\n4,1.0\n");
    let mut args = train_args("d.csv", "y");
    args.extend(["--task", "regress"]);
    refused(
        dir.path(),
        &args,
        None,
        2,
        &[
            "d.csv line 4, column 'y'",
            "'n/a' is not a number",
            "--task classify",
        ],
    );
}

/// A categorical input with a different value in every row (as many categories as
/// rows, so more than any leaf could use): allowed, with advice to leave it out.
#[test]
fn m15_identifier_like_categorical_input() {
    let dir = tmp();
    let mut d = String::from("id,size,y\n");
    for i in 0..40 {
        d.push_str(&format!(
            "row{i},{},{}\n",
            i % 5,
            if i % 2 == 0 { "p" } else { "q" }
        ));
    }
    put(dir.path(), "d.csv", &d);
    let (_, se) = expect_code(&copse_in(dir.path(), &train_args("d.csv", "y"), None), 0);
    assert!(
        se.contains("input 'id' has a different value in each of its 40 rows")
            && se.contains("--ignore id"),
        "{se}"
    );
}

/// More categories than copse can code in one input (65535): refused before training,
/// with advice.
#[test]
fn m16_more_categories_than_supported() {
    let dir = tmp();
    let mut d = String::with_capacity(1 << 20);
    d.push_str("code,y\n");
    for i in 0..65_540 {
        d.push_str(&format!("k{i},{}\n", if i % 2 == 0 { "p" } else { "q" }));
    }
    put(dir.path(), "d.csv", &d);
    refused(
        dir.path(),
        &train_args("d.csv", "y"),
        None,
        2,
        &[
            "d.csv, column 'code'",
            "65540 different values",
            "--ignore code",
        ],
    );
}

#[test]
fn m17_invalid_utf8_in_a_cell() {
    train_refused(
        b"a,b,y\n1,x,p\n2,caf\xe9,q\n3,y,p\n".as_slice(),
        "y",
        &[
            "d.csv line 3, column 2 ('b')",
            "not valid UTF-8",
            "save the file with UTF-8",
        ],
    );
}

#[test]
fn m18_invalid_utf8_in_the_header() {
    train_refused(
        b"a,\xff\xfe,y\n1,2,p\n".as_slice(),
        "y",
        &["d.csv line 1, column 2", "not valid UTF-8"],
    );
}

/// A record after a quoted field holding a line break: messages count file lines.
#[test]
fn m19_line_numbers_after_an_embedded_line_break() {
    train_refused(
        "a,b,y\n1,\"two\nlines\",p\n3,x,q\n5,x\n",
        "y",
        &["d.csv line 5: found 2 fields"],
    );
}

/// A 1 MB cell in a numeric column: the message quotes it clipped, not whole.
#[test]
fn m20_very_long_field() {
    let dir = tmp();
    let long = "9".repeat(500_000) + "x" + &"9".repeat(500_000);
    put(dir.path(), "d.csv", format!("a,y\n1,p\n{long},q\n3,p\n"));
    let mut args = train_args("d.csv", "y");
    args.extend(["--numeric", "a"]);
    let se = refused(
        dir.path(),
        &args,
        None,
        2,
        &["d.csv line 3, column 'a'", "...' is not a finite number"],
    );
    assert!(se.len() < 1000, "message of {} bytes", se.len());
}

#[test]
fn m21_data_is_a_folder_or_absent() {
    let dir = tmp();
    std::fs::create_dir(dir.path().join("sub")).expect("mkdir");
    refused(
        dir.path(),
        &train_args("sub", "y"),
        None,
        2,
        &["sub is a folder", "give the path of a file"],
    );
    refused(
        dir.path(),
        &train_args("nothere.csv", "y"),
        None,
        2,
        &["cannot open nothere.csv: no such file", "check the path"],
    );
}

/// A semicolon file read with the default comma: the hint names the flag.
#[test]
fn m22_wrong_delimiter() {
    train_refused(
        "a;b;y\n1,5;2;p\n3;4;q\n",
        "y",
        &["d.csv has a single column", "--delimiter semicolon"],
    );
}

#[test]
fn m23_contradictory_column_roles() {
    let dir = tmp();
    put(dir.path(), "d.csv", "a,b,y\n1,2,p\n3,4,q\n");
    let mut args = train_args("d.csv", "y");
    args.extend(["--ignore", "c"]);
    refused(
        dir.path(),
        &args,
        None,
        2,
        &["--ignore names the column 'c'", "d.csv has no such column"],
    );
    let mut args = train_args("d.csv", "y");
    args.extend(["--categorical", "a", "--numeric", "a"]);
    refused(
        dir.path(),
        &args,
        None,
        2,
        &[
            "'a' is listed in both --categorical and --numeric",
            "keep it in one",
        ],
    );
}
