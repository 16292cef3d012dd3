//! The in-memory table every reader produces and every model reads.

use crate::values::Values;

/// A rectangular table of named columns, as read from a file or a paste.
#[derive(Clone, Debug, PartialEq)]
pub struct Table {
    pub columns: Vec<Column>,
    /// For each data row, where it sits in the source: the 1-based line of a
    /// text file (where the record starts) or the 1-based row of a sheet.
    pub source_rows: Vec<usize>,
    /// The sheet the table came from, for workbooks.
    pub sheet: Option<String>,
    /// Things the reader noticed and worked around, in plain words.
    pub warnings: Vec<String>,
}

/// One named column.
#[derive(Clone, Debug, PartialEq)]
pub struct Column {
    pub name: String,
    pub data: ColumnData,
    /// Cells of a numeric or date column that were neither a value nor a
    /// missing marker: (data row index, cell text), the first few of them.
    /// They read as missing, and a model that uses the column refuses them.
    pub invalid: Vec<(usize, String)>,
    /// How many such cells there are in all.
    pub invalid_count: usize,
    /// Spreadsheet error values (#DIV/0!, #N/A, ...), read as missing.
    pub errors: usize,
}

impl Column {
    pub fn new(name: impl Into<String>, data: ColumnData) -> Column {
        Column { name: name.into(), data, invalid: Vec::new(), invalid_count: 0, errors: 0 }
    }
}

/// A column's cells. NaN and `None` mark missing cells.
#[derive(Clone, Debug, PartialEq)]
pub enum ColumnData {
    Numeric(Values),
    /// Dates as days since 1970-01-01 (a fraction for the time of day).
    Date(Values),
    /// Text cells.
    Text(Vec<Option<String>>),
}

impl ColumnData {
    pub fn len(&self) -> usize {
        match self {
            ColumnData::Numeric(v) | ColumnData::Date(v) => v.len(),
            ColumnData::Text(v) => v.len(),
        }
    }

    pub fn is_empty(&self) -> bool {
        self.len() == 0
    }

    pub fn is_missing(&self, row: usize) -> bool {
        match self {
            ColumnData::Numeric(v) | ColumnData::Date(v) => v[row].is_nan(),
            ColumnData::Text(v) => v[row].is_none(),
        }
    }
}

impl Table {
    pub fn n_rows(&self) -> usize {
        self.source_rows.len()
    }

    pub fn column(&self, name: &str) -> Option<&Column> {
        self.columns.iter().find(|c| c.name == name)
    }

    /// Builds a table of numeric columns, numbering rows as a file with one
    /// header line would (first data row = line 2). For tests and benchmarks.
    pub fn from_numeric(columns: Vec<(String, Vec<f64>)>) -> Table {
        let n = columns.first().map_or(0, |c| c.1.len());
        Table {
            columns: columns.into_iter().map(|(name, v)| Column::new(name, ColumnData::Numeric(v.into()))).collect(),
            source_rows: (2..n + 2).collect(),
            sheet: None,
            warnings: Vec::new(),
        }
    }
}

/// Parses a cell as a plain decimal number (digits, sign, point, exponent).
/// Words that `f64::from_str` would accept, such as `inf` or `NaN`, are not
/// numbers here.
pub fn parse_number(s: &str) -> Option<f64> {
    let t = s.trim();
    if t.is_empty() || !t.bytes().any(|b| b.is_ascii_digit()) {
        return None;
    }
    if !t.bytes().all(|b| b.is_ascii_digit() || matches!(b, b'+' | b'-' | b'.' | b'e' | b'E')) {
        return None;
    }
    t.parse::<f64>().ok().filter(|v| v.is_finite())
}

/// Cell texts that mean "no value" (`nan` and `NULL` are what common
/// data tools write for a missing number).
pub fn is_missing_marker(s: &str) -> bool {
    matches!(s.trim(), "" | "NA" | "N/A" | "n/a" | "NaN" | "nan" | "NAN" | "NULL" | "null" | "-" | ".")
}
