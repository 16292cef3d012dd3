//! From rows of raw cells to typed columns, shared by the text and the
//! workbook readers: finding the header row, deciding each column's type
//! (numbers, dates or text) in a first pass, and filling it in a second.

use super::cells::{self, DayOrder, Decimal};
use crate::table::{is_missing_marker, Column, ColumnData};

/// A cell as a reader sees it, before typing.
#[derive(Clone, Debug, PartialEq)]
pub enum RawCell<'a> {
    Empty,
    /// Text to be interpreted (a CSV field, or a string cell of a sheet).
    Text(&'a str),
    Number(f64),
    /// Days since 1970-01-01.
    Date(f64),
    Bool(bool),
    /// A spreadsheet error value such as #DIV/0!.
    Error,
}

impl RawCell<'_> {
    pub fn is_empty(&self) -> bool {
        match self {
            RawCell::Empty => true,
            RawCell::Text(s) => s.trim().is_empty(),
            _ => false,
        }
    }

    /// The cell as a header name.
    fn as_name(&self) -> String {
        match self {
            RawCell::Empty | RawCell::Error => String::new(),
            RawCell::Text(s) => s.trim().to_string(),
            RawCell::Number(v) => format!("{v}"),
            RawCell::Date(d) => cells::format_date(*d),
            RawCell::Bool(b) => b.to_string(),
        }
    }

    /// True for a cell that reads as a label rather than a value.
    fn is_label(&self, decimal: Decimal) -> bool {
        match self {
            RawCell::Text(s) => {
                let t = s.trim();
                !t.is_empty() && cells::parse_decimal(t, decimal).is_none() && !cells::looks_like_date(t)
            }
            _ => false,
        }
    }
}

/// Chooses the header among the first non-blank rows: the first row that
/// is at least half as wide as the data and mostly labels; rows above it
/// (titles, notes, blank lines) are skipped. Returns an index into `rows`.
pub fn find_header(rows: &[Vec<RawCell>], decimal: Decimal) -> usize {
    let filled = |r: &[RawCell]| r.iter().filter(|c| !c.is_empty()).count();
    let counts: Vec<usize> = rows.iter().map(|r| filled(r)).collect();
    // The data's width: the most common filled count (ties to the wider).
    let mut width = 0;
    let mut best = 0;
    for &c in &counts {
        let n = counts.iter().filter(|&&k| k == c).count();
        if (n, c) > (best, width) {
            best = n;
            width = c;
        }
    }
    let need = (width.div_ceil(2)).max(if width >= 2 { 2 } else { 1 });
    let wide: Vec<usize> = (0..rows.len()).filter(|&i| counts[i] >= need).collect();
    for &i in &wide {
        let labels = rows[i].iter().filter(|c| c.is_label(decimal)).count();
        if labels * 2 >= counts[i] {
            return i;
        }
    }
    wide.first().copied().unwrap_or(0)
}

/// Column names from the header row: blanks get `column_N`, repeats get a
/// suffix, each with a warning.
pub fn header_names(header: &[RawCell], width: usize, warnings: &mut Vec<String>) -> Vec<String> {
    let mut names: Vec<String> = (0..width).map(|j| header.get(j).map_or(String::new(), RawCell::as_name)).collect();
    for (j, name) in names.iter_mut().enumerate() {
        if name.is_empty() {
            *name = format!("column_{}", j + 1);
            warnings.push(format!("Column {} has no name in the header; it is called {name}.", j + 1));
        }
    }
    for j in 0..names.len() {
        if names[..j].contains(&names[j]) {
            let base = names[j].clone();
            let mut k = 2;
            while names.contains(&format!("{base}_{k}")) {
                k += 1;
            }
            names[j] = format!("{base}_{k}");
            warnings.push(format!(
                "The header name \"{base}\" appears more than once; column {} is called \"{}\".",
                j + 1,
                names[j]
            ));
        }
    }
    names
}

/// How many invalid cells a numeric column may hold, as a share of its
/// non-missing cells, before it is read as text instead; a single stray
/// cell among four or more numbers is always tolerated (a judgement, no
/// source: one stray note among numbers is a typo, not a label).
const INVALID_SHARE: usize = 20;
/// Examples of invalid cells kept per column.
const INVALID_EXAMPLES: usize = 20;

/// What the first pass learnt about one column.
#[derive(Clone, Debug, Default)]
pub struct ColumnScan {
    missing: usize,
    errors: usize,
    numbers: usize,
    dates: usize,
    text_dates: usize,
    other_text: usize,
    leading_zero_codes: usize,
    day_first: usize,
    month_first: usize,
    ambiguous_slash: usize,
}

/// The type a column was given.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum ColumnType {
    Numeric,
    Date(DayOrder),
    Text,
}

impl ColumnScan {
    pub fn add(&mut self, cell: &RawCell, decimal: Decimal) {
        match cell {
            RawCell::Empty => self.missing += 1,
            RawCell::Error => self.errors += 1,
            RawCell::Number(_) | RawCell::Bool(_) => self.numbers += 1,
            RawCell::Date(_) => self.dates += 1,
            RawCell::Text(s) => {
                let t = s.trim();
                if is_missing_marker(t) {
                    self.missing += 1;
                } else if cells::is_error_marker(t) {
                    self.errors += 1;
                } else if cells::parse_decimal(t, decimal).is_some() {
                    self.numbers += 1;
                    let b = t.as_bytes();
                    if b.len() > 1 && b[0] == b'0' && b.iter().all(|c| c.is_ascii_digit()) {
                        self.leading_zero_codes += 1;
                    }
                } else if cells::looks_like_date(t) {
                    self.text_dates += 1;
                    match cells::date_order_vote(t) {
                        Some(DayOrder::DayFirst) => self.day_first += 1,
                        Some(DayOrder::MonthFirst) => self.month_first += 1,
                        None if !cells::is_iso_date(t) && !t.contains('.') => self.ambiguous_slash += 1,
                        None => {}
                    }
                } else {
                    self.other_text += 1;
                }
            }
        }
    }

    /// True when anything besides missing cells was seen.
    pub fn has_data(&self) -> bool {
        self.numbers + self.dates + self.text_dates + self.other_text + self.errors > 0
    }

    /// Decides the column's type; a warning explains a doubtful choice.
    pub fn decide(&self, name: &str) -> (ColumnType, Option<String>) {
        let filled = self.numbers + self.dates + self.text_dates + self.other_text;
        if filled == 0 {
            return (ColumnType::Numeric, None);
        }
        if self.leading_zero_codes > 0 && self.numbers == filled {
            return (ColumnType::Text, None);
        }
        if self.dates + self.text_dates == filled {
            if self.day_first > 0 && self.month_first > 0 {
                return (
                    ColumnType::Text,
                    Some(format!("Column \"{name}\" mixes day-first and month-first dates, so it is read as text.")),
                );
            }
            if self.month_first > 0 {
                return (ColumnType::Date(DayOrder::MonthFirst), None);
            }
            if self.day_first == 0 && self.ambiguous_slash > 0 {
                return (
                    ColumnType::Text,
                    Some(format!(
                        "Column \"{name}\" holds dates like 03/04/2025 that could be day/month or month/day, so it is read as text."
                    )),
                );
            }
            return (ColumnType::Date(DayOrder::DayFirst), None);
        }
        let strays = self.text_dates + self.other_text + self.dates;
        let few_strays = strays * INVALID_SHARE <= filled || strays == 1;
        if self.numbers == filled || (self.numbers >= 4 && few_strays) {
            return (ColumnType::Numeric, None);
        }
        (ColumnType::Text, None)
    }
}

/// Fills one column in the second pass.
pub struct ColumnFill {
    kind: ColumnType,
    decimal: Decimal,
    values: Vec<f64>,
    texts: Vec<Option<String>>,
    invalid: Vec<(usize, String)>,
    invalid_count: usize,
    errors: usize,
}

impl ColumnFill {
    pub fn new(kind: ColumnType, decimal: Decimal, capacity: usize) -> ColumnFill {
        let (values, texts) = match kind {
            ColumnType::Text => (Vec::new(), Vec::with_capacity(capacity)),
            _ => (Vec::with_capacity(capacity), Vec::new()),
        };
        ColumnFill { kind, decimal, values, texts, invalid: Vec::new(), invalid_count: 0, errors: 0 }
    }

    /// Adds a cell of data row `row` (0-based among the data rows).
    pub fn push(&mut self, cell: &RawCell, row: usize) {
        let text = match cell {
            RawCell::Text(s) => Some(s.trim()),
            _ => None,
        };
        let is_error = matches!(cell, RawCell::Error) || text.is_some_and(cells::is_error_marker);
        if is_error {
            self.errors += 1;
        }
        let missing = is_error || cell.is_empty() || text.is_some_and(is_missing_marker);
        match self.kind {
            ColumnType::Text => self.texts.push(if missing {
                None
            } else {
                Some(match cell {
                    RawCell::Text(s) => s.trim().to_string(),
                    other => other.as_name(),
                })
            }),
            ColumnType::Numeric | ColumnType::Date(_) => {
                let v = if missing {
                    f64::NAN
                } else {
                    let parsed = match (cell, self.kind) {
                        (RawCell::Number(v), ColumnType::Numeric) => Some(*v),
                        (RawCell::Bool(b), ColumnType::Numeric) => Some(f64::from(u8::from(*b))),
                        (RawCell::Date(d), ColumnType::Date(_)) => Some(*d),
                        (RawCell::Text(s), ColumnType::Numeric) => cells::parse_decimal(s, self.decimal),
                        (RawCell::Text(s), ColumnType::Date(order)) => cells::parse_date(s, order),
                        _ => None,
                    };
                    parsed.unwrap_or_else(|| {
                        self.invalid_count += 1;
                        if self.invalid.len() < INVALID_EXAMPLES {
                            self.invalid.push((row, cell.as_name()));
                        }
                        f64::NAN
                    })
                };
                self.values.push(v);
            }
        }
    }

    pub fn finish(self, name: String) -> Column {
        let data = match self.kind {
            ColumnType::Numeric => ColumnData::Numeric(self.values.into()),
            ColumnType::Date(_) => ColumnData::Date(self.values.into()),
            ColumnType::Text => ColumnData::Text(self.texts),
        };
        Column { name, data, invalid: self.invalid, invalid_count: self.invalid_count, errors: self.errors }
    }
}

/// The single value of a column whose non-missing cells are all equal.
fn only_value(data: &ColumnData) -> Option<String> {
    match data {
        ColumnData::Numeric(v) | ColumnData::Date(v) => {
            let mut it = v.iter().filter(|x| !x.is_nan());
            let first = *it.next()?;
            it.all(|&x| x == first).then(|| match data {
                ColumnData::Date(_) => cells::format_date(first),
                _ => format!("{first}"),
            })
        }
        ColumnData::Text(v) => {
            let mut it = v.iter().flatten();
            let first = it.next()?;
            it.all(|x| x == first).then(|| format!("\"{first}\""))
        }
    }
}

/// Warnings for empty and constant columns and for invalid and error
/// cells, worded for the user.
pub fn cell_warnings(columns: &[Column], source_rows: &[usize], warnings: &mut Vec<String>) {
    for c in columns {
        let n = c.data.len();
        if (0..n).all(|i| c.data.is_missing(i)) {
            warnings.push(format!("Column \"{}\" is empty: all {n} cells are missing.", c.name));
        } else if let Some(v) = only_value(&c.data) {
            warnings.push(format!(
                "Column \"{}\" has the same value ({v}) in every row, so it cannot explain anything.",
                c.name
            ));
        }
        if let Some((row, text)) = c.invalid.first() {
            let kind = if matches!(c.data, ColumnData::Date(_)) { "a date" } else { "a number" };
            let more = c.invalid_count - 1;
            warnings.push(format!(
                "Column \"{}\" holds numbers, but row {} holds \"{}\", which is not {kind}{}. \
                 Such cells are kept out of any model that uses the column until they are fixed.",
                c.name,
                source_rows[*row],
                text,
                if more > 0 { format!(" ({more} more such cells)") } else { String::new() }
            ));
        }
        if c.errors > 0 {
            warnings.push(format!(
                "Column \"{}\" has {} spreadsheet error {} (such as #DIV/0! or #N/A), read as missing.",
                c.name,
                c.errors,
                if c.errors == 1 { "value" } else { "values" }
            ));
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn t(s: &str) -> RawCell<'_> {
        if s.is_empty() {
            RawCell::Empty
        } else {
            RawCell::Text(s)
        }
    }

    #[test]
    fn header_is_found_below_titles_and_blank_rows() {
        let rows = vec![
            vec![t("Delivery log"), t(""), t("")],
            vec![t(""), t(""), t("")],
            vec![t("id"), t("km"), t("minutes")],
            vec![t("D-1"), t("3,5"), t("20")],
            vec![t("D-2"), t("4,0"), t("25")],
        ];
        assert_eq!(find_header(&rows, Decimal::Comma), 2);
        let rows = vec![vec![t("y"), t("x")], vec![t("1"), t("2")]];
        assert_eq!(find_header(&rows, Decimal::Point), 0);
        // A header of numbers (years) is still a header when nothing else is.
        let rows = vec![vec![RawCell::Number(2023.0), RawCell::Number(2024.0)], vec![RawCell::Number(1.0), RawCell::Number(2.0)]];
        assert_eq!(find_header(&rows, Decimal::Point), 0);
    }

    fn decide(cells: &[&str]) -> ColumnType {
        let mut s = ColumnScan::default();
        for c in cells {
            s.add(&t(c), Decimal::Point);
        }
        s.decide("c").0
    }

    #[test]
    fn column_types() {
        assert_eq!(decide(&["1", "2.5", "NA", ""]), ColumnType::Numeric);
        assert_eq!(decide(&["007", "008", "010"]), ColumnType::Text);
        assert_eq!(decide(&["2025-01-02", "2025-02-03"]), ColumnType::Date(DayOrder::DayFirst));
        assert_eq!(decide(&["01/02/2025", "01/30/2025"]), ColumnType::Date(DayOrder::MonthFirst));
        assert_eq!(decide(&["01/02/2025", "03/04/2025"]), ColumnType::Text);
        assert_eq!(decide(&["a", "b", "1"]), ColumnType::Text);
        let mut many: Vec<&str> = vec!["1"; 30];
        many.push("n/k");
        assert_eq!(decide(&many), ColumnType::Numeric, "one stray note among 30 numbers");
        assert_eq!(decide(&["1", "2", "n/k"]), ColumnType::Text);
        assert_eq!(decide(&["1", "2", "3", "4", "n/k"]), ColumnType::Numeric);
        assert_eq!(decide(&["1", "2", "3", "4", "n/k", "?"]), ColumnType::Text);
    }
}
