//! What a field means: missing, a number, or text; and the per-chunk column
//! buffers that collect them.
//!
//! A column starts out numeric in every chunk and turns to text the first time
//! a field is neither missing nor a number. Only then are the chunk's earlier
//! fields of that column tokenized a second time to recover their texts, so a
//! numeric column never pays for keeping its texts.

use crate::hash::FastMap;
use crate::tokenize::{tokenize, Sink};
use crate::MISSING_CODE;

/// The missing tokens, trimmed, with a bit per token length so that most
/// fields are rejected by one shift and mask.
pub(crate) struct Missing {
    tokens: Vec<Vec<u8>>,
    short_lengths: u64,
    any_long: bool,
}

impl Missing {
    pub(crate) fn new(tokens: &[String]) -> Missing {
        let mut m = Missing {
            tokens: Vec::new(),
            short_lengths: 0,
            any_long: false,
        };
        for t in tokens {
            let t = crate::tokenize::trim(t.as_bytes()).to_vec();
            if t.len() < 64 {
                m.short_lengths |= 1 << t.len();
            } else {
                m.any_long = true;
            }
            if !m.tokens.contains(&t) {
                m.tokens.push(t);
            }
        }
        m
    }

    #[inline]
    pub(crate) fn is_missing(&self, b: &[u8]) -> bool {
        let candidate = if b.len() < 64 {
            (self.short_lengths >> b.len()) & 1 == 1
        } else {
            self.any_long
        };
        candidate && self.tokens.iter().any(|t| t.as_slice() == b)
    }
}

/// A finite decimal number, or `None`. "nan" and "inf" are not numbers here:
/// a NaN value means missing, and a column holding "inf" is better reported as
/// text than silently carried into an estimate.
#[inline]
pub(crate) fn parse_number(b: &[u8]) -> Option<f64> {
    if let Some(x) = plain_decimal(b) {
        return Some(x);
    }
    // Anything else that could be a number starts like one; text mostly does
    // not, and is turned away before the full parser.
    if !matches!(b.first(), Some(b'0'..=b'9' | b'+' | b'-' | b'.')) {
        return None;
    }
    full_parse(b)
}

/// fast-float accepts exponents and long mantissas with correct rounding; it
/// never panics and rejects trailing characters. Kept out of line: its large
/// stack frame would otherwise be set up for every field.
#[cold]
#[inline(never)]
fn full_parse(b: &[u8]) -> Option<f64> {
    match fast_float2::parse::<f64, _>(b) {
        Ok(x) if x.is_finite() => Some(x),
        _ => None,
    }
}

const POW10: [f64; 23] = [
    1e0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10, 1e11, 1e12, 1e13, 1e14, 1e15, 1e16,
    1e17, 1e18, 1e19, 1e20, 1e21, 1e22,
];

/// The common case of data files, `-123.4567` with no exponent and at most
/// 2^53 as digits, in one loop. Both the digits as an integer and the power of
/// ten are then exact doubles, and IEEE division rounds their quotient
/// correctly, so the result is the same as the full parser's (Clinger 1990).
/// `None` hands the field to the full parser.
#[inline]
pub(crate) fn plain_decimal(b: &[u8]) -> Option<f64> {
    let (neg, digits) = match b.first()? {
        b'-' => (true, &b[1..]),
        b'+' => (false, &b[1..]),
        _ => (false, b),
    };
    // At most 19 digits, so the accumulator cannot overflow.
    if digits.is_empty() || digits.len() > 19 {
        return None;
    }
    let mut m: u64 = 0;
    let mut n_digits = 0usize;
    let mut dot: Option<usize> = None;
    for (i, &c) in digits.iter().enumerate() {
        match c {
            b'0'..=b'9' => {
                m = m * 10 + u64::from(c - b'0');
                n_digits += 1;
            }
            b'.' if dot.is_none() => dot = Some(i),
            _ => return None,
        }
    }
    if n_digits == 0 || m > 1 << 53 {
        return None;
    }
    let frac = dot.map_or(0, |d| digits.len() - d - 1);
    let v = m as f64 / *POW10.get(frac)?;
    Some(if neg { -v } else { v })
}

/// Texts of one column of one chunk, as chunk-local codes.
pub(crate) struct TextBuf {
    pub codes: Vec<u32>,
    /// Level bytes in order of first appearance in the chunk.
    pub levels: Vec<Box<[u8]>>,
    index: FastMap<Box<[u8]>, u32>,
    /// Non-missing fields that parse as numbers.
    pub numeric: usize,
    /// Non-missing fields.
    pub present: usize,
    /// Chunk-local row and bytes of the first non-number.
    pub first_text: Option<(usize, Box<[u8]>)>,
    last: u32,
}

impl TextBuf {
    pub(crate) fn with_capacity(rows: usize) -> TextBuf {
        TextBuf {
            codes: Vec::with_capacity(rows),
            levels: Vec::new(),
            index: FastMap::default(),
            numeric: 0,
            present: 0,
            first_text: None,
            last: MISSING_CODE,
        }
    }

    #[inline]
    pub(crate) fn push(&mut self, b: &[u8], row: usize, missing: &Missing) {
        if missing.is_missing(b) {
            self.codes.push(MISSING_CODE);
            return;
        }
        self.present += 1;
        if parse_number(b).is_some() {
            self.numeric += 1;
        } else if self.first_text.is_none() {
            self.first_text = Some((row, b.into()));
        }
        // Sorted or clustered ids repeat the previous level; skip the hash then.
        if let Some(prev) = self.levels.get(self.last as usize) {
            if &**prev == b {
                self.codes.push(self.last);
                return;
            }
        }
        let code = match self.index.get(b) {
            Some(&k) => k,
            None => {
                let k = self.levels.len() as u32;
                let owned: Box<[u8]> = b.into();
                self.levels.push(owned.clone());
                self.index.insert(owned, k);
                k
            }
        };
        self.last = code;
        self.codes.push(code);
    }
}

/// One column of one chunk: numbers go straight into the chunk's window of
/// the final column vector, so a numeric column is never copied after parsing;
/// `text` is set once the column turned out to hold text in this chunk.
pub(crate) struct ColState<'a> {
    values: &'a mut [f64],
    pub text: Option<TextBuf>,
}

/// Collects one chunk: the [`Sink`] the tokenizers feed.
pub(crate) struct ChunkBuilder<'a> {
    bytes: &'a [u8],
    has_quotes: bool,
    width: usize,
    missing: &'a Missing,
    pub cols: Vec<ColState<'a>>,
    pub rows: usize,
    /// `(row, line - row)` wherever the difference changes, both chunk-local.
    pub breaks: Vec<(usize, isize)>,
    last_delta: Option<isize>,
}

impl<'a> ChunkBuilder<'a> {
    /// `windows` holds one slice per column, at least as long as the chunk
    /// has records (its newline count, plus one if it does not end in one).
    pub(crate) fn new(
        bytes: &'a [u8],
        has_quotes: bool,
        missing: &'a Missing,
        windows: Vec<&'a mut [f64]>,
    ) -> ChunkBuilder<'a> {
        ChunkBuilder {
            bytes,
            has_quotes,
            width: windows.len(),
            missing,
            cols: windows
                .into_iter()
                .map(|values| ColState { values, text: None })
                .collect(),
            rows: 0,
            breaks: Vec::new(),
            last_delta: None,
        }
    }
}

impl Sink for ChunkBuilder<'_> {
    #[inline]
    fn field(&mut self, col: usize, b: &[u8]) {
        let Some(state) = self.cols.get_mut(col) else {
            return;
        };
        if let Some(text) = &mut state.text {
            text.push(b, self.rows, self.missing);
            return;
        }
        let v = if self.missing.is_missing(b) {
            f64::NAN
        } else if let Some(x) = parse_number(b) {
            x
        } else {
            let mut text = texts_of_column(
                self.bytes,
                self.has_quotes,
                self.width,
                col,
                self.rows,
                self.missing,
            );
            text.push(b, self.rows, self.missing);
            state.text = Some(text);
            return;
        };
        if let Some(slot) = state.values.get_mut(self.rows) {
            *slot = v;
        }
    }

    #[inline]
    fn end_record(&mut self, line: usize) -> bool {
        let delta = line as isize - self.rows as isize;
        if self.last_delta != Some(delta) {
            self.breaks.push((self.rows, delta));
            self.last_delta = Some(delta);
        }
        self.rows += 1;
        true
    }
}

/// Re-tokenize the first `rows` records of a chunk for column `col` only.
/// The records were tokenized once already, so no error can occur here.
pub(crate) fn texts_of_column(
    bytes: &[u8],
    has_quotes: bool,
    width: usize,
    col: usize,
    rows: usize,
    missing: &Missing,
) -> TextBuf {
    struct One<'m> {
        col: usize,
        rows: usize,
        row: usize,
        missing: &'m Missing,
        text: TextBuf,
    }
    impl Sink for One<'_> {
        #[inline]
        fn field(&mut self, col: usize, b: &[u8]) {
            if col == self.col {
                self.text.push(b, self.row, self.missing);
            }
        }
        #[inline]
        fn end_record(&mut self, _line: usize) -> bool {
            self.row += 1;
            self.row < self.rows
        }
    }
    let mut one = One {
        col,
        rows,
        row: 0,
        missing,
        text: TextBuf::with_capacity(rows.max(16)),
    };
    if rows > 0 {
        // Errors are impossible on bytes that tokenized cleanly before.
        let _ = tokenize(bytes, Some(width), has_quotes, &mut one);
    }
    one.text
}
