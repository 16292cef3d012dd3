//! Readers: bytes in, a [`Table`] out. Readers never touch the file
//! system; the CLI and the page hand them the bytes.
//!
//! [`read_table`] tells a workbook from text by its first bytes (a zip
//! archive or an OLE compound file is a workbook) and reads it; text is
//! decoded, its delimiter and decimal mark found, and the header located
//! below any title rows.

pub mod cells;
mod cfb_guard;
pub mod columns;
pub mod csv;
pub mod text;
pub mod workbook;

use crate::table::Table;
use cells::Decimal;
use std::fmt;
use text::Encoding;

/// Size limits that keep a hostile or huge file from taking the tab down.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct Limits {
    /// Largest number of cells (rows × columns) a table may have.
    /// Default 50 million: about 400 MB of numbers.
    pub max_cells: usize,
    /// Largest total uncompressed size a workbook's parts may declare.
    /// Default 1 GiB.
    pub max_unzipped_bytes: u64,
    /// Largest total of shared text an .xlsx sheet may copy into its cells
    /// (a few kilobytes of text, referred to by a million cells, would be
    /// gigabytes once every cell holds its own copy). Default 1 GiB.
    pub max_cell_text_bytes: u64,
}

impl Default for Limits {
    fn default() -> Self {
        Limits { max_cells: 50_000_000, max_unzipped_bytes: 1 << 30, max_cell_text_bytes: 1 << 30 }
    }
}

/// How to read the bytes; every field left `None` is detected.
#[derive(Clone, Debug, Default, PartialEq)]
pub struct ReadOptions {
    /// The sheet of a workbook; by default the first with data.
    pub sheet: Option<String>,
    /// The 1-based row (sheet row or text line) that holds the header.
    pub header_row: Option<usize>,
    /// The delimiter of text.
    pub delimiter: Option<u8>,
    /// The decimal mark of text.
    pub decimal: Option<Decimal>,
    pub limits: Limits,
}

/// What kind of input it was.
#[derive(Clone, Copy, Debug, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Format {
    Workbook,
    Text,
    /// Cells pasted from a spreadsheet (tab-separated text).
    Paste,
}

/// A table and how it was read.
#[derive(Clone, Debug)]
pub struct Loaded {
    pub table: Table,
    pub format: Format,
    /// All sheets of a workbook (empty for text).
    pub sheets: Vec<String>,
    /// The 1-based row or line of the header.
    pub header_row: usize,
    pub delimiter: Option<char>,
    pub decimal: Decimal,
    pub encoding: Option<Encoding>,
    /// What the reader decided, in plain words (skipped title rows, ...).
    pub notes: Vec<String>,
}

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
    /// The bytes are not text (a NUL byte, or invalid UTF-8 after a BOM).
    NotText { offset: usize },
    /// The bytes look like a workbook but could not be read as one.
    Workbook { detail: String },
    /// The named sheet does not exist.
    NoSuchSheet { sheet: String, sheets: Vec<String> },
    /// The header row asked for is blank or outside the data.
    NoSuchHeaderRow { row: usize },
    /// More cells than [`Limits::max_cells`].
    TooManyCells { limit: usize },
    /// A workbook that would unpack to more than [`Limits::max_unzipped_bytes`].
    TooLargeUnpacked { declared: u64, limit: u64 },
    /// The progress callback asked to stop.
    Stopped,
    /// A sheet whose cells would hold more than [`Limits::max_cell_text_bytes`] of text.
    TooMuchText { limit: u64 },
}

impl fmt::Display for ReadError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            ReadError::Empty => write!(f, "The file is empty: there is no header row and no data."),
            ReadError::Stopped => write!(f, "Reading was stopped before it finished; the data loaded before are unchanged."),
            ReadError::TooMuchText { limit } => write!(
                f,
                "The sheet repeats its texts so often that its cells would hold more than {} MB of text, more than plumbline \
                 holds. Save the sheet with fewer or shorter text cells (or only the columns the model needs) and open it again.",
                limit >> 20
            ),
            ReadError::HeaderOnly => write!(f, "The file has a header row but no data rows."),
            ReadError::Ragged { line, expected, found } => write!(
                f,
                "Line {line} has {found} cells but the header has {expected}; every row needs one cell per column."
            ),
            ReadError::UnclosedQuote { line } => {
                write!(f, "A quoted cell that starts on line {line} is never closed with a matching quote.")
            }
            ReadError::NotText { offset } => write!(
                f,
                "The file is neither a workbook nor readable text (unexpected bytes at byte {offset}). \
                 It may be damaged, or of a kind plumbline does not read."
            ),
            ReadError::Workbook { detail } => write!(
                f,
                "The file looks like a workbook but could not be read; it may be damaged or only partly copied ({detail})."
            ),
            ReadError::NoSuchSheet { sheet, sheets } => write!(
                f,
                "There is no sheet called \"{sheet}\"; the sheets are {}.",
                sheets.iter().map(|s| format!("\"{s}\"")).collect::<Vec<_>>().join(", ")
            ),
            ReadError::NoSuchHeaderRow { row } => {
                write!(f, "Row {row} cannot be the header: it is blank or outside the data.")
            }
            ReadError::TooManyCells { limit } => write!(
                f,
                "The table has more than {limit} cells, more than plumbline holds in memory at once. \
                 Use fewer rows or columns (for example, export only the columns you need)."
            ),
            ReadError::TooLargeUnpacked { declared, limit } => write!(
                f,
                "The workbook would unpack to {} MB, more than the {} MB plumbline allows; it is refused \
                 so that it cannot exhaust memory.",
                declared / 1_000_000,
                limit / 1_000_000
            ),
        }
    }
}

impl std::error::Error for ReadError {}

/// Zip archives (xlsx, xlsm, xlsb, ods) and OLE compound files (xls).
pub fn is_workbook(bytes: &[u8]) -> bool {
    bytes.starts_with(b"PK\x03\x04") || bytes.starts_with(&[0xD0, 0xCF, 0x11, 0xE0, 0xA1, 0xB1, 0x1A, 0xE1])
}

/// Reads a workbook or delimited text.
pub fn read_table(bytes: &[u8], options: &ReadOptions) -> Result<Loaded, ReadError> {
    read_table_progress(bytes, options, &mut |_| true)
}

/// Reads a block of cells pasted from a spreadsheet.
pub fn read_paste(text: &str, options: &ReadOptions) -> Result<Loaded, ReadError> {
    csv::read_delimited(text.as_bytes(), options, Format::Paste, &mut |_| true)
}

/// Called with the share of the reading done (0 to 1); returning false
/// stops the reading with [`ReadError::Stopped`].
pub type Progress<'a> = &'a mut dyn FnMut(f64) -> bool;

/// As [`read_table`], reporting progress: delimited text every few
/// thousand records of each of its two passes; an .xlsx every 65,536 cells
/// of its sheet; other workbooks only before and after their sheet (the
/// library parses those in one call).
pub fn read_table_progress(bytes: &[u8], options: &ReadOptions, progress: Progress) -> Result<Loaded, ReadError> {
    if is_workbook(bytes) {
        if !progress(0.0) {
            return Err(ReadError::Stopped);
        }
        let loaded = workbook::read_workbook_progress(bytes, options, Format::Workbook, &mut *progress)?;
        progress(1.0);
        Ok(loaded)
    } else {
        csv::read_delimited(bytes, options, Format::Text, progress)
    }
}

/// As [`read_paste`], reporting progress.
pub fn read_paste_progress(text: &str, options: &ReadOptions, progress: Progress) -> Result<Loaded, ReadError> {
    csv::read_delimited(text.as_bytes(), options, Format::Paste, progress)
}

/// The sheets of a workbook; empty for text.
pub fn list_sheets(bytes: &[u8]) -> Result<Vec<String>, ReadError> {
    if is_workbook(bytes) {
        workbook::list_sheets(bytes)
    } else {
        Ok(Vec::new())
    }
}

/// Refuses a zip archive whose entries declare more than the limit once
/// unpacked, reading only its central directory (PKWARE APPNOTE 6.3, §4.3.12
/// and §4.3.16). ZIP64 sizes count as over the limit.
pub(crate) fn zip_guard(bytes: &[u8], limits: Limits) -> Result<(), ReadError> {
    if !bytes.starts_with(b"PK\x03\x04") {
        return Ok(());
    }
    let u16_at = |i: usize| bytes.get(i..i + 2).map(|b| u16::from_le_bytes([b[0], b[1]]) as usize);
    let u32_at = |i: usize| bytes.get(i..i + 4).map(|b| u32::from_le_bytes([b[0], b[1], b[2], b[3]]));
    // The end-of-central-directory record is within the last 64 KiB + 22 bytes.
    let from = bytes.len().saturating_sub(65_557);
    let Some(eocd) = (from..bytes.len().saturating_sub(21)).rev().find(|&i| bytes[i..].starts_with(b"PK\x05\x06")) else {
        return Err(ReadError::Workbook { detail: "the end of the zip archive is missing".into() });
    };
    let entries = u16_at(eocd + 10).unwrap_or(0);
    let mut at = u32_at(eocd + 16).unwrap_or(u32::MAX) as usize;
    let mut total: u64 = 0;
    for _ in 0..entries {
        if u32_at(at) != Some(0x0201_4b50) {
            return Err(ReadError::Workbook { detail: "the zip directory is damaged".into() });
        }
        let size = u32_at(at + 24).unwrap_or(u32::MAX);
        total += if size == u32::MAX { limits.max_unzipped_bytes + 1 } else { size as u64 };
        let (name, extra, comment) = (u16_at(at + 28).unwrap_or(0), u16_at(at + 30).unwrap_or(0), u16_at(at + 32).unwrap_or(0));
        at += 46 + name + extra + comment;
    }
    if total > limits.max_unzipped_bytes {
        return Err(ReadError::TooLargeUnpacked { declared: total, limit: limits.max_unzipped_bytes });
    }
    Ok(())
}
