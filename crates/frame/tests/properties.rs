//! Properties of the reader on generated input.

use frame::{
    read_csv_bytes, read_csv_bytes_chunked, read_csv_bytes_sequential, ColumnData, Frame,
    ReadOptions,
};
use proptest::prelude::*;

mod common;

/// The same answer from one pass and from chunks of any size: equal frames
/// or the same error.
fn same_result(bytes: &[u8], chunk: usize) {
    let opts = ReadOptions::default();
    let seq = read_csv_bytes_sequential(bytes, &opts);
    let par = read_csv_bytes_chunked(bytes, &opts, chunk);
    let auto = read_csv_bytes(bytes, &opts);
    match (&seq, &par, &auto) {
        (Ok(a), Ok(b), Ok(c)) => {
            common::assert_frames_equal(a, b);
            common::assert_frames_equal(a, c);
        }
        (Err(a), Err(b), Err(c)) => {
            assert_eq!(a, b);
            assert_eq!(a, c);
            // Every error prints a sentence.
            assert!(!a.to_string().is_empty());
        }
        _ => panic!(
            "paths disagree: {:?} / {:?} / {:?}",
            seq.is_ok(),
            par.is_ok(),
            auto.is_ok()
        ),
    }
}

fn csv_like_byte() -> impl Strategy<Value = u8> {
    prop_oneof![
        4 => prop::sample::select(b"a1,\"\n\r .-9eN".to_vec()),
        1 => any::<u8>(),
    ]
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 400, ..ProptestConfig::default() })]

    #[test]
    fn never_panics_on_arbitrary_bytes(bytes in prop::collection::vec(any::<u8>(), 0..300)) {
        let _ = read_csv_bytes(&bytes, &ReadOptions::default());
        let _ = read_csv_bytes_chunked(&bytes, &ReadOptions::default(), 3);
    }

    #[test]
    fn chunked_equals_one_pass_on_csv_like_bytes(
        bytes in prop::collection::vec(csv_like_byte(), 0..400),
        chunk in 1usize..40,
    ) {
        same_result(&bytes, chunk);
    }

    #[test]
    fn written_table_reads_back(table in table(), seed in any::<u64>(), chunk in 1usize..64) {
        let (bytes, lines) = write_csv(&table, seed);
        let opts = ReadOptions::default();
        for frame in [
            read_csv_bytes(&bytes, &opts).unwrap(),
            read_csv_bytes_chunked(&bytes, &opts, chunk).unwrap(),
        ] {
            check_equal(&table, &frame, &lines);
        }
    }
}

#[derive(Clone, Debug)]
enum Col {
    Num(Vec<Option<f64>>),
    Text(Vec<Option<String>>),
}

#[derive(Clone, Debug)]
struct Table {
    names: Vec<String>,
    cols: Vec<Col>,
    rows: usize,
}

fn number() -> impl Strategy<Value = f64> {
    prop_oneof![
        (-1000i64..1000).prop_map(|i| i as f64),
        (-1e6f64..1e6),
        (-1e-3f64..1e-3),
        prop::num::f64::NORMAL,
    ]
}

/// Texts that are not numbers or missing tokens and have no blanks at the ends
/// (the reader trims those), but do hold commas, quotes and line breaks.
fn text() -> impl Strategy<Value = String> {
    "[xyz][a-z ,\"\n\r]{0,8}[a-z]".prop_map(|s| s.replace('\r', "\r\n"))
}

fn table() -> impl Strategy<Value = Table> {
    (1usize..5, 1usize..25).prop_flat_map(|(ncols, rows)| {
        let col = prop_oneof![
            prop::collection::vec(prop::option::weighted(0.9, number()), rows).prop_map(Col::Num),
            (
                text(),
                prop::collection::vec(prop::option::weighted(0.85, text()), rows)
            )
                .prop_map(|(first, mut v)| {
                    // At least one text, or the column would be all missing
                    // and so numeric.
                    v[0] = Some(first);
                    Col::Text(v)
                }),
        ];
        prop::collection::vec(col, ncols).prop_map(move |cols| Table {
            names: (0..cols.len()).map(|i| format!("col {i}")).collect(),
            cols,
            rows,
        })
    })
}

/// CSV text of the table, quoting where needed and at random elsewhere, with
/// random CRLF line ends; also the 1-based line each row starts on.
fn write_csv(t: &Table, seed: u64) -> (Vec<u8>, Vec<usize>) {
    let mut state = seed | 1;
    let mut coin = move || {
        state ^= state << 13;
        state ^= state >> 7;
        state ^= state << 17;
        state & 1 == 1
    };
    let eol = if coin() { "\r\n" } else { "\n" };
    let mut out = String::new();
    let quote = |s: &str, force: bool| {
        if force || s.contains([',', '"', '\n', '\r']) {
            format!("\"{}\"", s.replace('"', "\"\""))
        } else {
            s.to_string()
        }
    };
    let header: Vec<String> = t.names.iter().map(|n| quote(n, coin())).collect();
    out.push_str(&header.join(","));
    out.push_str(eol);
    let mut lines = Vec::new();
    let mut line = 2;
    for r in 0..t.rows {
        lines.push(line);
        let fields: Vec<String> = t
            .cols
            .iter()
            .map(|c| match c {
                // A lone empty field would be a blank line, which is skipped.
                Col::Num(v) => match v[r] {
                    Some(x) => quote(&format!("{x}"), coin()),
                    None if t.cols.len() == 1 || coin() => "NA".into(),
                    None => String::new(),
                },
                Col::Text(v) => match &v[r] {
                    Some(s) => quote(s, coin()),
                    None => "NA".into(),
                },
            })
            .collect();
        let rec = fields.join(",");
        line += rec.matches('\n').count() + 1;
        out.push_str(&rec);
        if r + 1 < t.rows || coin() {
            out.push_str(eol);
        }
    }
    (out.into_bytes(), lines)
}

fn check_equal(t: &Table, f: &Frame, lines: &[usize]) {
    assert_eq!(f.n_rows(), t.rows);
    let names: Vec<&str> = f.names().collect();
    assert_eq!(
        names,
        t.names.iter().map(String::as_str).collect::<Vec<_>>()
    );
    for (c, col) in t.cols.iter().zip(f.columns()) {
        match (c, &col.data) {
            (Col::Num(want), ColumnData::Numeric(got)) => {
                for (r, w) in want.iter().enumerate() {
                    match w {
                        Some(x) => assert_eq!(got.values[r], *x),
                        None => assert!(got.values[r].is_nan() && got.missing.is_set(r)),
                    }
                }
            }
            (Col::Text(want), ColumnData::Categorical(_)) => {
                for (r, w) in want.iter().enumerate() {
                    assert_eq!(&col.text_at(r), w);
                }
            }
            _ => panic!("column {} has the wrong type", col.name),
        }
    }
    for (r, &l) in lines.iter().enumerate() {
        assert_eq!(f.line_of_row(r), l, "line of row {r}");
    }
}

#[test]
fn plain_decimal_agrees_with_fast_float() {
    // The hand-written path for plain decimals must give exactly what the
    // full parser gives; strings from the shapes it accepts.
    let mut state = 0x1234_5678_9abc_def1u64;
    for _ in 0..200_000 {
        state ^= state << 13;
        state ^= state >> 7;
        state ^= state << 17;
        let digits = (state % 19 + 1) as usize;
        let dot = (state >> 8) as usize % (digits + 2);
        let mut s = String::new();
        if (state >> 20) & 1 == 1 {
            s.push('-');
        }
        let mut d = state >> 24;
        for i in 0..digits {
            if i == dot {
                s.push('.');
            }
            s.push((b'0' + (d % 10) as u8) as char);
            d = (d / 10) ^ (state >> (i % 40));
        }
        let one = read_csv_bytes(format!("x\n{s}\n").as_bytes(), &ReadOptions::default()).unwrap();
        let got = one.columns()[0].as_numeric().unwrap().values[0];
        let want: f64 = fast_float2::parse(&s).unwrap();
        assert_eq!(got.to_bits(), want.to_bits(), "{s}");
    }
}
