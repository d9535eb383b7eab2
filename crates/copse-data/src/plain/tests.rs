//! Lines read in pieces give what reading row by row gives: the same rows on the same
//! lines, the same blank lines, the same faults with the same messages, whatever the
//! pieces, the lines taken at a time and where quotes force row-by-row reading.
use super::*;
use crate::csv_input::Row;

fn input(text: &[u8]) -> CsvInput {
    CsvInput::from_reader(
        "t.csv".to_string(),
        Box::new(std::io::Cursor::new(text.to_vec())),
        None,
        Delimiter::Comma,
    )
    .expect("a header")
}

/// What reading found, in file order.
#[derive(Debug, PartialEq)]
enum Seen {
    Row(u64, Vec<String>),
    Fault(u64, String),
}

/// Every row row by row ([`CsvInput::read_row`]), and the blank lines passed over.
fn row_by_row(text: &[u8]) -> (Vec<Seen>, (u64, Vec<u64>)) {
    let mut inp = input(text);
    let mut rec = csv::StringRecord::new();
    let mut seen = Vec::new();
    loop {
        match inp.read_row(&mut rec).expect("readable") {
            Row::End => break,
            Row::Record => seen.push(Seen::Row(
                rec.position().expect("a line").line(),
                rec.iter().map(str::to_string).collect(),
            )),
            Row::Fault(line, e) => seen.push(Seen::Fault(line, e.message().to_string())),
        }
    }
    let (n, first) = inp.blank_lines();
    (seen, (n, first.to_vec()))
}

/// Every row through plain lines where they can be taken (`max_lines` at a time, in
/// `pieces` pieces), row by row elsewhere; blank lines counted as the caller must.
fn in_pieces(text: &[u8], max_lines: usize, pieces: usize) -> (Vec<Seen>, (u64, Vec<u64>)) {
    let mut inp = input(text);
    let shape = inp.shape();
    let mut block = LineBlock::new();
    let mut rec = csv::StringRecord::new();
    let mut seen = Vec::new();
    loop {
        match inp
            .take_plain_lines(max_lines, 64, &mut block)
            .expect("readable")
        {
            Taken::End => break,
            Taken::Lines => {
                let mut blanks = Vec::new();
                for piece in block.pieces(pieces) {
                    let mut lines = piece.reader(&shape);
                    while let Some(line) = lines.next(&mut rec) {
                        match line {
                            PlainLine::Record => seen.push(Seen::Row(
                                rec.position().expect("a line").line(),
                                rec.iter().map(str::to_string).collect(),
                            )),
                            PlainLine::Blank(at) => blanks.push(at),
                            PlainLine::Fault(at, e) => {
                                seen.push(Seen::Fault(at, e.message().to_string()));
                            }
                        }
                    }
                }
                blanks
                    .into_iter()
                    .for_each(|at| inp.pass_over_blank_line(at));
            }
            Taken::NotPlain => match inp.read_row(&mut rec).expect("readable") {
                Row::End => break,
                Row::Record => seen.push(Seen::Row(
                    rec.position().expect("a line").line(),
                    rec.iter().map(str::to_string).collect(),
                )),
                Row::Fault(line, e) => seen.push(Seen::Fault(line, e.message().to_string())),
            },
        }
    }
    let (n, first) = inp.blank_lines();
    (seen, (n, first.to_vec()))
}

/// Texts with every kind of line: CRLF and LF ends, blank lines, rows of the wrong
/// width, text that is not UTF-8, quoted fields with line breaks and delimiters, a CR
/// alone, a last line without a line end, a byte-order mark.
const TEXTS: [&[u8]; 9] = [
    b"a,b\n1,2\n3,4\n5,6\n",
    b"a,b\r\n1,2\r\n\r\n3,4\r\n5,6",
    b"a,b\n1,2\n\n\n3\n4,5,6\n7,8\n,\n9,10\n",
    b"a,b\n1,2\n3,\xff\xfe\n\xc3\xa9,4\n5,6\n",
    b"a,b\n1,2\n\"x\ny\",3\n4,5\n6,\"7,8\"\n9,10\n11,12\n13,14\n",
    b"a,b\n1,2\n3,4\r5,6\n7,8\n9,10\n",
    b"\xef\xbb\xbfa,b\n1,2\n3,4",
    b"a\n1\n\n2\n\r\n3\n",
    b"a,b\n1,2\n\"3,4\n5,6\n7,8\n9,10\n",
];

#[test]
fn pieces_read_every_text_as_row_by_row_does() {
    for text in TEXTS {
        let want = row_by_row(text);
        for max_lines in 1..8 {
            for pieces in 1..5 {
                let got = in_pieces(text, max_lines, pieces);
                assert_eq!(
                    got,
                    want,
                    "{:?}, {max_lines} lines at a time, {pieces} pieces",
                    String::from_utf8_lossy(text)
                );
            }
        }
    }
}

#[test]
fn faults_in_pieces_name_their_line_and_column() {
    let (seen, blank) = in_pieces(b"a,b\n1,2\n\n3\n4,\xff\n5,6\n", 10, 3);
    assert_eq!(blank, (1, vec![3]));
    assert_eq!(seen[0], Seen::Row(2, vec!["1".into(), "2".into()]));
    let Seen::Fault(4, width) = &seen[1] else {
        panic!("{seen:?}")
    };
    assert!(
        width.starts_with("t.csv line 4: found 1 fields but the header has 2"),
        "{width}"
    );
    let Seen::Fault(5, utf8) = &seen[2] else {
        panic!("{seen:?}")
    };
    assert!(
        utf8.starts_with("t.csv line 5, column 2 ('b'): the text is not valid UTF-8"),
        "{utf8}"
    );
    assert_eq!(seen[3], Seen::Row(6, vec!["5".into(), "6".into()]));
}

#[test]
fn quoted_line_breaks_are_never_taken_as_plain_lines() {
    // The quote opens on line 2: those lines are read row by row, the field keeps its
    // line break, and the line after the record is plain again.
    let mut inp = input(b"k,v\n\"a\nb\",1\n2,3\n");
    let mut block = LineBlock::new();
    let got = inp.take_plain_lines(10, 1 << 20, &mut block);
    assert_eq!(got.expect("readable"), Taken::NotPlain);
    let mut rec = csv::StringRecord::new();
    assert!(matches!(inp.read_row(&mut rec), Ok(Row::Record)));
    assert_eq!(&rec[0], "a\nb");
    assert_eq!(rec.position().expect("a line").line(), 2);
    // The record read, the rest of the refused text is read row by row too.
    assert_eq!(
        inp.take_plain_lines(10, 1 << 20, &mut block)
            .expect("readable"),
        Taken::NotPlain
    );
    assert!(matches!(inp.read_row(&mut rec), Ok(Row::Record)));
    assert_eq!((&rec[0], rec.position().expect("a line").line()), ("2", 4));
    assert_eq!(
        inp.take_plain_lines(10, 1 << 20, &mut block)
            .expect("readable"),
        Taken::End
    );
}

#[test]
fn crlf_lines_cut_into_pieces_keep_their_line_numbers() {
    let mut text = b"a,b\r\n".to_vec();
    for i in 0..100 {
        text.extend_from_slice(format!("{i},{}\r\n", i * 2).as_bytes());
    }
    let mut inp = input(&text);
    let mut block = LineBlock::new();
    assert_eq!(
        inp.take_plain_lines(1000, 1 << 20, &mut block)
            .expect("readable"),
        Taken::Lines
    );
    let shape = inp.shape();
    let pieces = block.pieces(7);
    assert_eq!(pieces.iter().map(Piece::lines).sum::<usize>(), 100);
    let mut rec = csv::StringRecord::new();
    let mut next = 0;
    for piece in pieces {
        assert_eq!(piece.first_index(), next);
        let mut lines = piece.reader(&shape);
        while let Some(line) = lines.next(&mut rec) {
            assert!(matches!(line, PlainLine::Record));
            assert_eq!(rec.position().expect("a line").line(), next as u64 + 2);
            assert_eq!(&rec[1], (next * 2).to_string());
            next += 1;
        }
    }
    assert_eq!(next, 100);
}
