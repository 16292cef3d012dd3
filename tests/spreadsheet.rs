//! The spreadsheet formula in a real spreadsheet engine.
//!
//! Source of truth: LibreOffice Calc (Debian package `libreoffice-calc`,
//! installed by tests/setup.sh), run headless. Each test writes a workbook
//! holding the data and, beside each row, plumbline's formula for that row;
//! LibreOffice loads it, recalculates every formula (its profile is set to
//! recalculate on load), and saves it again; the recalculated values must
//! equal plumbline's own predictions to a relative 1e-9. The formula cells
//! are written with a cached result of 0, so a file that was not
//! recalculated fails.
//!
//! The data are seeded draws made here (test data, not the demo).

mod common;

use calamine::{Data, Reader, Xlsx};
use common::Rng;
use plumbline::export::formula::{formula, FormulaOptions};
use plumbline::model::{fit, FitOptions};
use plumbline::read::{read_table, ReadOptions};
use plumbline::table::Table;
use rust_xlsxwriter::{Format, Formula, Workbook};
use std::path::{Path, PathBuf};
use std::process::Command;

/// Column letters of the data sheet, in the CSV's order.
const COLUMNS: [(&str, &str); 6] = [("y", "A"), ("a", "B"), ("b", "C"), ("zone", "D"), ("kind", "E"), ("day", "F")];

/// Seeded data: a positive response, a positive and a signed input, a
/// coded category, a text category and a date.
fn data() -> (String, Table) {
    let mut rng = Rng::new(20261202);
    let kinds = ["mill", "Farm", "depot"];
    let mut csv = String::from("y,a,b,zone,kind,day\n");
    for i in 0..80 {
        let a = 0.5 + 9.5 * rng.uniform();
        let b = 4.0 * rng.uniform() - 2.0;
        let zone = 1 + (i % 4);
        let kind = kinds[i % 3];
        let day = 19000 + (rng.uniform() * 400.0) as i64;
        let (yy, mm, dd) = plumbline::read::cells::civil_from_days(day);
        let eta = 1.0 + 0.3 * a.ln() + 0.2 * b + 0.1 * zone as f64 + if kind == "Farm" { 0.4 } else { 0.0 } + 0.15 * rng.normal();
        csv.push_str(&format!("{},{a},{b},{zone},{kind},{yy:04}-{mm:02}-{dd:02}\n", eta.exp()));
    }
    let table = read_table(csv.as_bytes(), &ReadOptions::default()).unwrap().table;
    (csv, table)
}

fn soffice() -> PathBuf {
    for p in ["/usr/bin/soffice", "/usr/bin/libreoffice", "/usr/lib/libreoffice/program/soffice"] {
        if Path::new(p).exists() {
            return PathBuf::from(p);
        }
    }
    panic!("LibreOffice (soffice) is not installed; `bash tests/setup.sh` installs the Debian package libreoffice-calc, which this test needs.");
}

/// A LibreOffice profile that recalculates every formula on load.
fn profile(dir: &Path) -> String {
    let user = dir.join("profile").join("user");
    std::fs::create_dir_all(&user).unwrap();
    let xcu = r#"<?xml version="1.0" encoding="UTF-8"?>
<oor:items xmlns:oor="http://openoffice.org/2001/registry" xmlns:xs="http://www.w3.org/2001/XMLSchema" xmlns:xsi="http://www.w3.org/2001/XMLSchema-instance">
<item oor:path="/org.openoffice.Office.Calc/Formula/Load"><prop oor:name="OOXMLRecalcMode" oor:op="fuse"><value>0</value></prop></item>
<item oor:path="/org.openoffice.Office.Calc/Formula/Load"><prop oor:name="ODFRecalcMode" oor:op="fuse"><value>0</value></prop></item>
</oor:items>
"#;
    std::fs::write(user.join("registrymodifications.xcu"), xcu).unwrap();
    format!("-env:UserInstallation=file://{}", dir.join("profile").display())
}

/// Writes the data and one formula per row, has LibreOffice recalculate,
/// and returns the recalculated column.
fn recalculate(name: &str, csv: &str, formulas: &[String]) -> Vec<f64> {
    let dir = std::env::temp_dir().join(format!("plumbline-sheet-{name}-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(dir.join("out")).unwrap();
    let mut wb = Workbook::new();
    let ws = wb.add_worksheet().set_name("data").unwrap();
    let date_format = Format::new().set_num_format("yyyy-mm-dd");
    for (r, line) in csv.lines().enumerate() {
        for (c, cell) in line.split(',').enumerate() {
            let (row, col) = (r as u32, c as u16);
            if r > 0 && c == 5 {
                let (y, m, d) = (cell[0..4].parse().unwrap(), cell[5..7].parse().unwrap(), cell[8..10].parse().unwrap());
                let serial = plumbline::read::cells::days_from_civil(y, m, d) as f64 + 25569.0;
                ws.write_number_with_format(row, col, serial, &date_format).unwrap();
            } else if let (true, Ok(v)) = (r > 0, cell.parse::<f64>()) {
                ws.write_number(row, col, v).unwrap();
            } else {
                ws.write_string(row, col, cell).unwrap();
            }
        }
    }
    ws.write_string(0, 6, "prediction").unwrap();
    for (i, f) in formulas.iter().enumerate() {
        ws.write_formula(i as u32 + 1, 6, Formula::new(f.as_str()).set_result("0")).unwrap();
    }
    let input = dir.join("in.xlsx");
    wb.save(&input).unwrap();
    let out = Command::new(soffice())
        .arg(profile(&dir))
        .args(["--headless", "--norestore", "--convert-to", "xlsx", "--outdir"])
        .arg(dir.join("out"))
        .arg(&input)
        .output()
        .expect("soffice runs");
    let result = dir.join("out").join("in.xlsx");
    assert!(result.exists(), "LibreOffice wrote nothing: {}\n{}", String::from_utf8_lossy(&out.stdout), String::from_utf8_lossy(&out.stderr));
    let mut book: Xlsx<_> = calamine::open_workbook(&result).unwrap();
    let range = book.worksheet_range("data").unwrap();
    let values = (0..formulas.len())
        .map(|i| match range.get((i + 1, 6)) {
            Some(Data::Float(v)) => *v,
            Some(Data::Int(v)) => *v as f64,
            other => panic!("row {}: the recalculated cell is {other:?}", i + 2),
        })
        .collect();
    let _ = std::fs::remove_dir_all(&dir);
    values
}

/// plumbline's predictions of the table's own rows: the estimate on the
/// response's scale for a plain or log response, the transformed estimate
/// otherwise (as the formula gives).
fn predictions(table: &Table, response: &str, terms: &str) -> (Vec<String>, Vec<f64>, &'static str) {
    let spec = common::spec(response, terms, true);
    let fitted = fit(table, &spec, &FitOptions::default()).unwrap();
    let cells: std::collections::BTreeMap<String, String> = COLUMNS.iter().map(|(c, l)| (c.to_string(), l.to_string())).collect();
    let mut formulas = Vec::new();
    let mut scale = "";
    for r in 0..table.n_rows() {
        let o = FormulaOptions { cells: cells.clone(), first_row: r + 2, separator: ',', decimal_comma: false };
        let f = formula(&fitted, &spec, table, &o).unwrap();
        scale = f.scale;
        formulas.push(f.formula.trim_start_matches('=').to_string());
    }
    let report = plumbline::predict::predict(&fitted, &spec, table, table, 0.95).unwrap();
    let want = report
        .predictions
        .iter()
        .map(|p| match (&p.original, spec.response.to_string().starts_with("log(")) {
            (Some(o), true) => o.estimate,
            _ => p.estimate.unwrap(),
        })
        .collect();
    (formulas, want, scale)
}

fn assert_recalculates(name: &str, response: &str, terms: &str, scale: &str) {
    let (csv, table) = data();
    let (formulas, want, got_scale) = predictions(&table, response, terms);
    assert_eq!(got_scale, scale, "{name}: the formula's scale");
    let got = recalculate(name, &csv, &formulas);
    let mut worst = 0.0f64;
    for (i, (g, w)) in got.iter().zip(&want).enumerate() {
        let rel = (g - w).abs() / w.abs().max(1e-300);
        worst = worst.max(rel);
        assert!(rel <= 1e-9, "{name}, row {}: LibreOffice gives {g}, plumbline {w} (relative {rel:e})\nformula: {}", i + 2, formulas[i]);
    }
    eprintln!("{name}: {} rows, worst relative difference {worst:e}", got.len());
}

#[test]
fn log_response_with_categories_transforms_and_an_interaction() {
    assert_recalculates(
        "log",
        "log(y)",
        "log(a), sqrt(a), b, b^2, cat(zone), cat(kind), a*cat(kind), boxcox(a, 0.5), yeojohnson(b, 0.3)",
        "response",
    );
}

#[test]
fn plain_response_with_a_date_a_chosen_reference_and_the_yeo_johnson_edges() {
    assert_recalculates("plain", "y", "b, day, cat(zone, ref=3), yeojohnson(b, 0), yeojohnson(b, 2), b^3, a*b", "response");
}

#[test]
fn transformed_response_gives_the_transformed_estimate() {
    assert_recalculates("sqrt", "sqrt(y)", "a, cat(kind), boxcox(a, 0)", "transformed");
}

#[test]
fn the_standard_separator_form_differs_only_in_the_separator() {
    let (_, table) = data();
    let spec = common::spec("log(y)", "log(a), cat(kind), yeojohnson(b, 0.3), b^2", true);
    let fitted = fit(&table, &spec, &FitOptions::default()).unwrap();
    let cells: std::collections::BTreeMap<String, String> = COLUMNS.iter().map(|(c, l)| (c.to_string(), l.to_string())).collect();
    let semi = formula(&fitted, &spec, &table, &FormulaOptions { cells: cells.clone(), ..Default::default() }).unwrap().formula;
    let comma = formula(&fitted, &spec, &table, &FormulaOptions { cells, separator: ',', ..Default::default() }).unwrap().formula;
    assert!(semi.contains(';') && !comma.contains(';'));
    assert_eq!(semi.replace(';', ","), comma);
}
