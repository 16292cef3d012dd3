//! The readers on real files. The fixtures in tests/data/files/ were written
//! by tests/reference/make_fixtures.py with openpyxl, odfpy and xlwt (the
//! xlsb assembled from the published record layout and checked with four
//! independent readers); tests/data/files/expected.json lists what a correct
//! reader finds, as read back by those libraries. The bad inputs in
//! tests/data/bad/ carry their expected outcome in expected.json there.

mod common;

use common::{data_dir, json_f64, read_json};
use plumbline::profile::{profile_table, ProfileOptions};
use plumbline::read::cells::format_date;
use plumbline::read::{read_paste, read_table, ReadError, ReadOptions};
use plumbline::table::ColumnData;
use serde_json::Value;

fn load(name: &str) -> Result<plumbline::read::Loaded, ReadError> {
    let path = data_dir().join("files").join(name);
    let bytes = std::fs::read(&path).unwrap();
    if name.ends_with("-paste.txt") {
        read_paste(&String::from_utf8(bytes).unwrap(), &ReadOptions::default())
    } else {
        read_table(&bytes, &ReadOptions::default())
    }
}

/// The cell at (data row, column) as JSON-comparable text.
fn cell(t: &plumbline::table::Table, row: usize, col: &str) -> Value {
    let c = t.column(col).unwrap_or_else(|| panic!("no column {col}"));
    match &c.data {
        ColumnData::Numeric(v) => {
            if v[row].is_nan() {
                Value::Null
            } else {
                serde_json::json!(v[row])
            }
        }
        ColumnData::Date(v) => {
            if v[row].is_nan() {
                Value::Null
            } else {
                Value::String(format_date(v[row]))
            }
        }
        ColumnData::Text(v) => v[row].clone().map_or(Value::Null, Value::String),
    }
}

#[test]
fn every_fixture_file_reads_as_its_libraries_read_it() {
    let doc = read_json(&data_dir().join("files").join("expected.json"));
    let files = doc["files"].as_object().unwrap();
    assert!(files.len() >= 9);
    for (name, want) in files {
        let l = load(name).unwrap_or_else(|e| panic!("{name}: {e}"));
        let t = &l.table;
        let names: Vec<&str> = t.columns.iter().map(|c| c.name.as_str()).collect();
        let want_names: Vec<&str> = want["columns"].as_array().unwrap().iter().map(|v| v.as_str().unwrap()).collect();
        assert_eq!(names, want_names, "{name}: columns");
        assert_eq!(t.n_rows() as u64, want["rows"].as_u64().unwrap(), "{name}: rows");
        assert_eq!(l.header_row as u64, want["header_row"].as_u64().unwrap(), "{name}: header row");
        if let Some(sheets) = want["sheets"].as_array() {
            let s: Vec<&str> = sheets.iter().map(|v| v.as_str().unwrap()).collect();
            assert_eq!(l.sheets, s, "{name}: sheets");
            assert_eq!(t.sheet.as_deref(), want["sheet"].as_str(), "{name}: sheet");
        }
        // Source rows: the first data row sits where the file says.
        assert_eq!(t.source_rows[0] as u64, want["first_data_row"].as_u64().unwrap(), "{name}: first data row");
        for (col, m) in want["missing"].as_object().unwrap() {
            let c = t.column(col).unwrap();
            let got = (0..t.n_rows()).filter(|&i| c.data.is_missing(i)).count();
            assert_eq!(got as u64, m.as_u64().unwrap(), "{name}: missing cells in {col}");
        }
        for s in want["spot"].as_array().unwrap() {
            let (row, col) = (s[0].as_u64().unwrap() as usize, s[1].as_str().unwrap());
            let got = cell(t, row, col);
            let expected = match &s[2] {
                Value::String(e) if e.starts_with('#') => Value::Null, // an error value reads as missing
                v => v.clone(),
            };
            let same = match (&got, &expected) {
                (Value::Number(a), Value::Number(b)) => (json_f64(&Value::Number(a.clone())) - b.as_f64().unwrap()).abs() < 1e-12,
                _ => got == expected,
            };
            assert!(same, "{name}: row {row} of {col} is {got}, expected {expected}");
        }
        if let Some(kinds) = want["kinds"].as_object() {
            let p = profile_table(t, &ProfileOptions::default());
            for (col, k) in kinds {
                let c = p.columns.iter().find(|c| c.name == *col).unwrap();
                let got = serde_json::to_value(c.kind).unwrap();
                assert_eq!(&got, k, "{name}: kind of {col} ({})", c.reason);
            }
        }
        if let Some(d) = want.get("delimiter").and_then(Value::as_str) {
            assert_eq!(l.delimiter.map(String::from), Some(d.to_string()), "{name}: delimiter");
        }
        if let Some(d) = want.get("decimal").and_then(Value::as_str) {
            let got = if l.decimal == plumbline::read::cells::Decimal::Comma { "," } else { "." };
            assert_eq!(got, d, "{name}: decimal mark");
        }
    }
}

#[test]
fn spreadsheet_errors_and_formulas_without_results_are_reported() {
    let l = load("errors.xlsx").unwrap();
    let t = &l.table;
    assert_eq!(t.column("cached_error").unwrap().errors, 2);
    assert_eq!(t.column("formula_cached").unwrap().errors, 2);
    let w = t.warnings.join("\n");
    assert!(w.contains("\"cached_error\" has 2 spreadsheet error values"), "{w}");
    assert!(w.contains("\"formula_no_cache\" has 3 formula cells saved without their result (sheet rows 2, 4, 7)"), "{w}");
}

#[test]
fn a_title_above_the_header_is_skipped_and_said() {
    let l = load("deliveries-title.xlsx").unwrap();
    assert_eq!(l.header_row, 3);
    assert!(l.notes.iter().any(|n| n.contains("row 3") && n.contains("skipped")), "{:?}", l.notes);
    let l = read_table(&std::fs::read(data_dir().join("files/deliveries-title.xlsx")).unwrap(), &ReadOptions { header_row: Some(1), ..ReadOptions::default() });
    assert!(l.is_ok(), "the user may choose another header row");
}

#[test]
fn the_sheet_can_be_chosen_and_a_wrong_name_is_explained() {
    let bytes = std::fs::read(data_dir().join("files/deliveries.xlsx")).unwrap();
    let notes = read_table(&bytes, &ReadOptions { sheet: Some("Notes".into()), ..ReadOptions::default() });
    assert_eq!(notes.map(|l| l.table.sheet), Ok(Some("Notes".to_string())));
    let e = read_table(&bytes, &ReadOptions { sheet: Some("Sheet9".into()), ..ReadOptions::default() }).unwrap_err();
    assert_eq!(e.to_string(), "There is no sheet called \"Sheet9\"; the sheets are \"Deliveries\", \"Notes\".");
}

/// Expected fragments of our own messages for each bad input; the
/// outcome (refuse or load, the line) comes from tests/data/bad/expected.json.
fn fragments(name: &str) -> &'static [&'static str] {
    match name {
        "truncated.xlsx" => &["looks like a workbook but could not be read"],
        "random.xlsx" => &["neither a workbook nor readable text"],
        "empty.csv" => &["The file is empty"],
        "header-only.csv" => &["header row but no data rows"],
        "ragged.csv" => &["Line 5 has 4 cells but the header has 3"],
        "duplicate-names.csv" => &["\"cost\" appears more than once; column 4 is called \"cost_2\""],
        "all-missing-column.csv" => &["Column \"comment\" is empty: all 5 cells are missing."],
        "constant-column.csv" => &["Column \"site\" has the same value (7) in every row"],
        "text-in-numeric.csv" => &["Column \"weight\" holds numbers, but row 7 holds \"n/k\""],
        _ => &[],
    }
}

#[test]
fn bad_inputs_get_their_plain_outcome() {
    let dir = data_dir().join("bad");
    let doc = read_json(&dir.join("expected.json"));
    let cases = doc.as_object().unwrap();
    assert!(cases.len() >= 11);
    for (name, want) in cases {
        let bytes = std::fs::read(dir.join(name)).unwrap();
        let got = std::panic::catch_unwind(|| read_table(&bytes, &ReadOptions::default())).unwrap_or_else(|_| panic!("{name} panicked"));
        match want["outcome"].as_str().unwrap() {
            "refuse" => {
                let e = got.err().unwrap_or_else(|| panic!("{name} should be refused"));
                let msg = e.to_string();
                if let Some(line) = want["line"].as_u64() {
                    if name != "header-only.csv" {
                        assert!(msg.contains(&format!("Line {line}")), "{name}: the message should name line {line}: {msg}");
                    }
                }
                for f in fragments(name) {
                    assert!(msg.contains(f), "{name}: {msg}");
                }
            }
            "load" => {
                let l = got.unwrap_or_else(|e| panic!("{name} should load: {e}"));
                let names: Vec<&str> = l.table.columns.iter().map(|c| c.name.as_str()).collect();
                let want_names: Vec<&str> = want["columns"].as_array().unwrap().iter().map(|v| v.as_str().unwrap()).collect();
                assert_eq!(names, want_names, "{name}");
                assert_eq!(l.table.n_rows() as u64, want["rows"].as_u64().unwrap(), "{name}: rows");
                let w = l.table.warnings.join("\n");
                let expected_warnings = want["warnings"].as_array().unwrap().len();
                assert_eq!(l.table.warnings.len(), expected_warnings, "{name}: warnings {w}");
                for f in fragments(name) {
                    assert!(w.contains(f), "{name}: {w}");
                }
                if let Some(lines) = want.get("source_lines").and_then(Value::as_array) {
                    let l2: Vec<u64> = lines.iter().map(|v| v.as_u64().unwrap()).collect();
                    let got: Vec<u64> = l.table.source_rows.iter().map(|&r| r as u64).collect();
                    assert_eq!(got, l2, "{name}: source lines");
                }
                if let Some(spot) = want.get("spot").and_then(Value::as_array) {
                    for s in spot {
                        let got = cell(&l.table, s[0].as_u64().unwrap() as usize, s[1].as_str().unwrap());
                        let same = match (&got, &s[2]) {
                            (Value::Number(a), Value::Number(b)) => a.as_f64() == b.as_f64(),
                            (a, b) => a == b,
                        };
                        assert!(same, "{name}: {s} read as {got}");
                    }
                }
            }
            other => panic!("unknown outcome {other}"),
        }
    }
}

#[test]
fn a_zip_bomb_is_refused_before_it_is_unpacked() {
    let bytes = std::fs::read(data_dir().join("files/deliveries.xlsx")).unwrap();
    let tiny = plumbline::read::Limits { max_unzipped_bytes: 10_000, ..Default::default() };
    let e = read_table(&bytes, &ReadOptions { limits: tiny, ..ReadOptions::default() }).unwrap_err();
    assert!(matches!(e, ReadError::TooLargeUnpacked { .. }), "{e}");
    let few = plumbline::read::Limits { max_cells: 50, ..Default::default() };
    let e = read_table(&bytes, &ReadOptions { limits: few, ..ReadOptions::default() }).unwrap_err();
    assert_eq!(e, ReadError::TooManyCells { limit: 50 });
    let csv = std::fs::read(data_dir().join("files/deliveries.tsv")).unwrap();
    let e = read_table(&csv, &ReadOptions { limits: few, ..ReadOptions::default() }).unwrap_err();
    assert_eq!(e, ReadError::TooManyCells { limit: 50 });
}
