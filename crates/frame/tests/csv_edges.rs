//! Edge cases of the CSV reader, each with the exact message a user would see.

use frame::{
    read_csv, read_csv_bytes, read_csv_bytes_chunked, read_csv_bytes_sequential, read_header,
    ColumnData, Frame, ReadError, ReadOptions, TextInNumbers, MISSING_CODE,
};
use std::path::Path;

mod common;
use common::assert_frames_equal;

fn read(s: &[u8]) -> Result<Frame, ReadError> {
    read_csv_bytes(s, &ReadOptions::default())
}

fn nums(f: &Frame, name: &str) -> Vec<f64> {
    f.column(name).unwrap().as_numeric().unwrap().values.clone()
}

fn texts(f: &Frame, name: &str) -> Vec<Option<String>> {
    let c = f.column(name).unwrap();
    (0..f.n_rows()).map(|r| c.text_at(r)).collect()
}

fn err_text(s: &[u8]) -> String {
    read(s).unwrap_err().to_string()
}

fn temp_file(name: &str, bytes: &[u8]) -> std::path::PathBuf {
    let dir = std::env::temp_dir().join(format!("slopewise-frame-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let p = dir.join(name);
    std::fs::write(&p, bytes).unwrap();
    p
}

#[test]
fn bom_crlf_and_header_spaces() {
    let f = read(b"\xEF\xBB\xBFteam id, team size ,score\r\n1, 4 ,2.5\r\n2,5,-1e3\r\n").unwrap();
    let names: Vec<&str> = f.names().collect();
    assert_eq!(names, vec!["team id", "team size", "score"]);
    assert_eq!(nums(&f, "team size"), vec![4.0, 5.0]);
    assert_eq!(nums(&f, "score"), vec![2.5, -1000.0]);
    assert_eq!(f.line_of_row(1), 3);
}

#[test]
fn no_trailing_newline_and_blank_lines() {
    let f = read(b"a,b\n1,2\n\n3,4").unwrap();
    assert_eq!(nums(&f, "a"), vec![1.0, 3.0]);
    assert_eq!(nums(&f, "b"), vec![2.0, 4.0]);
    // The blank line moves the second row to line 4.
    assert_eq!(f.line_of_row(0), 2);
    assert_eq!(f.line_of_row(1), 4);
}

#[test]
fn quoted_commas_quotes_and_newlines() {
    let data = b"id,note,x\n1,\"a, b\",1\n2,\"she said \"\"hi\"\"\",2\n3,\"two\nlines\nhere\",3\n4,plain,4\n5,\"\",5\n";
    let f = read(data).unwrap();
    assert_eq!(
        texts(&f, "note"),
        vec![
            Some("a, b".to_string()),
            Some("she said \"hi\"".to_string()),
            Some("two\nlines\nhere".to_string()),
            Some("plain".to_string()),
            None,
        ]
    );
    assert_eq!(nums(&f, "x"), vec![1.0, 2.0, 3.0, 4.0, 5.0]);
    let lines: Vec<usize> = (0..5).map(|r| f.line_of_row(r)).collect();
    assert_eq!(lines, vec![2, 3, 4, 7, 8]);
}

#[test]
fn quoted_numbers_are_numbers() {
    let f = read(b"a\n\"1.5\"\n\" 2 \"\n").unwrap();
    assert_eq!(nums(&f, "a"), vec![1.5, 2.0]);
}

#[test]
fn ragged_row_names_file_line() {
    assert_eq!(
        err_text(b"a,b,c\n1,2,3\n4,5\n"),
        "the data, line 3: 2 fields where the header has 3"
    );
    assert_eq!(
        err_text(b"a,b\n1,2\n3,4,5\n"),
        "the data, line 3: 3 fields where the header has 2"
    );
    // After a quoted line break the physical line is the one reported.
    assert_eq!(
        err_text(b"a,b\n\"x\ny\",2\n1\n"),
        "the data, line 4: 1 field where the header has 2"
    );
    let p = temp_file("teams.csv", b"a,b,c,d,e,f,g\n1,2,3,4,5,6\n");
    let e = read_csv(&p, &ReadOptions::default()).unwrap_err();
    assert_eq!(
        e.to_string(),
        format!("{}, line 2: 6 fields where the header has 7", p.display())
    );
    assert!(matches!(
        e,
        ReadError::Ragged {
            line: 2,
            expected: 7,
            found: 6,
            ..
        }
    ));
}

#[test]
fn empty_and_header_only() {
    assert_eq!(read(b"").unwrap_err(), ReadError::Empty { path: None });
    assert_eq!(
        err_text(b"\xEF\xBB\xBF\n\r\n"),
        "the data is empty: there is no header line"
    );
    for data in [&b"a,b"[..], b"a,b\n", b"a,b\r\n\n"] {
        let f = read(data).unwrap();
        assert_eq!(f.n_rows(), 0);
        assert_eq!(f.columns().len(), 2);
        assert!(f.columns().iter().all(|c| c.is_numeric()));
    }
}

#[test]
fn duplicate_column() {
    assert_eq!(
        err_text(b"team,score,team\n1,2,3\n"),
        "the data, header: columns 1 and 3 are both named `team`"
    );
    assert_eq!(
        read(b"a, a\n").unwrap_err(),
        ReadError::DuplicateColumn {
            path: None,
            name: "a".into(),
            first: 1,
            second: 2
        }
    );
}

#[test]
fn all_missing_column_is_numeric() {
    let f = read(b"a,b\n1,\n2,NA\n3, NaN \n").unwrap();
    let b = f.column("b").unwrap();
    assert!(b.is_numeric());
    assert_eq!(b.n_missing(), 3);
    assert!(nums(&f, "b").iter().all(|v| v.is_nan()));
    assert!((0..3).all(|r| b.is_missing(r)));
    assert!(!f.column("a").unwrap().is_missing(0));
}

#[test]
fn custom_missing_tokens() {
    let opts = ReadOptions {
        missing_tokens: vec!["-999".into(), " . ".into()],
    };
    let f = read_csv_bytes(b"x,g\n1,a\n-999,.\n.,NA\n", &opts).unwrap();
    let x = nums(&f, "x");
    assert_eq!(x[0], 1.0);
    assert!(x[1].is_nan() && x[2].is_nan());
    assert_eq!(f.column("x").unwrap().n_missing(), 2);
    // "NA" is not missing under these options, so `g` holds it as a level.
    assert_eq!(
        texts(&f, "g"),
        vec![Some("a".into()), None, Some("NA".into())]
    );
    // With the defaults an empty field is missing, with these it is text.
    let f = read_csv_bytes(b"x\n1\n\"\"\n", &opts).unwrap();
    assert!(!f.column("x").unwrap().is_numeric());
}

#[test]
fn text_in_numeric_column_names_first_row() {
    let mut data = b"id,tenure\n".to_vec();
    for i in 0..20 {
        data.extend_from_slice(format!("{i},{}\n", i as f64 * 0.5).as_bytes());
    }
    data.extend_from_slice(b"20,n/a\n21,3\n22,unknown\n");
    let f = read(&data).unwrap();
    let ColumnData::Categorical(c) = &f.column("tenure").unwrap().data else {
        panic!("tenure should be categorical");
    };
    assert_eq!(
        c.text_in_numbers,
        Some(TextInNumbers {
            row: 20,
            value: "n/a".into(),
            numeric_count: 21
        })
    );
    assert_eq!(f.line_of_row(20), 22);
    // Levels keep the texts as written, in order of first appearance.
    assert_eq!(&c.levels[..3], &["0", "0.5", "1"]);
    // 20 numbers (3 among them), "n/a", "unknown".
    assert_eq!(c.levels.len(), 22);
    // A column of words is plain text, not "numbers with text".
    let f = read(b"g\nnorth\nsouth\n3\n").unwrap();
    let c = f.column("g").unwrap().as_categorical().unwrap();
    assert_eq!(c.text_in_numbers, None);
    assert_eq!(c.levels, vec!["north", "south", "3"]);
    assert_eq!(c.codes, vec![0, 1, 2]);
}

#[test]
fn inf_and_nan_words_are_text() {
    let f = read(b"x\n1\n2\ninf\n").unwrap();
    let c = f.column("x").unwrap().as_categorical().unwrap();
    assert_eq!(c.text_in_numbers.as_ref().map(|t| t.row), Some(2));
}

#[test]
fn invalid_utf8_names_line() {
    assert_eq!(
        err_text(b"a,b\n1,2\n3,\xff\n"),
        "the data, line 3: the bytes are not UTF-8 text (save the file as UTF-8)"
    );
    assert_eq!(
        read(b"a,\xc3\n").unwrap_err(),
        ReadError::InvalidUtf8 {
            path: None,
            line: 1
        }
    );
}

#[test]
fn unterminated_quote_names_opening_line() {
    assert_eq!(
        err_text(b"a,b\n1,2\n3,\"open\n4,5\n6,7\n"),
        "the data, line 3: a quoted field opens here and is never closed"
    );
    assert_eq!(
        read(b"\"a,b\n").unwrap_err(),
        ReadError::UnterminatedQuote {
            path: None,
            line: 1
        }
    );
}

#[test]
fn io_error_names_file() {
    let p = Path::new("/nonexistent/slopewise/teams.csv");
    let e = read_csv(p, &ReadOptions::default()).unwrap_err();
    assert!(matches!(e, ReadError::Io { .. }));
    assert!(
        e.to_string()
            .starts_with("/nonexistent/slopewise/teams.csv cannot be read: "),
        "{e}"
    );
}

#[test]
fn header_alone_is_read_from_file() {
    let p = temp_file("h.csv", b"\xEF\xBB\xBF\"team, id\",year,score\n1,2,3\n");
    assert_eq!(read_header(&p).unwrap(), vec!["team, id", "year", "score"]);
    // A header longer than the first read still comes out whole.
    let long: Vec<String> = (0..5000).map(|i| format!("column_{i}")).collect();
    let p = temp_file("wide.csv", format!("{}\n1\n", long.join(",")).as_bytes());
    assert_eq!(read_header(&p).unwrap(), long);
    let p = temp_file("empty.csv", b"");
    assert!(matches!(read_header(&p), Err(ReadError::Empty { .. })));
}

#[test]
fn categorical_codes_missing_and_group_ids() {
    let f = read(b"team,x\nb,1\na,2\n,3\nb,4\n").unwrap();
    let c = f.column("team").unwrap().as_categorical().unwrap();
    assert_eq!(c.codes, vec![0, 1, MISSING_CODE, 0]);
    assert_eq!(c.levels, vec!["b", "a"]);
    let g = frame::GroupIndex::from_column(f.column("team").unwrap());
    assert_eq!(g.sizes, vec![2, 1]);
}

/// A file with quoted fields, line breaks inside quotes, blank lines, a text
/// column that turns up late in a numeric-looking column, and CRLF, parsed in
/// chunks of every small size: the chunked parallel path must agree with the
/// single pass on every value and every line number.
#[test]
fn parallel_equals_sequential_on_quoted_file() {
    let mut data = b"id,name,x,mixed\r\n".to_vec();
    for i in 0..400 {
        let name = match i % 7 {
            0 => format!("\"multi\nline {i}\""),
            1 => format!("\"comma, {}\"", i % 5),
            2 => "\"say \"\"x\"\"\"".to_string(),
            3 => String::new(),
            _ => format!("plain{}", i % 3),
        };
        let mixed = if i == 333 {
            "oops".to_string()
        } else {
            format!("{}", i % 11)
        };
        data.extend_from_slice(format!("{i},{name},{}.25,{mixed}\r\n", i % 13).as_bytes());
        if i % 50 == 0 {
            data.extend_from_slice(b"\r\n");
        }
    }
    let opts = ReadOptions::default();
    let seq = read_csv_bytes_sequential(&data, &opts).unwrap();
    for chunk in [1, 7, 64, 333, 1000, 4096] {
        let par = read_csv_bytes_chunked(&data, &opts, chunk).unwrap();
        assert_frames_equal(&seq, &par);
    }
    let mixed = seq.column("mixed").unwrap().as_categorical().unwrap();
    assert_eq!(mixed.text_in_numbers.as_ref().unwrap().row, 333);
}

/// A stray quote in the middle of an unquoted field makes the quote count lie
/// about where fields end; the reader must notice and still match one pass.
#[test]
fn stray_quote_falls_back_to_one_pass() {
    let mut data = b"a,b\n".to_vec();
    for i in 0..300 {
        if i == 5 {
            data.extend_from_slice(b"5,in\"ch\n");
        } else {
            // Every fourth field holds a line break: with the count thrown off
            // by one, that break looks like a record end.
            let q = if i % 4 == 0 {
                "\"q\nx\"".to_string()
            } else {
                format!("\"q{}\"", i % 4)
            };
            data.extend_from_slice(format!("{i},{q}\n").as_bytes());
        }
    }
    let opts = ReadOptions::default();
    let seq = read_csv_bytes_sequential(&data, &opts).unwrap();
    assert_eq!(seq.n_rows(), 300);
    for chunk in [3, 50, 200] {
        assert_frames_equal(&seq, &read_csv_bytes_chunked(&data, &opts, chunk).unwrap());
    }
    // Errors agree as well, wherever the chunks fall.
    let mut bad = data.clone();
    bad.extend_from_slice(b"1,2,3\n");
    let e = read_csv_bytes_sequential(&bad, &opts).unwrap_err();
    // 1 header line, 300 rows, 75 of them on two lines.
    assert_eq!(e.line(), Some(377));
    for chunk in [3, 50, 200] {
        assert_eq!(read_csv_bytes_chunked(&bad, &opts, chunk).unwrap_err(), e);
    }
}
