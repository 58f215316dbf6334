//! Columnar data for slopewise.
//!
//! A CSV file becomes typed columns: numbers as `f64` (NaN where missing, plus a
//! missing mask), text as categorical codes with a dictionary. Group indexes map
//! id columns to dense codes for the within transform, nesting checks and ICCs.
//! This crate knows nothing of the model language.
//!
//! PUBLIC API CONTRACT (the checker and the language server are written against
//! these names; keep them).
//!
//! Module map: `read` turns bytes into a [`Frame`] (chunking, merging), `tokenize`
//! splits records into fields, `field` decides what a field means (number,
//! missing, text), `group` holds [`GroupIndex`] and [`icc1`], `summary` holds
//! [`summarize`], `mask` the missing bit set, `error` the messages.

use std::path::{Path, PathBuf};

pub mod bench_support;
mod error;
mod field;
mod group;
mod hash;
mod mask;
mod read;
mod summary;
mod tokenize;

pub use group::GroupRanges;
pub use summary::{summarize, summarize_column};

/// Code of a missing value in a categorical column or a group index.
pub const MISSING_CODE: u32 = u32::MAX;

/// Options for reading a CSV file.
#[derive(Clone, Debug, PartialEq)]
pub struct ReadOptions {
    /// Field texts that mean "missing" (compared after trimming spaces). Default: "", "NA", "NaN".
    pub missing_tokens: Vec<String>,
}

impl Default for ReadOptions {
    fn default() -> Self {
        ReadOptions {
            missing_tokens: vec![String::new(), "NA".into(), "NaN".into()],
        }
    }
}

/// Why a file could not be read. `Display` gives a complete sentence naming the file
/// (when known), the line and the column at fault.
#[derive(Clone, Debug, PartialEq)]
pub enum ReadError {
    /// The file does not exist or cannot be opened/read.
    Io { path: PathBuf, message: String },
    /// The file holds no bytes (or only a BOM / blank lines).
    Empty { path: Option<PathBuf> },
    /// A record has a different number of fields than the header. `line` is 1-based.
    Ragged {
        path: Option<PathBuf>,
        line: usize,
        expected: usize,
        found: usize,
    },
    /// Two header fields have the same name. Columns are 1-based.
    DuplicateColumn {
        path: Option<PathBuf>,
        name: String,
        first: usize,
        second: usize,
    },
    /// Bytes that are not UTF-8. `line` is 1-based.
    InvalidUtf8 { path: Option<PathBuf>, line: usize },
    /// A quoted field that never closes; `line` is where it opened.
    UnterminatedQuote { path: Option<PathBuf>, line: usize },
}

impl std::error::Error for ReadError {}

/// A data set of named, equally long columns.
#[derive(Clone, Debug)]
pub struct Frame {
    columns: Vec<Column>,
    n_rows: usize,
    /// Sparse map from data rows to file lines: `(row, line)` pairs, sorted by
    /// row, one wherever the line stops being the previous pair's line plus the
    /// row distance (multi-line quoted fields, blank lines). A file without
    /// either holds a single pair, so the map costs nothing per row. Empty for
    /// frames not read from a file, which then count lines as `row + 2`.
    line_breaks: Vec<(usize, usize)>,
    /// Group index of each column, built on first use: the checker and the
    /// engine ask for the same groupings, and hashing millions of ids twice
    /// is the largest cost of preparing a fixed-effects model.
    group_indexes: GroupCache,
}

/// One lazily built [`GroupIndex`] per column. Cloning a frame clones the
/// indexes built so far (they are shared, not copied).
#[derive(Clone, Debug, Default)]
pub(crate) struct GroupCache(Vec<std::sync::OnceLock<std::sync::Arc<GroupIndex>>>);

impl GroupCache {
    pub(crate) fn new(n_columns: usize) -> GroupCache {
        GroupCache((0..n_columns).map(|_| std::sync::OnceLock::new()).collect())
    }
}

#[derive(Clone, Debug)]
pub struct Column {
    pub name: String,
    pub data: ColumnData,
}

#[derive(Clone, Debug)]
pub enum ColumnData {
    Numeric(NumericColumn),
    Categorical(CategoricalColumn),
}

#[derive(Clone, Debug)]
pub struct NumericColumn {
    /// One value per row; NaN where missing.
    pub values: Vec<f64>,
    pub missing: Mask,
}

#[derive(Clone, Debug)]
pub struct CategoricalColumn {
    /// One code per row into `levels`; [`MISSING_CODE`] where missing.
    pub codes: Vec<u32>,
    /// Level texts in order of first appearance.
    pub levels: Vec<String>,
    /// Set when most non-missing fields parse as numbers but some do not: the
    /// first row holding text, so the checker can name it if the model uses the
    /// column as a number.
    pub text_in_numbers: Option<TextInNumbers>,
}

#[derive(Clone, Debug, PartialEq)]
pub struct TextInNumbers {
    /// 0-based data row of the first non-numeric field.
    pub row: usize,
    /// Its text.
    pub value: String,
    /// How many non-missing fields did parse as numbers.
    pub numeric_count: usize,
}

/// A bit per row. In a column: set = missing. The checker also uses it for
/// rows kept by a condition and for a model's estimation sample.
///
/// A bit set rather than `Vec<bool>` because frames stay in the language
/// server's memory: one bit per value keeps the mask at 1/64 of the numbers.
#[derive(Clone, Debug, PartialEq, Eq, Hash, Default)]
pub struct Mask {
    bits: Vec<u64>,
    len: usize,
    count: usize,
}

impl Mask {
    /// Whether `row` is set; rows past the end are not.
    pub fn is_set(&self, row: usize) -> bool {
        row < self.len && (self.bits[row / 64] >> (row % 64)) & 1 == 1
    }
    /// Number of set bits.
    pub fn count(&self) -> usize {
        self.count
    }
    pub fn len(&self) -> usize {
        self.len
    }
    pub fn is_empty(&self) -> bool {
        self.len == 0
    }
}

impl NumericColumn {
    /// A numeric column whose mask follows the NaNs, so the two can never
    /// disagree.
    pub fn from_values(values: Vec<f64>) -> NumericColumn {
        let missing = Mask::from_nan(&values);
        NumericColumn { values, missing }
    }
}

impl CategoricalColumn {
    /// A categorical column from texts (`None` = missing), levels in order of
    /// first appearance, as the reader would build it.
    pub fn from_texts<S: AsRef<str>>(texts: &[Option<S>]) -> CategoricalColumn {
        let mut index: std::collections::HashMap<&str, u32> = std::collections::HashMap::new();
        let mut levels = Vec::new();
        let codes = texts
            .iter()
            .map(|t| match t {
                None => MISSING_CODE,
                Some(s) => *index.entry(s.as_ref()).or_insert_with(|| {
                    levels.push(s.as_ref().to_string());
                    (levels.len() - 1) as u32
                }),
            })
            .collect();
        CategoricalColumn {
            codes,
            levels,
            text_in_numbers: None,
        }
    }
}

impl Column {
    /// A numeric column (NaN = missing).
    pub fn numeric(name: impl Into<String>, values: Vec<f64>) -> Column {
        Column {
            name: name.into(),
            data: ColumnData::Numeric(NumericColumn::from_values(values)),
        }
    }
    /// A categorical column from texts (`None` = missing).
    pub fn categorical<S: AsRef<str>>(name: impl Into<String>, texts: &[Option<S>]) -> Column {
        Column {
            name: name.into(),
            data: ColumnData::Categorical(CategoricalColumn::from_texts(texts)),
        }
    }
    /// Number of rows.
    pub fn len(&self) -> usize {
        match &self.data {
            ColumnData::Numeric(c) => c.values.len(),
            ColumnData::Categorical(c) => c.codes.len(),
        }
    }
    pub fn is_empty(&self) -> bool {
        self.len() == 0
    }
    /// Whether row `row` is missing (rows past the end are not).
    pub fn is_missing(&self, row: usize) -> bool {
        match &self.data {
            ColumnData::Numeric(c) => c.missing.is_set(row),
            ColumnData::Categorical(c) => c.codes.get(row) == Some(&MISSING_CODE),
        }
    }
    pub fn n_missing(&self) -> usize {
        match &self.data {
            ColumnData::Numeric(c) => c.missing.count(),
            ColumnData::Categorical(c) => c.codes.iter().filter(|&&k| k == MISSING_CODE).count(),
        }
    }
    pub fn is_numeric(&self) -> bool {
        matches!(self.data, ColumnData::Numeric(_))
    }
    /// The numbers of a numeric column.
    pub fn as_numeric(&self) -> Option<&NumericColumn> {
        match &self.data {
            ColumnData::Numeric(c) => Some(c),
            ColumnData::Categorical(_) => None,
        }
    }
    /// The codes and levels of a categorical column.
    pub fn as_categorical(&self) -> Option<&CategoricalColumn> {
        match &self.data {
            ColumnData::Categorical(c) => Some(c),
            ColumnData::Numeric(_) => None,
        }
    }
    /// The field of row `row` as text (`None` when missing or past the end),
    /// numbers printed as group labels are.
    pub fn text_at(&self, row: usize) -> Option<String> {
        match &self.data {
            ColumnData::Numeric(c) => c
                .values
                .get(row)
                .filter(|v| !v.is_nan())
                .map(|v| group::number_label(*v)),
            ColumnData::Categorical(c) => c
                .codes
                .get(row)
                .and_then(|&k| c.levels.get(k as usize))
                .cloned(),
        }
    }
}

impl Frame {
    pub fn n_rows(&self) -> usize {
        self.n_rows
    }
    pub fn columns(&self) -> &[Column] {
        &self.columns
    }
    pub fn column(&self, name: &str) -> Option<&Column> {
        self.columns.iter().find(|c| c.name == name)
    }
    pub fn column_index(&self, name: &str) -> Option<usize> {
        self.columns.iter().position(|c| c.name == name)
    }
    /// The group index of column `column`, built once per frame and shared.
    /// Panics if `column` is out of range, like indexing [`Frame::columns`].
    pub fn group_index(&self, column: usize) -> std::sync::Arc<GroupIndex> {
        self.group_indexes.0[column]
            .get_or_init(|| std::sync::Arc::new(GroupIndex::from_column(&self.columns[column])))
            .clone()
    }
    /// Column names in file order.
    pub fn names(&self) -> impl Iterator<Item = &str> {
        self.columns.iter().map(|c| c.name.as_str())
    }
    /// 1-based line of the file on which data row `row` (0-based) starts;
    /// differs from `row + 2` only when quoted fields hold line breaks.
    pub fn line_of_row(&self, row: usize) -> usize {
        // Last break at or before `row`; rows before the first break (none in
        // a read frame) fall back to the plain count.
        let i = self.line_breaks.partition_point(|&(r, _)| r <= row);
        match i.checked_sub(1).and_then(|j| self.line_breaks.get(j)) {
            Some(&(r, line)) => line + (row - r),
            None => row + 2,
        }
    }
    /// Build a frame from columns (tests, derived data). Panics if lengths differ.
    pub fn from_columns(columns: Vec<Column>) -> Frame {
        match Frame::try_from_columns(columns) {
            Ok(f) => f,
            Err(e) => panic!("{e}"),
        }
    }
    /// As [`Frame::from_columns`] but says which column is too long or short
    /// instead of panicking, for callers building frames from user input.
    pub fn try_from_columns(columns: Vec<Column>) -> Result<Frame, String> {
        let n_rows = columns.first().map_or(0, Column::len);
        if let Some(bad) = columns.iter().find(|c| c.len() != n_rows) {
            return Err(format!(
                "column `{}` has {} rows where `{}` has {}",
                bad.name,
                bad.len(),
                columns[0].name,
                n_rows
            ));
        }
        Ok(Frame {
            group_indexes: GroupCache::new(columns.len()),
            columns,
            n_rows,
            line_breaks: Vec::new(),
        })
    }
}

/// Read a CSV file. Fields may be quoted (with commas, quotes doubled, line breaks);
/// a UTF-8 BOM and CRLF line ends are accepted. A header-only file gives a frame
/// with zero rows.
///
/// Surrounding spaces, tabs and carriage returns are not part of a field (also
/// inside quotes), and wholly empty lines are skipped. A quote is special only
/// at the start of a field; elsewhere it is an ordinary character. Large files
/// are parsed on all cores; the result is the same as a single pass.
pub fn read_csv(path: &Path, options: &ReadOptions) -> Result<Frame, ReadError> {
    read::read_path(path, options)
}

/// As [`read_csv`] but from bytes already in memory (errors carry no path).
pub fn read_csv_bytes(bytes: &[u8], options: &ReadOptions) -> Result<Frame, ReadError> {
    read::read_bytes(bytes, options, None, read::Mode::Auto)
}

/// As [`read_csv_bytes`] but always in one single-threaded pass with the
/// quote-aware tokenizer: the yardstick the parallel path is tested against.
pub fn read_csv_bytes_sequential(bytes: &[u8], options: &ReadOptions) -> Result<Frame, ReadError> {
    read::read_bytes(bytes, options, None, read::Mode::Sequential)
}

/// As [`read_csv_bytes`] but split into chunks of about `chunk_bytes` bytes
/// however small the data, so tests can exercise chunk boundaries on tiny files.
pub fn read_csv_bytes_chunked(
    bytes: &[u8],
    options: &ReadOptions,
    chunk_bytes: usize,
) -> Result<Frame, ReadError> {
    read::read_bytes(
        bytes,
        options,
        None,
        read::Mode::Chunked(chunk_bytes.max(1)),
    )
}

/// Only the header's column names, reading as little of the file as possible
/// (the language server shows these before the whole file is loaded).
pub fn read_header(path: &Path) -> Result<Vec<String>, ReadError> {
    read::read_header_path(path)
}

/// Dense codes for the groups of an id column (numeric or text).
#[derive(Clone, Debug)]
pub struct GroupIndex {
    /// One code per row in `0..n_groups`; [`MISSING_CODE`] where the id is missing.
    pub codes: Vec<u32>,
    /// Rows per group.
    pub sizes: Vec<u32>,
    /// The id of each group as text (numbers printed without a trailing `.0`).
    pub labels: Vec<String>,
}

/// One inner group found in more than one outer group.
#[derive(Clone, Debug, PartialEq)]
pub struct NestViolation {
    pub inner: String,
    /// The outer groups it appears in (at most a few).
    pub outer: Vec<String>,
    /// A 0-based row in each of those outer groups.
    pub rows: Vec<usize>,
}

pub use group::icc1;

/// What `describe` prints for one column.
#[derive(Clone, Debug, PartialEq)]
pub struct ColumnSummary {
    pub name: String,
    /// `None` for a numeric column; the number of levels for a categorical one.
    pub levels: Option<usize>,
    /// Non-missing values.
    pub n: usize,
    pub missing: usize,
    pub mean: Option<f64>,
    pub sd: Option<f64>,
    pub min: Option<f64>,
    pub max: Option<f64>,
    pub by_group: Vec<GroupSummary>,
}

#[derive(Clone, Debug, PartialEq)]
pub struct GroupSummary {
    pub grouping: String,
    pub icc1: Option<f64>,
    pub varies_within: bool,
}
