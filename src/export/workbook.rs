//! The results workbook (.xlsx): the model summary, the coefficients, the
//! candidates, the per-row diagnostics and the predictions, one sheet each
//! (a sheet only when the bundle has its result). Numbers are written as
//! numbers at full precision, with a number format for display; a missing
//! number is an empty cell. Written by rust_xlsxwriter.

use super::tsv::{self, Table};
use super::Bundle;
use rust_xlsxwriter::{Format, Workbook, Worksheet, XlsxError};
use serde_json::Value;

/// The sheet names, in order.
pub const SHEETS: [&str; 5] = ["Model", "Coefficients", "Candidates", "Rows", "Predictions"];

fn err(e: XlsxError) -> String {
    format!("The workbook could not be written: {e}")
}

/// A number format that shows a column's values sensibly: fixed decimals
/// when they are of ordinary size, scientific otherwise.
fn format_for(values: &[f64]) -> Format {
    let finite: Vec<f64> = values.iter().copied().filter(|v| v.is_finite() && *v != 0.0).collect();
    if finite.is_empty() {
        return Format::new().set_num_format("0.0000");
    }
    let (lo, hi) = finite.iter().fold((f64::INFINITY, 0.0f64), |(lo, hi), v| (lo.min(v.abs()), hi.max(v.abs())));
    if lo >= 1e-3 && hi < 1e9 {
        Format::new().set_num_format("#,##0.0000")
    } else {
        Format::new().set_num_format("0.0000E+00")
    }
}

/// Writes a table: a bold header, then cells as numbers where they are.
fn write_table(ws: &mut Worksheet, header: &[&str], rows: &[Vec<Value>]) -> Result<(), String> {
    let bold = Format::new().set_bold();
    for (j, h) in header.iter().enumerate() {
        ws.write_string_with_format(0, j as u16, *h, &bold).map_err(err)?;
        ws.set_column_width(j as u16, (h.chars().count() as f64 + 2.0).clamp(10.0, 40.0)).map_err(err)?;
    }
    ws.set_freeze_panes(1, 0).map_err(err)?;
    let integer = Format::new().set_num_format("0");
    for j in 0..header.len() {
        let col: Vec<f64> = rows.iter().filter_map(|r| r.get(j).and_then(Value::as_f64)).collect();
        let all_integers = !col.is_empty() && rows.iter().all(|r| r.get(j).is_none_or(|v| v.is_u64() || v.is_null()));
        let fmt = if all_integers { integer.clone() } else { format_for(&col) };
        for (i, r) in rows.iter().enumerate() {
            let (row, c) = (i as u32 + 1, j as u16);
            match r.get(j) {
                Some(Value::Number(n)) => {
                    ws.write_number_with_format(row, c, n.as_f64().unwrap_or(f64::NAN), &fmt).map_err(err)?;
                }
                Some(Value::Bool(b)) => {
                    ws.write_boolean(row, c, *b).map_err(err)?;
                }
                Some(Value::String(s)) if s == "Infinity" || s == "-Infinity" => {
                    ws.write_string(row, c, s.as_str()).map_err(err)?;
                }
                Some(v @ (Value::String(_) | Value::Array(_))) => {
                    ws.write_string(row, c, tsv::cell(Some(v))).map_err(err)?;
                }
                _ => {}
            }
        }
    }
    Ok(())
}

/// The summary sheet: what, from where, how well, and the cautions.
fn summary(ws: &mut Worksheet, b: &Bundle) -> Result<(), String> {
    let f = &b.fit;
    let mut rows: Vec<Vec<Value>> = Vec::new();
    let mut put = |k: &str, v: Value| rows.push(vec![Value::String(k.into()), v]);
    let s = |x: &str| Value::String(x.to_string());
    put("file", s(&b.source.file_name));
    put("SHA-256 of the file", s(&b.source.sha256));
    put("sheet", b.source.sheet.as_deref().map_or(Value::Null, s));
    put("made", s(&b.date));
    put("response", f.get("response").cloned().unwrap_or(Value::Null));
    put("terms", Value::String(tsv::cell(f.get("terms")).replace(" + ", ", ")));
    if let Some(formula) = &b.formula {
        put("formula", s(formula));
    }
    for (label, key) in [
        ("rows used", "n"),
        ("rows left out", "n_dropped"),
        ("R²", "r_squared"),
        ("adjusted R²", "adj_r_squared"),
        ("residual standard error", "residual_std_error"),
        ("F statistic", "f_statistic"),
        ("p-value of F", "f_p_value"),
        ("log-likelihood", "log_likelihood"),
        ("AIC", "aic"),
        ("BIC", "bic"),
        ("condition number", "condition_number"),
        ("confidence level", "level"),
    ] {
        put(label, f.get(key).cloned().unwrap_or(Value::Null));
    }
    for c in &b.choices {
        put("choice", s(c));
    }
    if let Some(cautions) = f.get("cautions").and_then(Value::as_array) {
        for c in cautions {
            put("caution", c.clone());
        }
    }
    write_table(ws, &["item", "value"], &rows)?;
    ws.set_column_width(0, 26).map_err(err)?;
    ws.set_column_width(1, 60).map_err(err)?;
    Ok(())
}

/// The workbook's bytes.
pub fn results_workbook(b: &Bundle) -> Result<Vec<u8>, String> {
    b.check_complete()?;
    let mut wb = Workbook::new();
    summary(wb.add_worksheet().set_name(SHEETS[0]).map_err(err)?, b)?;
    let sheet = |wb: &mut Workbook, name: &str, result: &Value, list: &str, columns: &'static [(&'static str, &'static str)]| -> Result<(), String> {
        let (header, rows) = tsv::values(result, list, columns).ok_or_else(|| format!("The {name} result has no {list}."))?;
        write_table(wb.add_worksheet().set_name(name).map_err(err)?, &header, &rows)
    };
    let (list, columns) = Table::Coefficients.layout();
    sheet(&mut wb, SHEETS[1], &b.fit, list, columns)?;
    if let Some(sel) = &b.select {
        let (list, columns) = Table::Candidates.layout();
        sheet(&mut wb, SHEETS[2], sel, list, columns)?;
    }
    if let Some(check) = &b.check {
        sheet(&mut wb, SHEETS[3], check, "rows", &tsv::ROWS)?;
    }
    if let Some(pred) = &b.predict {
        let (list, columns) = Table::Predictions.layout();
        sheet(&mut wb, SHEETS[4], pred, list, columns)?;
    }
    wb.save_to_buffer().map_err(err)
}
