//! From bytes to a [`Frame`]: header, chunking, parallel parsing, merging.
//!
//! Large inputs are cut into chunks at record boundaries and parsed on all
//! cores. A boundary must not fall inside a quoted field; it is chosen at a
//! newline preceded by an even number of quote characters, which is right for
//! well-formed files. Because a stray quote inside an unquoted field could
//! fool that count, every chunk but the last must also end outside a quoted
//! field when parsed from its start: chunk 0 starts right, and each chunk that
//! starts right and ends clean hands a correct start to the next, so the
//! result equals a single pass. If any chunk fails that test, the whole input
//! is parsed again in one pass.

use crate::field::{texts_of_column, ChunkBuilder, Missing, TextBuf};
use crate::hash::FastMap;
use crate::tokenize::{tokenize, tokenize_quoted, End, Sink, TokError};
use crate::{
    CategoricalColumn, Column, ColumnData, Frame, GroupCache, NumericColumn, ReadError,
    ReadOptions, TextInNumbers, MISSING_CODE,
};
use memchr::{memchr, memchr2, memchr_iter};
use rayon::prelude::*;
use std::path::Path;

const BOM: &[u8] = b"\xEF\xBB\xBF";

/// Below this, threads cost more than they save.
const PARALLEL_MIN_BYTES: usize = 1 << 20;

#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub(crate) enum Mode {
    /// Chunk large inputs, one pass for small ones.
    Auto,
    /// One pass with the quote-aware tokenizer, whatever the input.
    Sequential,
    /// Chunks of about this many bytes, whatever the input size.
    Chunked(usize),
}

pub(crate) fn read_path(path: &Path, options: &ReadOptions) -> Result<Frame, ReadError> {
    let bytes = FileBytes::open(path)?;
    read_bytes(bytes.as_slice(), options, Some(path), Mode::Auto)
}

fn io_error(path: &Path, e: std::io::Error) -> ReadError {
    ReadError::Io {
        path: path.to_path_buf(),
        message: e.to_string(),
    }
}

/// The file's bytes: small files are read, large ones mapped.
enum FileBytes {
    Owned(Vec<u8>),
    Mapped(memmap2::Mmap),
}

impl FileBytes {
    /// Mapping avoids copying the file out of the page cache into fresh memory,
    /// which for a large file took longer than parsing half of it; the pages
    /// are then touched by the parsing threads in parallel.
    fn open(path: &Path) -> Result<FileBytes, ReadError> {
        let file = std::fs::File::open(path).map_err(|e| io_error(path, e))?;
        let len = file.metadata().map_err(|e| io_error(path, e))?.len();
        if len >= 8 * PARALLEL_MIN_BYTES as u64 {
            // SAFETY: the map is read-only and lives only while this read
            // runs; the frame copies everything it keeps. Another program
            // truncating the file during those moments would end the process
            // with a bus error, the one risk accepted for the speed, and only
            // for files of 8 MB and more.
            if let Ok(map) = unsafe { memmap2::Mmap::map(&file) } {
                return Ok(FileBytes::Mapped(map));
            }
        }
        let mut buf = Vec::with_capacity(len as usize);
        std::io::Read::read_to_end(&mut &file, &mut buf).map_err(|e| io_error(path, e))?;
        Ok(FileBytes::Owned(buf))
    }

    fn as_slice(&self) -> &[u8] {
        match self {
            FileBytes::Owned(v) => v,
            FileBytes::Mapped(m) => m,
        }
    }
}

pub(crate) fn read_bytes(
    bytes: &[u8],
    options: &ReadOptions,
    path: Option<&Path>,
    mode: Mode,
) -> Result<Frame, ReadError> {
    parse(bytes, options, mode).map_err(|e| match path {
        Some(p) => e.with_path(p),
        None => e,
    })
}

fn line_at(bytes: &[u8], offset: usize) -> usize {
    memchr_iter(b'\n', &bytes[..offset.min(bytes.len())]).count() + 1
}

/// Header names and where the data starts, or `None` when `body` ends before
/// the header record does and more bytes may follow (`at_eof` false).
pub(crate) fn header(body: &[u8], at_eof: bool) -> Result<Option<(Vec<String>, End)>, ReadError> {
    struct Names(Vec<Vec<u8>>);
    impl Sink for Names {
        fn field(&mut self, _col: usize, b: &[u8]) {
            self.0.push(b.to_vec());
        }
        fn end_record(&mut self, _line: usize) -> bool {
            false
        }
    }
    let mut names = Names(Vec::new());
    let end = match tokenize_quoted(body, None, &mut names) {
        Ok(end) => end,
        Err(TokError::Unterminated { .. }) if !at_eof => return Ok(None),
        Err(TokError::Unterminated { line }) => {
            return Err(ReadError::UnterminatedQuote {
                path: None,
                line: line + 1,
            })
        }
        // The header sets the width, so it cannot be ragged.
        Err(TokError::Ragged { line, found }) => {
            return Err(ReadError::Ragged {
                path: None,
                line: line + 1,
                expected: found,
                found,
            })
        }
    };
    let complete = end.pos > 0 && body.get(end.pos - 1) == Some(&b'\n');
    if !at_eof && !complete {
        return Ok(None);
    }
    if names.0.is_empty() {
        return Err(ReadError::Empty { path: None });
    }
    if let Err(e) = std::str::from_utf8(&body[..end.pos]) {
        return Err(ReadError::InvalidUtf8 {
            path: None,
            line: line_at(body, e.valid_up_to()),
        });
    }
    let names: Vec<String> = names
        .0
        .into_iter()
        .map(|n| String::from_utf8_lossy(&n).into_owned())
        .collect();
    let mut seen: FastMap<&str, usize> = FastMap::default();
    for (i, n) in names.iter().enumerate() {
        if let Some(&first) = seen.get(n.as_str()) {
            return Err(ReadError::DuplicateColumn {
                path: None,
                name: n.clone(),
                first: first + 1,
                second: i + 1,
            });
        }
        seen.insert(n, i);
    }
    Ok(Some((names, end)))
}

pub(crate) fn read_header_path(path: &Path) -> Result<Vec<String>, ReadError> {
    use std::io::Read;
    let mut file = std::fs::File::open(path).map_err(|e| io_error(path, e))?;
    let mut buf = Vec::new();
    let mut step = 1 << 14;
    loop {
        let start = buf.len();
        buf.resize(start + step, 0);
        let mut got = 0;
        let mut at_eof = false;
        while start + got < buf.len() {
            match file.read(&mut buf[start + got..]) {
                Ok(0) => {
                    at_eof = true;
                    break;
                }
                Ok(n) => got += n,
                Err(e) if e.kind() == std::io::ErrorKind::Interrupted => {}
                Err(e) => return Err(io_error(path, e)),
            }
        }
        buf.truncate(start + got);
        let body = strip_bom(&buf, at_eof);
        match header(body, at_eof).map_err(|e| e.with_path(path))? {
            Some((names, _)) => return Ok(names),
            None => step = (step * 2).min(1 << 24),
        }
    }
}

/// The bytes after a BOM. While more may come, a buffer that is a strict
/// prefix of the BOM is kept whole; `header` then asks for more.
fn strip_bom(buf: &[u8], at_eof: bool) -> &[u8] {
    if buf.starts_with(BOM) {
        &buf[BOM.len()..]
    } else if !at_eof && BOM.starts_with(buf) {
        &buf[..0]
    } else {
        buf
    }
}

/// What one chunk produced besides the numbers written into its windows.
struct ChunkOut {
    /// Per column, the texts if the column held text in this chunk.
    texts: Vec<Option<TextBuf>>,
    rows: usize,
    /// Newlines in the chunk.
    lines: usize,
    breaks: Vec<(usize, isize)>,
}

/// What a first, cheap pass learns about a chunk before it is parsed.
#[derive(Clone, Copy)]
struct Scan {
    newlines: usize,
    has_quotes: bool,
}

/// UTF-8 check (`Err` = byte offset of the first bad byte), newline count and
/// whether quotes occur. The newline count bounds the chunk's records, which
/// lets every chunk write its numbers into its own window of one column
/// vector instead of a vector of its own that would be copied afterwards.
fn scan_chunk(bytes: &[u8], force_quoted: bool) -> Result<Scan, usize> {
    std::str::from_utf8(bytes).map_err(|e| e.valid_up_to())?;
    Ok(Scan {
        newlines: count_newlines(bytes),
        has_quotes: force_quoted || memchr(b'"', bytes).is_some(),
    })
}

fn count_newlines(bytes: &[u8]) -> usize {
    memchr_iter(b'\n', bytes).count()
}

fn run_chunk<'a>(
    bytes: &'a [u8],
    scan: Scan,
    missing: &'a Missing,
    windows: Vec<&'a mut [f64]>,
) -> Result<ChunkOut, TokError> {
    let width = windows.len();
    let mut builder = ChunkBuilder::new(bytes, scan.has_quotes, missing, windows);
    let end = tokenize(bytes, Some(width), scan.has_quotes, &mut builder)?;
    Ok(ChunkOut {
        texts: builder.cols.into_iter().map(|c| c.text).collect(),
        rows: builder.rows,
        lines: end.lines,
        breaks: builder.breaks,
    })
}

/// Chunk boundaries (starting with 0, ending with `data.len()`), each at a
/// newline preceded by an even number of quotes.
fn boundaries(data: &[u8], target: usize) -> Vec<usize> {
    let n = (data.len() / target.max(1)).max(1);
    if n == 1 {
        return vec![0, data.len()];
    }
    let starts: Vec<usize> = (0..=n).map(|k| k * data.len() / n).collect();
    let odd: Vec<bool> = (0..n)
        .into_par_iter()
        .map(|k| memchr_iter(b'"', &data[starts[k]..starts[k + 1]]).count() % 2 == 1)
        .collect();
    let mut cuts = vec![0];
    let mut inside = false;
    for k in 1..n {
        inside ^= odd[k - 1];
        let (lo, hi) = (starts[k], starts[k + 1]);
        let mut q = inside;
        let mut pos = lo;
        while let Some(i) = memchr2(b'"', b'\n', &data[pos..hi]) {
            let at = pos + i;
            if data[at] == b'"' {
                q = !q;
            } else if !q {
                if at + 1 > *cuts.last().unwrap_or(&0) && at + 1 < data.len() {
                    cuts.push(at + 1);
                }
                break;
            }
            pos = at + 1;
        }
    }
    cuts.push(data.len());
    cuts.dedup();
    cuts
}

fn parse(bytes: &[u8], options: &ReadOptions, mode: Mode) -> Result<Frame, ReadError> {
    let body = strip_bom(bytes, true);
    let bom = bytes.len() - body.len();
    let (names, head) = match header(body, true)? {
        Some(h) => h,
        None => return Err(ReadError::Empty { path: None }),
    };
    let data = &body[head.pos..];
    let width = names.len();
    let missing = Missing::new(&options.missing_tokens);
    let cuts = match mode {
        Mode::Sequential => vec![0, data.len()],
        Mode::Chunked(n) => boundaries(data, n),
        Mode::Auto if data.len() < PARALLEL_MIN_BYTES => vec![0, data.len()],
        Mode::Auto => {
            let target = data.len() / (rayon::current_num_threads().max(1) * 8);
            boundaries(data, target.clamp(PARALLEL_MIN_BYTES, 64 << 20))
        }
    };
    let force_quoted = mode == Mode::Sequential;
    let ranges: Vec<(usize, usize)> = cuts.windows(2).map(|w| (w[0], w[1])).collect();
    let scans: Vec<Result<Scan, usize>> = ranges
        .par_iter()
        .map(|&(a, b)| scan_chunk(&data[a..b], force_quoted))
        .collect();
    // Text that is not UTF-8 outranks every other fault, so that the reported
    // error does not depend on how the data was chunked.
    let mut ok_scans = Vec::with_capacity(scans.len());
    for (r, &(a, _)) in scans.into_iter().zip(&ranges) {
        match r {
            Ok(s) => ok_scans.push(s),
            Err(off) => {
                return Err(ReadError::InvalidUtf8 {
                    path: None,
                    line: line_at(bytes, bom + head.pos + a + off),
                })
            }
        }
    }
    // A chunk ending in a newline has at most one record per newline; only
    // an unterminated last line adds one. Exact caps leave no gaps to close.
    let caps: Vec<usize> = ok_scans
        .iter()
        .zip(&ranges)
        .map(|(s, &(_, b))| s.newlines + usize::from(b > 0 && data[b - 1] != b'\n'))
        .collect();
    let total: usize = caps.iter().sum();
    // Zeroed allocations are lazily mapped: a column that turns out to be
    // text never touches (and never pays for) its pages.
    let mut values: Vec<Vec<f64>> = (0..width).map(|_| vec![0.0; total]).collect();
    let mut windows: Vec<Vec<&mut [f64]>> =
        caps.iter().map(|_| Vec::with_capacity(width)).collect();
    for v in values.iter_mut() {
        let mut rest: &mut [f64] = v;
        for (w, &cap) in windows.iter_mut().zip(&caps) {
            let (head, tail) = rest.split_at_mut(cap);
            w.push(head);
            rest = tail;
        }
    }
    let results: Vec<Result<ChunkOut, TokError>> = ranges
        .par_iter()
        .zip(ok_scans.par_iter())
        .zip(windows.into_par_iter())
        .map(|((&(a, b), &scan), win)| run_chunk(&data[a..b], scan, &missing, win))
        .collect();

    let mut lines_before = head.lines;
    let last = results.len().saturating_sub(1);
    let mut outs = Vec::with_capacity(results.len());
    for (i, r) in results.into_iter().enumerate() {
        match r {
            Ok(out) => {
                lines_before += out.lines;
                outs.push(out);
            }
            Err(TokError::Unterminated { .. }) if i != last => {
                // A boundary fell inside a quoted field: one pass instead.
                return parse(bytes, options, Mode::Sequential);
            }
            Err(TokError::Unterminated { line }) => {
                return Err(ReadError::UnterminatedQuote {
                    path: None,
                    line: lines_before + line + 1,
                })
            }
            Err(TokError::Ragged { line, found }) => {
                return Err(ReadError::Ragged {
                    path: None,
                    line: lines_before + line + 1,
                    expected: width,
                    found,
                })
            }
        }
    }
    let metas: Vec<ChunkMeta<'_>> = ranges
        .iter()
        .zip(&ok_scans)
        .zip(&caps)
        .scan(0, |slot0, ((&(a, b), s), &cap)| {
            let m = ChunkMeta {
                slot0: *slot0,
                row0: 0,
                rows: 0,
                bytes: &data[a..b],
                has_quotes: s.has_quotes,
            };
            *slot0 += cap;
            Some(m)
        })
        .collect();
    Ok(merge(
        names, values, outs, metas, head.lines, width, &missing,
    ))
}

/// A chunk's place in the whole: where its window starts, its first row and
/// the bytes to re-tokenize.
struct ChunkMeta<'a> {
    slot0: usize,
    row0: usize,
    rows: usize,
    bytes: &'a [u8],
    has_quotes: bool,
}

fn merge(
    names: Vec<String>,
    values: Vec<Vec<f64>>,
    outs: Vec<ChunkOut>,
    mut metas: Vec<ChunkMeta<'_>>,
    head_lines: usize,
    width: usize,
    missing: &Missing,
) -> Frame {
    let mut line_breaks: Vec<(usize, usize)> = Vec::new();
    let mut row0 = 0;
    let mut line0 = head_lines;
    let mut per_col: Vec<Vec<Option<TextBuf>>> = (0..width).map(|_| Vec::new()).collect();
    for (out, meta) in outs.into_iter().zip(metas.iter_mut()) {
        for &(r, delta) in &out.breaks {
            let row = row0 + r;
            // Chunk-local line of the row, then 1-based in the file.
            let line = (line0 as isize + r as isize + delta + 1).max(1) as usize;
            let predicted = line_breaks.last().map(|&(r0, l0)| l0 + (row - r0));
            if predicted != Some(line) {
                line_breaks.push((row, line));
            }
        }
        meta.row0 = row0;
        meta.rows = out.rows;
        row0 += out.rows;
        line0 += out.lines;
        for (dst, t) in per_col.iter_mut().zip(out.texts) {
            dst.push(t);
        }
    }
    let n_rows = row0;
    let columns: Vec<Column> = names
        .into_par_iter()
        .zip(values)
        .zip(per_col)
        .enumerate()
        .map(|(col, ((name, vals), texts))| Column {
            name,
            data: merge_column(vals, texts, &metas, n_rows, width, col, missing),
        })
        .collect();
    line_breaks.shrink_to_fit();
    Frame {
        group_indexes: GroupCache::new(columns.len()),
        columns,
        n_rows,
        line_breaks,
    }
}

fn merge_column(
    mut values: Vec<f64>,
    texts: Vec<Option<TextBuf>>,
    metas: &[ChunkMeta<'_>],
    n_rows: usize,
    width: usize,
    col: usize,
    missing: &Missing,
) -> ColumnData {
    if texts.iter().all(Option::is_none) {
        // Close the gaps left by chunks with fewer records than newlines
        // (quoted line breaks, blank lines); usually there are none.
        let mut dst = 0;
        for m in metas {
            if m.slot0 != dst {
                values.copy_within(m.slot0..m.slot0 + m.rows, dst);
            }
            dst += m.rows;
        }
        values.truncate(n_rows);
        if values.capacity() - n_rows > n_rows / 16 {
            values.shrink_to_fit();
        }
        return ColumnData::Numeric(NumericColumn::from_values(values));
    }
    drop(values);
    // Text somewhere: the numeric chunks give up their texts again.
    let texts: Vec<TextBuf> = texts
        .into_par_iter()
        .zip(metas.par_iter())
        .map(|(t, m)| match t {
            Some(t) => t,
            None => texts_of_column(m.bytes, m.has_quotes, width, col, m.rows, missing),
        })
        .collect();
    let mut index: FastMap<&[u8], u32> = FastMap::default();
    let mut levels: Vec<&[u8]> = Vec::new();
    let remaps: Vec<Vec<u32>> = texts
        .iter()
        .map(|t| {
            t.levels
                .iter()
                .map(|l| {
                    *index.entry(&**l).or_insert_with(|| {
                        levels.push(l);
                        (levels.len() - 1) as u32
                    })
                })
                .collect()
        })
        .collect();
    let mut codes = Vec::with_capacity(n_rows);
    for (t, remap) in texts.iter().zip(&remaps) {
        codes.extend(
            t.codes
                .iter()
                .map(|&k| remap.get(k as usize).copied().unwrap_or(MISSING_CODE)),
        );
    }
    let numeric: usize = texts.iter().map(|t| t.numeric).sum();
    let present: usize = texts.iter().map(|t| t.present).sum();
    let first = texts
        .iter()
        .zip(metas)
        .find_map(|(t, m)| t.first_text.as_ref().map(|(r, b)| (m.row0 + r, b)));
    let text_in_numbers = match first {
        Some((row, b)) if numeric > present - numeric => Some(TextInNumbers {
            row,
            value: String::from_utf8_lossy(b).into_owned(),
            numeric_count: numeric,
        }),
        _ => None,
    };
    let levels = levels
        .into_iter()
        .map(|l| String::from_utf8_lossy(l).into_owned())
        .collect();
    ColumnData::Categorical(CategoricalColumn {
        codes,
        levels,
        text_in_numbers,
    })
}
