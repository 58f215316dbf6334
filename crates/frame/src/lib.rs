//! Columnar data for slopewise.
//!
//! A CSV file becomes typed columns: numbers as `f64` (NaN where missing, plus a
//! missing mask), text as categorical codes with a dictionary. Group indexes map
//! id columns to dense codes for the within transform, nesting checks and ICCs.
//! This crate knows nothing of the model language.
//!
//! PUBLIC API CONTRACT (the checker and the language server are written against
//! these names; keep them).

use std::path::{Path, PathBuf};

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

impl std::fmt::Display for ReadError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        let _ = f;
        todo!()
    }
}

impl std::error::Error for ReadError {}

/// A data set of named, equally long columns.
#[derive(Clone, Debug)]
pub struct Frame {
    columns: Vec<Column>,
    n_rows: usize,
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

/// A bit per row: set = missing.
#[derive(Clone, Debug, PartialEq, Eq, Default)]
pub struct Mask {
    bits: Vec<u64>,
    len: usize,
    count: usize,
}

impl Mask {
    pub fn is_set(&self, row: usize) -> bool {
        let _ = row;
        todo!()
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

impl Column {
    /// Whether row `row` is missing.
    pub fn is_missing(&self, row: usize) -> bool {
        let _ = row;
        todo!()
    }
    pub fn n_missing(&self) -> usize {
        todo!()
    }
    pub fn is_numeric(&self) -> bool {
        matches!(self.data, ColumnData::Numeric(_))
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
        let _ = name;
        todo!()
    }
    pub fn column_index(&self, name: &str) -> Option<usize> {
        let _ = name;
        todo!()
    }
    /// 1-based line of the file on which data row `row` (0-based) starts;
    /// differs from `row + 2` only when quoted fields hold line breaks.
    pub fn line_of_row(&self, row: usize) -> usize {
        let _ = row;
        todo!()
    }
    /// Build a frame from columns (tests, derived data). Panics if lengths differ.
    pub fn from_columns(columns: Vec<Column>) -> Frame {
        let _ = columns;
        todo!()
    }
}

/// Read a CSV file. Fields may be quoted (with commas, quotes doubled, line breaks);
/// a UTF-8 BOM and CRLF line ends are accepted. A header-only file gives a frame
/// with zero rows.
pub fn read_csv(path: &Path, options: &ReadOptions) -> Result<Frame, ReadError> {
    let _ = (path, options);
    todo!()
}

/// As [`read_csv`] but from bytes already in memory (errors carry no path).
pub fn read_csv_bytes(bytes: &[u8], options: &ReadOptions) -> Result<Frame, ReadError> {
    let _ = (bytes, options);
    todo!()
}

/// Only the header's column names, reading as little of the file as possible
/// (the language server shows these before the whole file is loaded).
pub fn read_header(path: &Path) -> Result<Vec<String>, ReadError> {
    let _ = path;
    todo!()
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

impl GroupIndex {
    pub fn from_column(column: &Column) -> GroupIndex {
        let _ = column;
        todo!()
    }
    pub fn n_groups(&self) -> usize {
        self.sizes.len()
    }
    /// Mean of `values` in each group, skipping NaN; NaN for a group with no values.
    pub fn means(&self, values: &[f64]) -> Vec<f64> {
        let _ = values;
        todo!()
    }
    /// Whether any group holds two non-missing values that differ by more than a
    /// relative 1e-10 of the column's scale.
    pub fn varies_within(&self, values: &[f64]) -> bool {
        let _ = values;
        todo!()
    }
    /// Inner groups that appear in more than one outer group (empty = properly nested).
    pub fn nesting_violations(&self, outer: &GroupIndex) -> Vec<NestViolation> {
        let _ = outer;
        todo!()
    }
}

/// ICC(1) of `values` by `groups`, one-way ANOVA estimator (Bliese 2000):
/// (MSB − MSW) / (MSB + (k − 1)·MSW) with k the mean group size; rows with a
/// missing value or id are skipped. `None` with fewer than two groups or no
/// within-group degrees of freedom.
pub fn icc1(values: &[f64], groups: &GroupIndex) -> Option<f64> {
    let _ = (values, groups);
    todo!()
}

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

/// Summaries of every column, with ICC(1) and within-variation per grouping column.
pub fn summarize(frame: &Frame, groupings: &[&str]) -> Vec<ColumnSummary> {
    let _ = (frame, groupings);
    todo!()
}
