//! Readers: bytes in, a [`Table`](crate::table::Table) out. Readers never
//! touch the file system; the CLI and the page hand them the bytes.

pub mod csv;

use std::fmt;

/// Why a file could not be read as a table.
#[derive(Clone, Debug, PartialEq)]
pub enum ReadError {
    /// The file has no bytes, or only blank lines.
    Empty,
    /// The file has a header line but no data rows.
    HeaderOnly,
    /// A data row has a different number of cells than the header.
    Ragged { line: usize, expected: usize, found: usize },
    /// A quoted cell is never closed.
    UnclosedQuote { line: usize },
    /// The bytes are not UTF-8 text.
    NotText { offset: usize },
}

impl fmt::Display for ReadError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            ReadError::Empty => write!(f, "The file is empty: there is no header row and no data."),
            ReadError::HeaderOnly => write!(f, "The file has a header row but no data rows."),
            ReadError::Ragged { line, expected, found } => write!(
                f,
                "Line {line} has {found} cells but the header has {expected}; every row needs one cell per column."
            ),
            ReadError::UnclosedQuote { line } => {
                write!(f, "A quoted cell that starts on line {line} is never closed with a matching quote.")
            }
            ReadError::NotText { offset } => {
                write!(f, "The file is not readable text (invalid UTF-8 at byte {offset}).")
            }
        }
    }
}

impl std::error::Error for ReadError {}
