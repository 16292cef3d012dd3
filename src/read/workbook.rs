//! Workbooks (xlsx, xlsm, xlsb, xls, ods) through calamine: one sheet into
//! a table, with the header found below any title rows.

use super::cells::Decimal;
use super::columns::{cell_warnings, find_header, header_names, ColumnFill, ColumnScan, RawCell};
use super::{Format, Loaded, ReadError, ReadOptions};
use crate::table::Table;
use calamine::{open_workbook_auto_from_rs, Cell, Data, Range, Reader, Sheets};
use std::io::Cursor;

/// The sheets of a workbook, in order.
pub fn list_sheets(bytes: &[u8]) -> Result<Vec<String>, ReadError> {
    let limits = super::Limits::default();
    super::zip_guard(bytes, limits)?;
    guarded(|| Ok(open(bytes, limits.max_cells)?.sheet_names()))
}

fn open(bytes: &[u8], max_cells: usize) -> Result<calamine::Sheets<Cursor<&[u8]>>, ReadError> {
    if bytes.starts_with(&[0xD0, 0xCF, 0x11, 0xE0]) {
        super::cfb_guard::check(bytes, max_cells).map_err(|detail| ReadError::Workbook { detail })?;
        // An OLE file is read as .xls and nothing else: handed to the zip
        // readers after an error, a zip archive hidden inside it would be
        // unpacked without the size check of `zip_guard`.
        return calamine::Xls::new(Cursor::new(bytes))
            .map(calamine::Sheets::Xls)
            .map_err(|e| ReadError::Workbook { detail: e.to_string() });
    }
    open_workbook_auto_from_rs(Cursor::new(bytes)).map_err(|e| ReadError::Workbook { detail: e.to_string() })
}

thread_local! {
    static GUARDED: std::cell::Cell<bool> = const { std::cell::Cell::new(false) };
}

/// True while the workbook reader runs under its panic guard, so that a
/// program's panic hook can stay quiet about a panic that will be caught.
pub fn panics_are_caught() -> bool {
    GUARDED.with(|g| g.get())
}

/// Runs `f` (which calls the workbook library) and turns a panic inside
/// it into a refusal. Native builds only catch it; in wasm a panic aborts,
/// which is why the container is checked before the library runs.
fn guarded<T>(f: impl FnOnce() -> Result<T, ReadError>) -> Result<T, ReadError> {
    GUARDED.with(|g| g.set(true));
    let r = std::panic::catch_unwind(std::panic::AssertUnwindSafe(f));
    GUARDED.with(|g| g.set(false));
    r.unwrap_or_else(|_| Err(ReadError::Workbook { detail: "the reader stopped on a damaged part of the file".into() }))
}

/// Days since 1970-01-01 of a spreadsheet date-time cell.
fn date_days(d: &calamine::ExcelDateTime) -> Option<f64> {
    // The library's conversion panics on a serial number of more than about
    // 10^8 days; no calendar date is that far out (9999-12-31 is 2,958,465).
    if d.as_f64().is_nan() || d.as_f64().abs() >= 1e7 {
        return None;
    }
    let dt = d.as_datetime()?;
    Some(dt.and_utc().timestamp_millis() as f64 / 86_400_000.0)
}

fn raw(cell: &Data) -> RawCell<'_> {
    match cell {
        Data::Empty => RawCell::Empty,
        Data::Int(i) => RawCell::Number(*i as f64),
        Data::Float(f) => RawCell::Number(*f),
        Data::Bool(b) => RawCell::Bool(*b),
        Data::String(s) => RawCell::Text(s),
        Data::DateTimeIso(s) | Data::DurationIso(s) => RawCell::Text(s),
        Data::DateTime(d) => {
            if d.is_duration() {
                RawCell::Number(d.as_f64())
            } else {
                date_days(d).map_or(RawCell::Error, RawCell::Date)
            }
        }
        Data::Error(_) => RawCell::Error,
    }
}

/// Reads one sheet (the first with data unless `options.sheet` names one).
pub fn read_workbook(bytes: &[u8], options: &ReadOptions, format: Format) -> Result<Loaded, ReadError> {
    read_workbook_progress(bytes, options, format, &mut |_| true)
}

/// As [`read_workbook`], telling `progress` the share of the sheet parsed
/// (an .xlsx, .xlsm: now and then as its rows go by; other workbooks, which
/// the library parses in one call, only at the end). `false` from it stops
/// the reading.
pub fn read_workbook_progress(bytes: &[u8], options: &ReadOptions, format: Format, progress: super::Progress) -> Result<Loaded, ReadError> {
    let mut highest = 0.0f64;
    // Never backwards: an empty sheet read before the one with data starts over.
    let mut report = |share: f64| {
        highest = highest.max(share.clamp(0.0, 1.0));
        progress(highest)
    };
    guarded(|| read_unguarded(bytes, options, format, &mut report))
}

/// Cells between two progress reports while an .xlsx sheet is parsed.
const CELLS_PER_REPORT: usize = 64 * 1024;

/// A sheet's values and, when the format keeps them, its formula texts.
/// An .xlsx sheet is parsed once for both, cell by cell, with progress;
/// the values are what the library's `worksheet_range` gives (the
/// non-empty cells, placed by `Range::from_sparse`), the formulas what
/// `worksheet_formula` gives. Other formats go through those two calls.
///
/// Before anything is placed in a grid, an .xlsx sheet is held to the
/// limits: the grid that spans its cells (two cells far apart make a huge
/// one) to `max_cells`, and the shared text copied into cells to
/// `max_cell_text_bytes`.
fn read_sheet(wb: &mut Sheets<Cursor<&[u8]>>, name: &str, limits: super::Limits, progress: super::Progress) -> Result<(Range<Data>, Option<Range<String>>), ReadError> {
    let fail = |e: &dyn std::fmt::Display| ReadError::Workbook { detail: e.to_string() };
    let Sheets::Xlsx(x) = wb else {
        let range = wb.worksheet_range(name).map_err(|e| fail(&e))?;
        let formulas = wb.worksheet_formula(name).ok();
        return Ok((range, formulas));
    };
    let mut reader = match x.worksheet_cells_reader(name) {
        Ok(r) => r,
        // A chart sheet or a dialog sheet holds no cells.
        Err(calamine::XlsxError::NotAWorksheet(_)) => return Ok((Range::default(), None)),
        Err(e) => return Err(fail(&e)),
    };
    let dims = reader.dimensions();
    let (first_row, rows) = (dims.start.0 as f64, (dims.end.0 as f64 - dims.start.0 as f64 + 1.0).max(1.0));
    let (mut values, mut formulas) = (Vec::new(), Vec::new());
    let mut seen = 0usize;
    let mut text = 0u64;
    // The bounding boxes of the values and of the formulas: (first row, last row, first column, last column).
    let mut boxes = [(u32::MAX, 0u32, u32::MAX, 0u32); 2];
    let mut widen = |b: usize, (r, c): (u32, u32)| -> Result<(), ReadError> {
        let bx = &mut boxes[b];
        *bx = (bx.0.min(r), bx.1.max(r), bx.2.min(c), bx.3.max(c));
        let cells = (bx.1 - bx.0 + 1) as u64 * (bx.3 - bx.2 + 1) as u64;
        if cells > limits.max_cells as u64 {
            return Err(ReadError::TooManyCells { limit: limits.max_cells });
        }
        Ok(())
    };
    while let Some(cell) = reader.next_cell_with_formula().map_err(|e| fail(&e))? {
        if let Some(f) = cell.formula.filter(|f| !f.is_empty()) {
            widen(1, cell.pos)?;
            formulas.push(Cell::new(cell.pos, f));
        }
        if !matches!(cell.value, calamine::DataRef::Empty) {
            widen(0, cell.pos)?;
            if let calamine::DataRef::SharedString(s) = &cell.value {
                text += s.len() as u64;
                if text > limits.max_cell_text_bytes {
                    return Err(ReadError::TooMuchText { limit: limits.max_cell_text_bytes });
                }
            }
            values.push(Cell::new(cell.pos, Data::from(cell.value)));
        }
        seen += 1;
        if seen.is_multiple_of(CELLS_PER_REPORT) && !progress((cell.pos.0 as f64 - first_row) / rows) {
            return Err(ReadError::Stopped);
        }
    }
    Ok((Range::from_sparse(values), Some(Range::from_sparse(formulas))))
}

fn read_unguarded(bytes: &[u8], options: &ReadOptions, format: Format, progress: super::Progress) -> Result<Loaded, ReadError> {
    let limits = options.limits;
    super::zip_guard(bytes, limits)?;
    let mut wb = open(bytes, limits.max_cells)?;
    let sheets = wb.sheet_names();
    if sheets.is_empty() {
        return Err(ReadError::Empty);
    }
    let mut chosen = None;
    match &options.sheet {
        Some(name) => {
            if !sheets.contains(name) {
                return Err(ReadError::NoSuchSheet { sheet: name.clone(), sheets: sheets.clone() });
            }
            let (range, formulas) = read_sheet(&mut wb, name, limits, progress)?;
            chosen = Some((name.clone(), range, formulas));
        }
        None => {
            for name in &sheets {
                let (range, formulas) = read_sheet(&mut wb, name, limits, progress)?;
                if !range.is_empty() {
                    chosen = Some((name.clone(), range, formulas));
                    break;
                }
            }
        }
    }
    let Some((sheet, range, formulas)) = chosen else {
        return Err(ReadError::Empty);
    };
    let (h, w) = range.get_size();
    if h.saturating_mul(w) > limits.max_cells {
        return Err(ReadError::TooManyCells { limit: limits.max_cells });
    }
    let (start_row, _) = range.start().unwrap_or((0, 0));
    // Non-blank rows with their 1-based sheet row numbers.
    let rows: Vec<(usize, &[Data])> = range
        .rows()
        .enumerate()
        .filter(|(_, r)| r.iter().any(|c| !raw(c).is_empty()))
        .map(|(i, r)| (start_row as usize + i + 1, r))
        .collect();
    if rows.is_empty() {
        return Err(ReadError::Empty);
    }
    let decimal = Decimal::Point;
    let sample: Vec<Vec<RawCell>> = rows.iter().take(40).map(|(_, r)| r.iter().map(raw).collect()).collect();
    let header_index = match options.header_row {
        Some(row) => rows.iter().position(|(n, _)| *n == row).ok_or(ReadError::NoSuchHeaderRow { row })?,
        None => find_header(&sample, decimal),
    };
    let header_row = rows[header_index].0;
    let header: Vec<RawCell> = rows[header_index].1.iter().map(raw).collect();
    let data = &rows[header_index + 1..];
    if data.is_empty() {
        return Err(ReadError::HeaderOnly);
    }
    let full_width = w;
    let mut scans = vec![ColumnScan::default(); full_width];
    for (_, r) in data {
        for (j, c) in r.iter().enumerate() {
            scans[j].add(&raw(c), decimal);
        }
    }
    // Columns with neither a name nor data are not columns.
    let keep: Vec<usize> = (0..full_width).filter(|&j| !header.get(j).is_none_or(RawCell::is_empty) || scans[j].has_data()).collect();
    let mut warnings = Vec::new();
    let kept_header: Vec<RawCell> = keep.iter().map(|&j| header.get(j).cloned().unwrap_or(RawCell::Empty)).collect();
    let names = header_names(&kept_header, keep.len(), &mut warnings);
    let mut fills: Vec<ColumnFill> = keep
        .iter()
        .zip(&names)
        .map(|(&j, name)| {
            let (kind, warning) = scans[j].decide(name);
            warnings.extend(warning);
            ColumnFill::new(kind, decimal, data.len())
        })
        .collect();
    let mut source_rows = Vec::with_capacity(data.len());
    for (row, (n, r)) in data.iter().enumerate() {
        for (fill, &j) in fills.iter_mut().zip(&keep) {
            fill.push(&r.get(j).map_or(RawCell::Empty, raw), row);
        }
        source_rows.push(*n);
    }
    let columns: Vec<_> = fills.into_iter().zip(names).map(|(f, n)| f.finish(n)).collect();
    cell_warnings(&columns, &source_rows, &mut warnings);
    // Formulas saved without their results read as empty; say so.
    if let Some(formulas) = formulas {
        let (f_row, f_col) = formulas.start().unwrap_or((0, 0));
        let (_, r_col) = range.start().unwrap_or((0, 0));
        for (&j, name) in keep.iter().zip(columns.iter().map(|c| &c.name)) {
            let mut rows_without = Vec::new();
            for &(n, r) in data {
                let value_empty = r.get(j).is_none_or(|c| matches!(c, Data::Empty));
                let (fr, fc) = ((n - 1) as i64 - f_row as i64, (j as u32 + r_col) as i64 - f_col as i64);
                let has_formula = fr >= 0
                    && fc >= 0
                    && formulas.get((fr as usize, fc as usize)).is_some_and(|f| !f.trim().is_empty());
                if value_empty && has_formula {
                    rows_without.push(n);
                }
            }
            if !rows_without.is_empty() {
                warnings.push(format!(
                    "Column \"{name}\" has {} formula {} saved without {} result (sheet {} {}), read as missing. \
                     Open the file in a spreadsheet program and save it again to store the results.",
                    rows_without.len(),
                    if rows_without.len() == 1 { "cell" } else { "cells" },
                    if rows_without.len() == 1 { "its" } else { "their" },
                    if rows_without.len() == 1 { "row" } else { "rows" },
                    rows_without.iter().take(5).map(|r| r.to_string()).collect::<Vec<_>>().join(", ")
                ));
            }
        }
    }
    let mut notes = Vec::new();
    if header_index > 0 {
        notes.push(format!(
            "The header is on row {header_row} of sheet \"{sheet}\"; {header_index} {} above it (a title or notes) {} skipped.",
            if header_index == 1 { "row" } else { "rows" },
            if header_index == 1 { "was" } else { "were" }
        ));
    }
    Ok(Loaded {
        table: Table { columns, source_rows, sheet: Some(sheet), warnings },
        format,
        sheets,
        header_row,
        delimiter: None,
        decimal,
        encoding: None,
        notes,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A generated .xlsx of `rows` rows and 5 columns (a formula column
    /// among them), with an empty first sheet before it.
    fn big_workbook(rows: u32) -> Vec<u8> {
        let mut wb = rust_xlsxwriter::Workbook::new();
        wb.add_worksheet().set_name("empty").unwrap();
        let ws = wb.add_worksheet().set_name("data").unwrap();
        for (j, h) in ["id", "x", "label", "twice", "blank_some"].iter().enumerate() {
            ws.write_string(0, j as u16, *h).unwrap();
        }
        for i in 1..=rows {
            ws.write_number(i, 0, i as f64).unwrap();
            ws.write_number(i, 1, (i as f64 * 0.37).sin()).unwrap();
            ws.write_string(i, 2, ["north", "south", "east"][i as usize % 3]).unwrap();
            ws.write_formula(i, 3, format!("=B{}*2", i + 1).as_str()).unwrap();
            if i % 7 != 0 {
                ws.write_number(i, 4, (i % 11) as f64).unwrap();
            }
        }
        wb.save_to_buffer().unwrap()
    }

    /// The one pass over an .xlsx sheet gives what the library's own two
    /// calls give, for the corpus files and a generated sheet.
    #[test]
    fn one_pass_over_an_xlsx_sheet_matches_the_library_calls() {
        let dir = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/data/files");
        let mut files: Vec<Vec<u8>> =
            ["deliveries.xlsx", "deliveries-title.xlsx", "errors.xlsx"].iter().map(|f| std::fs::read(dir.join(f)).unwrap()).collect();
        files.push(big_workbook(3000));
        for bytes in &files {
            let mut wb = open(bytes, 50_000_000).unwrap();
            for name in wb.sheet_names() {
                let (values, formulas) = read_sheet(&mut wb, &name, crate::read::Limits::default(), &mut |_| true).unwrap();
                let mut lib = open(bytes, 50_000_000).unwrap();
                assert_eq!(values, lib.worksheet_range(&name).unwrap(), "{name}");
                assert_eq!(formulas.unwrap(), lib.worksheet_formula(&name).unwrap(), "{name}");
            }
        }
    }

    /// Two cells far apart would make a grid of 17 billion cells: refused
    /// before any grid is made, in plain words.
    #[test]
    fn an_xlsx_whose_cells_span_a_huge_grid_is_refused() {
        let mut wb = rust_xlsxwriter::Workbook::new();
        let ws = wb.add_worksheet();
        ws.write_string(0, 0, "y").unwrap();
        ws.write_number(1_048_575, 16_383, 1.0).unwrap();
        let bytes = wb.save_to_buffer().unwrap();
        let e = read_workbook(&bytes, &ReadOptions::default(), Format::Workbook).unwrap_err();
        assert!(matches!(e, ReadError::TooManyCells { limit: 50_000_000 }), "{e:?}");
        assert!(e.to_string().starts_with("The table has more than 50000000 cells"), "{e}");
    }

    /// One shared text referred to by many cells is copied into each: the
    /// total is held to the limit (lowered here to 1 MB: 200 cells of a
    /// 10,000-character text are 2 MB).
    #[test]
    fn an_xlsx_that_repeats_a_long_text_past_the_limit_is_refused() {
        let mut wb = rust_xlsxwriter::Workbook::new();
        let ws = wb.add_worksheet();
        let long = "w".repeat(10_000);
        ws.write_string(0, 0, "note").unwrap();
        for i in 1..=200 {
            ws.write_string(i, 0, &long).unwrap();
        }
        let bytes = wb.save_to_buffer().unwrap();
        let mut options = ReadOptions::default();
        options.limits.max_cell_text_bytes = 1 << 20;
        let e = read_workbook(&bytes, &options, Format::Workbook).unwrap_err();
        assert!(matches!(e, ReadError::TooMuchText { limit: 1_048_576 }), "{e:?}");
        assert!(e.to_string().starts_with("The sheet repeats its texts so often that its cells would hold more than 1 MB of text"), "{e}");
        options.limits.max_cell_text_bytes = 4 << 20;
        assert_eq!(read_workbook(&bytes, &options, Format::Workbook).unwrap().table.n_rows(), 200);
    }

    /// A large .xlsx reports its progress as the rows go by, never going
    /// back (the empty sheet before it included), and stops when asked.
    #[test]
    fn an_xlsx_sheet_reports_progress_and_can_be_stopped() {
        let bytes = big_workbook(40_000);
        let mut seen = Vec::new();
        let loaded = read_workbook_progress(&bytes, &ReadOptions::default(), Format::Workbook, &mut |s| {
            seen.push(s);
            true
        })
        .unwrap();
        assert_eq!(loaded.table.n_rows(), 40_000);
        assert_eq!(loaded.table.sheet.as_deref(), Some("data"));
        assert!(seen.len() >= 2, "{seen:?}");
        assert!(seen.iter().any(|&s| s > 0.2 && s < 1.0), "{seen:?}");
        assert!(seen.windows(2).all(|w| w[0] <= w[1]) && seen.iter().all(|&s| (0.0..=1.0).contains(&s)), "{seen:?}");
        let mut calls = 0;
        let stopped = read_workbook_progress(&bytes, &ReadOptions::default(), Format::Workbook, &mut |_| {
            calls += 1;
            calls < 2
        });
        assert!(matches!(stopped, Err(ReadError::Stopped)), "{:?}", stopped.err());
        // Debug text, since missing cells are NaN and NaN != NaN.
        let plain = read_workbook(&bytes, &ReadOptions::default(), Format::Workbook).unwrap().table;
        assert!(format!("{:?}", loaded.table) == format!("{plain:?}"), "the progress does not change what is read");
    }
}
