//! Checks of the CSV reader: blank lines, unclosed quotes, the size cap, quoted line breaks.
use super::*;

fn input(text: &[u8]) -> Result<CsvInput> {
    CsvInput::from_reader(
        "t.csv".to_string(),
        Box::new(std::io::Cursor::new(text.to_vec())),
        None,
        Delimiter::Comma,
    )
}

/// Every row read, as (line, first field) or the fault's line and message.
fn rows(text: &[u8]) -> Vec<std::result::Result<(u64, String), (u64, String)>> {
    let mut inp = input(text).unwrap();
    let mut rec = csv::StringRecord::new();
    let mut got = Vec::new();
    loop {
        match inp.read_row(&mut rec).unwrap() {
            Row::End => return got,
            Row::Record => got.push(Ok((rec.position().unwrap().line(), rec[0].to_string()))),
            Row::Fault(line, e) => got.push(Err((line, e.message().to_string()))),
        }
    }
}

#[test]
fn blank_lines_are_missing_values_in_one_column_and_passed_over_in_several() {
    let got = rows(b"a\n0.1\n\n0.9\n");
    let want = [(2, "0.1"), (3, ""), (4, "0.9")];
    assert_eq!(got, want.map(|(l, t)| Ok((l, t.to_string()))));
    let text = b"a,b\n1,2\n\n\r\n3,4\n5\n";
    let got = rows(text);
    assert_eq!(got[0], Ok((2, "1".to_string())));
    assert_eq!(got[1], Ok((5, "3".to_string())));
    let Err((6, msg)) = &got[2] else {
        panic!("{got:?}")
    };
    assert!(msg.starts_with("t.csv line 6: found 1 fields"), "{msg}");
    let mut inp = input(text).unwrap();
    let mut rec = csv::StringRecord::new();
    while !matches!(inp.read_row(&mut rec).unwrap(), Row::End) {}
    assert_eq!(inp.blank_lines(), (2, &[3u64, 4][..]));
    let note = inp.blank_lines_note().unwrap();
    assert!(
        note.contains("2 blank lines of t.csv were passed over") && note.contains("lines 3, 4"),
        "{note}"
    );
}

/// A stray quote at the start of line 3: the fault names line 3, and every later
/// line is still read as a row.
#[test]
fn an_unclosed_quote_is_named_and_reading_goes_on_at_the_next_line() {
    let got = rows(b"a,b\n1,2\n\"3,4\n5,6\n7,8\n");
    assert_eq!(got[0], Ok((2, "1".to_string())));
    let Err((3, msg)) = &got[1] else {
        panic!("{got:?}")
    };
    assert!(
        msg.contains("t.csv line 3: a quoted field that starts on this line is never closed"),
        "{msg}"
    );
    assert_eq!(
        got[2..],
        [Ok((4, "5".to_string())), Ok((5, "7".to_string()))]
    );
    let mut inp = input(b"a,b\n1,2\n\"3,4\n5,6\n").unwrap();
    let mut rec = csv::StringRecord::new();
    assert!(inp.read(&mut rec).unwrap());
    let e = inp.read(&mut rec).unwrap_err();
    assert!(
        e.message().starts_with("t.csv line 3: a quoted field"),
        "{e}"
    );
}

#[test]
fn input_without_line_ends_is_refused_at_the_size_cap() {
    let mut text = b"a,b\n".to_vec();
    text.resize(text.len() + MAX_RECORD_BYTES + 1, b'y');
    let mut inp = input(&text).unwrap();
    let mut rec = csv::StringRecord::new();
    let e = inp.read_row(&mut rec).unwrap_err();
    assert!(
        e.message()
            .starts_with("t.csv line 2: the row is longer than 1 MiB"),
        "{e}"
    );
    let e = input(&text[4..]).err().unwrap();
    assert!(
        e.message()
            .starts_with("t.csv line 1: the row is longer than 1 MiB"),
        "{e}"
    );
}

#[test]
fn quoted_line_breaks_are_kept_exactly() {
    let mut inp = input(b"k,v\r\n\"\r\n4\",5\r\n").unwrap();
    let mut rec = csv::StringRecord::new();
    assert!(inp.read(&mut rec).unwrap());
    assert_eq!(&rec[0], "\r\n4");
    assert!(!inp.read(&mut rec).unwrap());
}
