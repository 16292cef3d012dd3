//! Delimited text (CSV, TSV, semicolon- or pipe-separated, and blocks
//! pasted from a spreadsheet) into a table.
//!
//! The text is walked twice and never held as a grid of strings: a first
//! pass types each column, a second fills it. Memory beyond the input is
//! the table itself (8 bytes per numeric cell).

use super::cells::{decimal_vote, Decimal};
use super::columns::{cell_warnings, find_header, header_names, ColumnFill, ColumnScan, RawCell};
use super::text::{decode, sniff_delimiter, Records};
use super::{Format, Loaded, ReadError, ReadOptions};
use crate::table::Table;

/// Reads comma-separated (or sniffed) bytes with default options.
pub fn read_csv(bytes: &[u8]) -> Result<Table, ReadError> {
    read_delimited(bytes, &ReadOptions::default(), Format::Text, &mut |_| true).map(|l| l.table)
}

/// Records looked at to find the delimiter, the decimal mark and the header.
const SNIFF_RECORDS: usize = 2000;

/// Records between two progress reports.
pub const PROGRESS_EVERY: usize = 8192;

/// Reads delimited text. `format` is `Text` for files and `Paste` for a
/// block copied from a spreadsheet (tab-separated).
/// `progress` hears the share done every [`PROGRESS_EVERY`] records (the
/// first pass is the first half).
pub fn read_delimited(bytes: &[u8], options: &ReadOptions, format: Format, progress: super::Progress) -> Result<Loaded, ReadError> {
    let limits = options.limits;
    if bytes.iter().all(|b| b.is_ascii_whitespace()) {
        return Err(ReadError::Empty);
    }
    let (text, encoding) = decode(bytes)?;
    let text: &str = &text;
    let delim = match (options.delimiter, format) {
        (Some(d), _) => d,
        (None, Format::Paste) => b'\t',
        (None, _) => sniff_delimiter(text),
    };

    // The first records, for the decimal mark and the header.
    let mut sample: Vec<(usize, Vec<String>)> = Vec::new();
    for rec in Records::new(text, delim).take(SNIFF_RECORDS) {
        let rec = rec?;
        if !rec.is_blank() {
            sample.push((rec.line, rec.cells.iter().map(|c| c.to_string()).collect()));
        }
    }
    if sample.is_empty() {
        return Err(ReadError::Empty);
    }
    let decimal = options.decimal.unwrap_or_else(|| {
        let (mut point, mut comma) = (0usize, 0usize);
        for (_, cells) in &sample {
            for c in cells {
                match decimal_vote(c) {
                    Some(Decimal::Point) => point += 1,
                    Some(Decimal::Comma) => comma += 1,
                    None => {}
                }
            }
        }
        if comma > point {
            Decimal::Comma
        } else {
            Decimal::Point
        }
    });
    let raw_rows: Vec<Vec<RawCell>> = sample
        .iter()
        .take(40)
        .map(|(_, cells)| cells.iter().map(|c| if c.trim().is_empty() { RawCell::Empty } else { RawCell::Text(c) }).collect())
        .collect();
    let header_index = match options.header_row {
        Some(line) => sample.iter().position(|(l, _)| *l == line).ok_or(ReadError::NoSuchHeaderRow { row: line })?,
        None => find_header(&raw_rows, decimal),
    };
    let header_line = sample[header_index].0;
    let header_cells = &sample[header_index].1;
    // Trailing empty header cells (a trailing delimiter) are not columns.
    let named = header_cells.iter().rposition(|c| !c.trim().is_empty()).map_or(0, |i| i + 1);
    let full_width = header_cells.len();
    let mut warnings = Vec::new();
    let header_raw: Vec<RawCell> = header_cells.iter().map(|c| RawCell::Text(c)).collect();

    // Pass 1: shape and types.
    let mut scans = vec![ColumnScan::default(); full_width];
    let mut n_rows = 0usize;
    let total = text.len().max(1) as f64;
    let mut records = Records::new(text, delim);
    let mut seen = 0usize;
    while let Some(rec) = records.next() {
        seen += 1;
        if seen.is_multiple_of(PROGRESS_EVERY) && !progress(0.5 * records.position() as f64 / total) {
            return Err(ReadError::Stopped);
        }
        let rec = rec?;
        if rec.line <= header_line || rec.is_blank() {
            continue;
        }
        check_width(&rec.cells, full_width, named, rec.line)?;
        for (j, c) in rec.cells.iter().take(full_width).enumerate() {
            scans[j].add(&raw(c), decimal);
        }
        n_rows += 1;
        if n_rows.saturating_mul(full_width.max(1)) > limits.max_cells {
            return Err(ReadError::TooManyCells { limit: limits.max_cells });
        }
    }
    if n_rows == 0 {
        return Err(ReadError::HeaderOnly);
    }
    // Columns past the named ones are kept only if they hold data.
    let width = (named..full_width).rev().find(|&j| scans[j].has_data()).map_or(named, |j| j + 1).max(1);
    let names = header_names(&header_raw, width, &mut warnings);
    let mut fills: Vec<ColumnFill> = scans[..width]
        .iter()
        .zip(&names)
        .map(|(s, name)| {
            let (kind, warning) = s.decide(name);
            warnings.extend(warning);
            ColumnFill::new(kind, decimal, n_rows)
        })
        .collect();

    // Pass 2: values.
    let mut source_rows = Vec::with_capacity(n_rows);
    let mut records = Records::new(text, delim);
    let mut seen = 0usize;
    while let Some(rec) = records.next() {
        seen += 1;
        if seen.is_multiple_of(PROGRESS_EVERY) && !progress(0.5 + 0.5 * records.position() as f64 / total) {
            return Err(ReadError::Stopped);
        }
        let rec = rec?;
        if rec.line <= header_line || rec.is_blank() {
            continue;
        }
        let row = source_rows.len();
        for (j, fill) in fills.iter_mut().enumerate() {
            let cell = rec.cells.get(j).map_or(RawCell::Empty, |c| raw(c));
            fill.push(&cell, row);
        }
        source_rows.push(rec.line);
    }
    let columns: Vec<_> = fills.into_iter().zip(names).map(|(f, n)| f.finish(n)).collect();
    cell_warnings(&columns, &source_rows, &mut warnings);
    let skipped_above = sample.iter().take(header_index).count();
    let mut notes = Vec::new();
    if skipped_above > 0 {
        notes.push(format!(
            "The header is on line {header_line}; {skipped_above} {} above it (a title or notes) {} skipped.",
            if skipped_above == 1 { "line" } else { "lines" },
            if skipped_above == 1 { "was" } else { "were" }
        ));
    }
    Ok(Loaded {
        table: Table { columns, source_rows, sheet: None, warnings },
        format,
        sheets: Vec::new(),
        header_row: header_line,
        delimiter: Some(delim as char),
        decimal,
        encoding: Some(encoding),
        notes,
    })
}

fn raw<'a>(c: &'a str) -> RawCell<'a> {
    if c.trim().is_empty() {
        RawCell::Empty
    } else {
        RawCell::Text(c)
    }
}

/// A data row must have one cell per header column; extra cells are
/// tolerated only when empty (a trailing delimiter).
fn check_width(cells: &[std::borrow::Cow<str>], width: usize, named: usize, line: usize) -> Result<(), ReadError> {
    let filled_to = cells.iter().rposition(|c| !c.trim().is_empty()).map_or(0, |i| i + 1);
    if filled_to > width || (cells.len() < named && cells.len() != width) {
        return Err(ReadError::Ragged { line, expected: width, found: cells.len() });
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::table::ColumnData;

    fn load(input: &str) -> Loaded {
        read_delimited(input.as_bytes(), &ReadOptions::default(), Format::Text, &mut |_| true).unwrap_or_else(|e| panic!("{input:?}: {e}"))
    }

    fn check(input: &str, expected_names: &[&str], expected_rows: &[usize]) -> Table {
        let t = load(input).table;
        let names: Vec<&str> = t.columns.iter().map(|c| c.name.as_str()).collect();
        assert_eq!(names, expected_names, "names of {input:?}");
        assert_eq!(t.source_rows, expected_rows, "row numbers of {input:?}");
        t
    }

    #[test]
    fn plain_numbers() {
        let t = check("y,x\n1,2\n3,4.5\n", &["y", "x"], &[2, 3]);
        assert_eq!(t.columns[1].data, ColumnData::Numeric(vec![2.0, 4.5].into()));
    }

    #[test]
    fn quotes_crlf_and_embedded_newlines_keep_line_numbers() {
        let t = check("\u{feff}\"a b\",c\r\n\"x\"\"y\",1\r\n\"two\nlines\",2\r\nz,3\r\n", &["a b", "c"], &[2, 3, 5]);
        assert_eq!(
            t.columns[0].data,
            ColumnData::Text(vec![Some("x\"y".into()), Some("two\nlines".into()), Some("z".into())])
        );
    }

    #[test]
    fn missing_markers_and_words_that_are_not_numbers() {
        let t = check("a,b\nNA,inf\n2,3\n,NaN\n", &["a", "b"], &[2, 3, 4]);
        match &t.columns[0].data {
            ColumnData::Numeric(v) => assert!(v[0].is_nan() && v[1] == 2.0 && v[2].is_nan()),
            other => panic!("a should be numeric: {other:?}"),
        }
        assert!(matches!(t.columns[1].data, ColumnData::Text(_)), "inf is text, not a number");
    }

    #[test]
    fn duplicate_and_blank_names_are_renamed_with_warnings() {
        let t = check("x,x,\n1,2,3\n4,5,6\n", &["x", "x_2", "column_3"], &[2, 3]);
        assert_eq!(t.warnings.len(), 2);
    }

    #[test]
    fn semicolons_and_decimal_commas() {
        let l = load("name;km;cost\nA;3,5;1.234,5\nB;4,25;12,0\n");
        assert_eq!((l.delimiter, l.decimal), (Some(';'), Decimal::Comma));
        assert_eq!(l.table.columns[1].data, ColumnData::Numeric(vec![3.5, 4.25].into()));
        assert_eq!(l.table.columns[2].data, ColumnData::Numeric(vec![1234.5, 12.0].into()));
    }

    #[test]
    fn titles_above_the_header_are_skipped() {
        let l = load("Delivery log\n\nid,km\nD-1,3\nD-2,4\n");
        assert_eq!(l.header_row, 3);
        assert_eq!(l.table.source_rows, [4, 5]);
        assert_eq!(l.notes.len(), 1, "{:?}", l.notes);
    }

    #[test]
    fn a_stray_note_in_a_numeric_column_is_a_warning() {
        let mut s = String::from("cost\n");
        for i in 0..30 {
            s.push_str(&format!("{i}\n"));
        }
        s.push_str("n/k\n");
        let t = load(&s).table;
        assert!(matches!(t.columns[0].data, ColumnData::Numeric(_)));
        assert_eq!(t.columns[0].invalid, [(30, "n/k".to_string())]);
        assert!(t.warnings[0].contains("row 32 holds \"n/k\""), "{:?}", t.warnings);
    }

    #[test]
    fn refusals_name_the_line() {
        let r = |s: &[u8]| read_delimited(s, &ReadOptions::default(), Format::Text, &mut |_| true).map(|_| ());
        assert_eq!(r(b""), Err(ReadError::Empty));
        assert_eq!(r(b"a,b\n"), Err(ReadError::HeaderOnly));
        assert_eq!(r(b"a,b\n1,2\n3,4,5\n"), Err(ReadError::Ragged { line: 3, expected: 2, found: 3 }));
        assert_eq!(r(b"a,b\n1,2\n3\n"), Err(ReadError::Ragged { line: 3, expected: 2, found: 1 }));
        assert_eq!(r(b"a,b\n\"1,2\n"), Err(ReadError::UnclosedQuote { line: 2 }));
        assert!(matches!(r(b"a,b\n\x00\x01,1\n"), Err(ReadError::NotText { .. })));
    }

    #[test]
    fn pasted_blocks_are_tab_separated_with_decimal_commas() {
        let l = read_delimited(b"x\ty\r\n1,5\t2\r\n2,5\t3\r\n", &ReadOptions::default(), Format::Paste, &mut |_| true).unwrap();
        assert_eq!(l.table.columns[0].data, ColumnData::Numeric(vec![1.5, 2.5].into()));
    }

    #[test]
    fn progress_rises_through_both_passes_and_can_stop_the_reading() {
        let mut text = String::from("x,y\n");
        for i in 0..(3 * PROGRESS_EVERY) {
            text.push_str(&format!("{i},{}\n", i % 7));
        }
        let mut seen = Vec::new();
        let l = read_delimited(text.as_bytes(), &ReadOptions::default(), Format::Text, &mut |p| {
            seen.push(p);
            true
        })
        .unwrap();
        assert_eq!(l.table.n_rows(), 3 * PROGRESS_EVERY);
        assert!(seen.len() >= 4, "{seen:?}");
        assert!(seen.windows(2).all(|w| w[0] < w[1]), "{seen:?}");
        assert!(seen[0] > 0.0 && *seen.last().unwrap() <= 1.0 && seen.iter().any(|&p| p > 0.5), "{seen:?}");
        let e = read_delimited(text.as_bytes(), &ReadOptions::default(), Format::Text, &mut |p| p < 0.5).unwrap_err();
        assert_eq!(e, ReadError::Stopped);
    }
}
