//! The sentences a reader error prints. They name the file, the line and what
//! is wrong there, because the user fixes the file by hand and needs to know
//! where to look.

use crate::ReadError;
use std::fmt;
use std::path::{Path, PathBuf};

fn place(path: &Option<PathBuf>) -> String {
    match path {
        Some(p) => p.display().to_string(),
        None => "the data".to_string(),
    }
}

fn plural(n: usize, one: &str, many: &str) -> String {
    if n == 1 {
        format!("1 {one}")
    } else {
        format!("{n} {many}")
    }
}

impl fmt::Display for ReadError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            ReadError::Io { path, message } => {
                write!(f, "{} cannot be read: {message}", path.display())
            }
            ReadError::Empty { path } => {
                write!(f, "{} is empty: there is no header line", place(path))
            }
            ReadError::Ragged {
                path,
                line,
                expected,
                found,
            } => write!(
                f,
                "{}, line {line}: {} where the header has {expected}",
                place(path),
                plural(*found, "field", "fields")
            ),
            ReadError::DuplicateColumn {
                path,
                name,
                first,
                second,
            } => write!(
                f,
                "{}, header: columns {first} and {second} are both named `{name}`",
                place(path)
            ),
            ReadError::InvalidUtf8 { path, line } => write!(
                f,
                "{}, line {line}: the bytes are not UTF-8 text (save the file as UTF-8)",
                place(path)
            ),
            ReadError::UnterminatedQuote { path, line } => write!(
                f,
                "{}, line {line}: a quoted field opens here and is never closed",
                place(path)
            ),
        }
    }
}

impl ReadError {
    /// The same error attributed to `path` (the reader parses bytes first and
    /// only then knows which file they came from).
    pub fn with_path(self, path: &Path) -> ReadError {
        let p = Some(path.to_path_buf());
        match self {
            ReadError::Io { .. } => self,
            ReadError::Empty { .. } => ReadError::Empty { path: p },
            ReadError::Ragged {
                line,
                expected,
                found,
                ..
            } => ReadError::Ragged {
                path: p,
                line,
                expected,
                found,
            },
            ReadError::DuplicateColumn {
                name,
                first,
                second,
                ..
            } => ReadError::DuplicateColumn {
                path: p,
                name,
                first,
                second,
            },
            ReadError::InvalidUtf8 { line, .. } => ReadError::InvalidUtf8 { path: p, line },
            ReadError::UnterminatedQuote { line, .. } => {
                ReadError::UnterminatedQuote { path: p, line }
            }
        }
    }

    /// The 1-based line at fault, where there is one.
    pub fn line(&self) -> Option<usize> {
        match self {
            ReadError::Ragged { line, .. }
            | ReadError::InvalidUtf8 { line, .. }
            | ReadError::UnterminatedQuote { line, .. } => Some(*line),
            _ => None,
        }
    }
}
