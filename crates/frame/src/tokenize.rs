//! Splitting bytes into records and fields.
//!
//! Two tokenizers share one [`Sink`]: a line-at-a-time one for bytes without a
//! single quote character (most data files, and the speed that matters), and a
//! quote-aware state machine for the rest. Both start at a record boundary and
//! count lines relative to their start, so a chunk of a file can be tokenized
//! without knowing what came before it.

use memchr::{memchr, memchr2, memchr_iter};

/// Receives the fields of each record.
pub(crate) trait Sink {
    /// Field `col` (always below the column count) of the current record,
    /// surrounding blanks removed.
    fn field(&mut self, col: usize, bytes: &[u8]);
    /// The current record is complete; `line` is the 0-based line, counted from
    /// the start of the tokenized bytes, on which it began. `false` stops.
    fn end_record(&mut self, line: usize) -> bool;
}

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum TokError {
    /// Record starting on `line` (relative) has `found` fields.
    Ragged { line: usize, found: usize },
    /// A quoted field opened on `line` (relative) runs to the end of the bytes.
    Unterminated { line: usize },
}

/// Where tokenizing stopped: byte position and lines passed.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) struct End {
    pub pos: usize,
    pub lines: usize,
}

/// How many fields a record must have; `None` accepts any (the header).
pub(crate) type Width = Option<usize>;

/// Spaces, tabs and carriage returns around a field are layout, not data; the
/// carriage return also covers CRLF line ends.
#[inline]
pub(crate) fn trim(b: &[u8]) -> &[u8] {
    let mut s = 0;
    let mut e = b.len();
    while s < e && matches!(b[s], b' ' | b'\t' | b'\r') {
        s += 1;
    }
    while e > s && matches!(b[e - 1], b' ' | b'\t' | b'\r') {
        e -= 1;
    }
    &b[s..e]
}

#[inline]
fn is_blank_line(rec: &[u8]) -> bool {
    rec.is_empty() || rec == b"\r"
}

#[inline]
fn check_width(width: Width, found: usize, line: usize) -> Result<(), TokError> {
    match width {
        Some(n) if n != found => Err(TokError::Ragged { line, found }),
        _ => Ok(()),
    }
}

/// Tokenize bytes known to hold no `"`: every newline ends a record.
pub(crate) fn tokenize_plain<S: Sink>(
    buf: &[u8],
    width: Width,
    sink: &mut S,
) -> Result<End, TokError> {
    let limit = width.unwrap_or(usize::MAX);
    let mut pos = 0;
    let mut line = 0;
    while pos < buf.len() {
        let end = memchr(b'\n', &buf[pos..]).map_or(buf.len(), |i| pos + i);
        let rec = &buf[pos..end];
        let rec_line = line;
        pos = (end + 1).min(buf.len());
        if end < buf.len() {
            line += 1;
        }
        if is_blank_line(rec) {
            continue;
        }
        let col = split_plain(rec, limit, sink);
        check_width(width, col, rec_line)?;
        if !sink.end_record(rec_line) {
            break;
        }
    }
    Ok(End { pos, lines: line })
}

/// Tokenize with quotes: a field that starts with `"` runs to the next lone
/// `"` (a doubled one is a literal quote) and may hold commas and line breaks;
/// characters after the closing quote up to the delimiter are kept as written.
pub(crate) fn tokenize_quoted<S: Sink>(
    buf: &[u8],
    width: Width,
    sink: &mut S,
) -> Result<End, TokError> {
    let limit = width.unwrap_or(usize::MAX);
    let len = buf.len();
    let mut pos = 0;
    let mut line = 0;
    let mut scratch: Vec<u8> = Vec::new();
    while pos < len {
        let rec_line = line;
        if buf[pos] == b'\n' {
            pos += 1;
            line += 1;
            continue;
        }
        if buf[pos] == b'\r' && (pos + 1 == len || buf[pos + 1] == b'\n') {
            pos = (pos + 2).min(len);
            line += 1;
            continue;
        }
        // Most records of a quoted file hold no quote: split those like the
        // plain tokenizer does, and run the state machine on the others.
        let eol = memchr(b'\n', &buf[pos..]).map_or(len, |i| pos + i);
        let col = if memchr(b'"', &buf[pos..eol]).is_none() {
            let col = split_plain(&buf[pos..eol], limit, sink);
            pos = (eol + 1).min(len);
            if eol < len {
                line += 1;
            }
            col
        } else {
            quoted_record(buf, &mut pos, &mut line, limit, &mut scratch, sink)?
        };
        check_width(width, col, rec_line)?;
        if !sink.end_record(rec_line) {
            break;
        }
    }
    Ok(End { pos, lines: line })
}

/// Bit 7 of each byte of the result is set where `w` holds a comma: eight
/// bytes per step without the per-call cost of a vector search, which loses
/// on fields of a few bytes.
#[inline]
fn comma_bits(w: u64) -> u64 {
    const LO7: u64 = 0x7f7f_7f7f_7f7f_7f7f;
    let x = w ^ 0x2c2c_2c2c_2c2c_2c2c;
    // Exact zero-byte test (no false positives from borrows).
    !(((x & LO7) + LO7) | x | LO7)
}

/// Fields of one record without quotes; returns how many there were.
#[inline]
fn split_plain<S: Sink>(rec: &[u8], limit: usize, sink: &mut S) -> usize {
    let mut col = 0;
    let mut start = 0;
    let mut words = rec.chunks_exact(8);
    let mut base = 0;
    for word in &mut words {
        let mut bytes = [0u8; 8];
        bytes.copy_from_slice(word);
        let mut m = comma_bits(u64::from_le_bytes(bytes));
        while m != 0 {
            let i = base + (m.trailing_zeros() / 8) as usize;
            if col < limit {
                sink.field(col, trim(&rec[start..i]));
            }
            col += 1;
            start = i + 1;
            m &= m - 1;
        }
        base += 8;
    }
    for (j, &b) in words.remainder().iter().enumerate() {
        if b == b',' {
            let i = base + j;
            if col < limit {
                sink.field(col, trim(&rec[start..i]));
            }
            col += 1;
            start = i + 1;
        }
    }
    if col < limit {
        sink.field(col, trim(&rec[start..]));
    }
    col + 1
}

/// One record that holds a quote, from `*pos` at its start; advances `*pos`
/// past its end and `*line` by the newlines passed. Returns the field count.
fn quoted_record<S: Sink>(
    buf: &[u8],
    pos: &mut usize,
    line: &mut usize,
    limit: usize,
    scratch: &mut Vec<u8>,
    sink: &mut S,
) -> Result<usize, TokError> {
    let len = buf.len();
    let mut col = 0;
    loop {
        // At the start of a field; `*pos <= len`.
        if *pos < len && buf[*pos] == b'"' {
            let open_line = *line;
            *pos += 1;
            scratch.clear();
            loop {
                let Some(i) = memchr(b'"', &buf[*pos..]) else {
                    return Err(TokError::Unterminated { line: open_line });
                };
                let seg = &buf[*pos..*pos + i];
                *line += memchr_iter(b'\n', seg).count();
                scratch.extend_from_slice(seg);
                *pos += i + 1;
                if *pos < len && buf[*pos] == b'"' {
                    scratch.push(b'"');
                    *pos += 1;
                } else {
                    break;
                }
            }
            let end = memchr2(b',', b'\n', &buf[*pos..]).map_or(len, |i| *pos + i);
            scratch.extend_from_slice(&buf[*pos..end]);
            *pos = end;
            if col < limit {
                sink.field(col, trim(scratch));
            }
        } else {
            let end = memchr2(b',', b'\n', &buf[*pos..]).map_or(len, |i| *pos + i);
            if col < limit {
                sink.field(col, trim(&buf[*pos..end]));
            }
            *pos = end;
        }
        col += 1;
        if *pos >= len {
            return Ok(col);
        }
        if buf[*pos] == b',' {
            *pos += 1;
            continue;
        }
        // A newline ends the record.
        *pos += 1;
        *line += 1;
        return Ok(col);
    }
}

/// Either tokenizer, by whether the bytes hold a quote.
pub(crate) fn tokenize<S: Sink>(
    buf: &[u8],
    width: Width,
    has_quotes: bool,
    sink: &mut S,
) -> Result<End, TokError> {
    if has_quotes {
        tokenize_quoted(buf, width, sink)
    } else {
        tokenize_plain(buf, width, sink)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[derive(Default)]
    struct Collect {
        rows: Vec<(usize, Vec<String>)>,
        cur: Vec<String>,
    }
    impl Sink for Collect {
        fn field(&mut self, _col: usize, bytes: &[u8]) {
            self.cur.push(String::from_utf8_lossy(bytes).into_owned());
        }
        fn end_record(&mut self, line: usize) -> bool {
            self.rows.push((line, std::mem::take(&mut self.cur)));
            true
        }
    }

    fn both(input: &str, width: Width) -> Vec<(usize, Vec<String>)> {
        let mut a = Collect::default();
        let mut b = Collect::default();
        let ea = tokenize_plain(input.as_bytes(), width, &mut a).unwrap();
        let eb = tokenize_quoted(input.as_bytes(), width, &mut b).unwrap();
        assert_eq!(a.rows, b.rows);
        assert_eq!(ea, eb);
        a.rows
    }

    #[test]
    fn plain_and_quoted_agree_without_quotes() {
        let rows = both("a, b ,c\r\n\r\n1,,3\n\n4,5,6", Some(3));
        assert_eq!(
            rows,
            vec![
                (0, vec!["a".into(), "b".into(), "c".into()]),
                (2, vec!["1".into(), "".into(), "3".into()]),
                (4, vec!["4".into(), "5".into(), "6".into()]),
            ]
        );
    }

    #[test]
    fn quoted_fields() {
        let mut c = Collect::default();
        let end = tokenize_quoted(
            b"\"a,b\",\"say \"\"hi\"\"\"\n\"two\nlines\",x\ny,\"\"\n",
            Some(2),
            &mut c,
        )
        .unwrap();
        assert_eq!(end.lines, 4);
        assert_eq!(c.rows[0], (0, vec!["a,b".into(), "say \"hi\"".into()]));
        assert_eq!(c.rows[1], (1, vec!["two\nlines".into(), "x".into()]));
        assert_eq!(c.rows[2], (3, vec!["y".into(), "".into()]));
    }

    #[test]
    fn comma_bits_finds_every_comma_and_nothing_else() {
        for b in 0..=255u8 {
            for pos in 0..8 {
                let mut w = [b'a'; 8];
                w[pos] = b;
                let m = comma_bits(u64::from_le_bytes(w));
                let want = if b == b',' { 0x80u64 << (8 * pos) } else { 0 };
                assert_eq!(m, want, "byte {b} at {pos}");
            }
        }
        let w = u64::from_le_bytes(*b",,a,\x2d\x2b,,");
        assert_eq!(comma_bits(w).count_ones(), 5);
    }

    #[test]
    fn ragged_and_unterminated() {
        let mut c = Collect::default();
        assert_eq!(
            tokenize_plain(b"1,2\n3\n", Some(2), &mut c),
            Err(TokError::Ragged { line: 1, found: 1 })
        );
        let mut c = Collect::default();
        assert_eq!(
            tokenize_quoted(b"1,2\n3,\"x\n\n", Some(2), &mut c),
            Err(TokError::Unterminated { line: 1 })
        );
        // A trailing comma at the end of the bytes is one more empty field.
        let mut c = Collect::default();
        assert_eq!(
            tokenize_quoted(b"1,", Some(2), &mut c),
            Ok(End { pos: 2, lines: 0 })
        );
        assert_eq!(c.rows[0].1, vec!["1".to_string(), String::new()]);
    }
}
