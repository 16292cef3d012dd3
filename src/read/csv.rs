//! Comma-separated text: a header row, then one record per row, quoted as
//! in RFC 4180 (doubled quotes inside quotes, line breaks inside quotes,
//! CRLF or LF line ends). A UTF-8 byte-order mark is skipped.

use super::ReadError;
use crate::table::{is_missing_marker, parse_number, Column, ColumnData, Table};

/// Reads comma-separated bytes into a table. Columns whose non-missing cells
/// are all numbers become numeric; the rest stay text.
pub fn read_csv(bytes: &[u8]) -> Result<Table, ReadError> {
    let text = std::str::from_utf8(bytes).map_err(|e| ReadError::NotText { offset: e.valid_up_to() })?;
    let text = text.strip_prefix('\u{feff}').unwrap_or(text);
    let mut records = split_records(text, b',')?.into_iter().filter(|r| !is_blank(&r.cells));
    let header = records.next().ok_or(ReadError::Empty)?;
    let width = header.cells.len();
    let mut names: Vec<String> = header.cells.iter().map(|s| s.trim().to_string()).collect();
    let mut warnings = Vec::new();
    name_columns(&mut names, &mut warnings);

    let mut cells: Vec<Vec<String>> = vec![Vec::new(); width];
    let mut source_rows = Vec::new();
    for rec in records {
        if rec.cells.len() != width {
            return Err(ReadError::Ragged { line: rec.line, expected: width, found: rec.cells.len() });
        }
        for (j, c) in rec.cells.into_iter().enumerate() {
            cells[j].push(c);
        }
        source_rows.push(rec.line);
    }
    if source_rows.is_empty() {
        return Err(ReadError::HeaderOnly);
    }
    let columns = names.into_iter().zip(cells).map(|(name, raw)| Column { name, data: type_column(raw) }).collect();
    Ok(Table { columns, source_rows, sheet: None, warnings })
}

/// One record and the 1-based line it starts on.
#[derive(Debug)]
struct Record {
    line: usize,
    cells: Vec<String>,
}

fn is_blank(cells: &[String]) -> bool {
    cells.iter().all(|c| c.trim().is_empty())
}

/// Splits text into records of cells, honouring quotes.
fn split_records(text: &str, delim: u8) -> Result<Vec<Record>, ReadError> {
    let b = text.as_bytes();
    let mut out = Vec::new();
    let mut line = 1;
    let mut i = 0;
    while i < b.len() {
        let start_line = line;
        let mut cells = Vec::new();
        let mut cell: Vec<u8> = Vec::new();
        loop {
            if i < b.len() && b[i] == b'"' && cell.iter().all(|c| c.is_ascii_whitespace()) {
                // A quoted cell.
                cell.clear();
                i += 1;
                let quote_line = line;
                loop {
                    if i >= b.len() {
                        return Err(ReadError::UnclosedQuote { line: quote_line });
                    }
                    match b[i] {
                        b'"' if i + 1 < b.len() && b[i + 1] == b'"' => {
                            cell.push(b'"');
                            i += 2;
                        }
                        b'"' => {
                            i += 1;
                            break;
                        }
                        c => {
                            if c == b'\n' {
                                line += 1;
                            }
                            cell.push(c);
                            i += 1;
                        }
                    }
                }
                // Anything between the closing quote and the delimiter is kept.
                while i < b.len() && b[i] != delim && b[i] != b'\n' && b[i] != b'\r' {
                    cell.push(b[i]);
                    i += 1;
                }
            }
            if i >= b.len() {
                cells.push(bytes_to_string(&cell));
                break;
            }
            match b[i] {
                c if c == delim => {
                    cells.push(bytes_to_string(&cell));
                    cell.clear();
                    i += 1;
                }
                b'\r' | b'\n' => {
                    cells.push(bytes_to_string(&cell));
                    if b[i] == b'\r' && i + 1 < b.len() && b[i + 1] == b'\n' {
                        i += 1;
                    }
                    i += 1;
                    line += 1;
                    break;
                }
                c => {
                    cell.push(c);
                    i += 1;
                }
            }
        }
        out.push(Record { line: start_line, cells });
    }
    Ok(out)
}

fn bytes_to_string(b: &[u8]) -> String {
    // The input was valid UTF-8 and we only split at ASCII bytes.
    String::from_utf8_lossy(b).into_owned()
}

/// Names blank headers and makes duplicate names unique, with a warning.
fn name_columns(names: &mut [String], warnings: &mut Vec<String>) {
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
            warnings.push(format!("The header name \"{base}\" appears more than once; column {} is called {}.", j + 1, names[j]));
        }
    }
}

/// A column is numeric when every cell is a number or a missing marker.
fn type_column(raw: Vec<String>) -> ColumnData {
    let mut nums = Vec::with_capacity(raw.len());
    for s in &raw {
        if is_missing_marker(s) {
            nums.push(f64::NAN);
        } else if let Some(v) = parse_number(s) {
            nums.push(v);
        } else {
            return ColumnData::Text(
                raw.into_iter().map(|s| if is_missing_marker(&s) { None } else { Some(s.trim().to_string()) }).collect(),
            );
        }
    }
    ColumnData::Numeric(nums)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn check(input: &str, expected_names: &[&str], expected_rows: &[usize]) -> Table {
        let t = read_csv(input.as_bytes()).unwrap_or_else(|e| panic!("{input:?}: {e}"));
        let names: Vec<&str> = t.columns.iter().map(|c| c.name.as_str()).collect();
        assert_eq!(names, expected_names, "names of {input:?}");
        assert_eq!(t.source_rows, expected_rows, "row numbers of {input:?}");
        t
    }

    #[test]
    fn plain_numbers() {
        let t = check("y,x\n1,2\n3,4.5\n", &["y", "x"], &[2, 3]);
        assert_eq!(t.columns[1].data, ColumnData::Numeric(vec![2.0, 4.5]));
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
        let t = check("x,x,\n1,2,3\n", &["x", "x_2", "column_3"], &[2]);
        assert_eq!(t.warnings.len(), 2);
    }

    #[test]
    fn refusals_name_the_line() {
        assert_eq!(read_csv(b""), Err(ReadError::Empty));
        assert_eq!(read_csv(b"a,b\n"), Err(ReadError::HeaderOnly));
        assert_eq!(read_csv(b"a,b\n1,2\n3\n"), Err(ReadError::Ragged { line: 3, expected: 2, found: 1 }));
        assert_eq!(read_csv(b"a,b\n\"1,2\n"), Err(ReadError::UnclosedQuote { line: 2 }));
        assert!(matches!(read_csv(b"a,b\n\xff\xfe,1\n"), Err(ReadError::NotText { .. })));
    }
}
