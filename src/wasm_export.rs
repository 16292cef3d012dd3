//! The exports' WebAssembly binding: converts and calls `crate::export`,
//! and answers in the JSON envelope of `wasm.rs` (`{"ok": …}` or
//! `{"error": …, "kind": …}`), so nothing throws into JavaScript.
//!
//! - `formula_bytes(bytes, request)`: a fit request plus `cells`
//!   (column → letters), `first_row`, `separator` (`;` or `,`) and
//!   `decimal_comma` → `{ok: {formula, scale, inputs, notes}}`.
//! - `export_tsv(what, result_json)`: `what` is coefficients, candidates or
//!   predictions; `result_json` the `ok` payload of a fit, selection or
//!   prediction → `{ok: "tab-separated text"}`.
//! - `export_workbook(bundle_json)` → `{ok: "base64 of the xlsx"}`;
//!   `export_report(bundle_json)` → `{ok: "the report's HTML"}`; the bundle
//!   is described in `crate::export`.
//! - `sha256_hex(bytes)` → the hex digest (plain text).
//! - `session_save(bytes, request)` → `{ok: "the session file's text"}`;
//!   the request holds `file_name`, the reading options, and the session's
//!   `kinds`, `level_names`, `excluded_columns`, `model`, `selection`,
//!   `saved`, and `include_data`.
//! - `session_open(session_text, bytes)` → `{ok: {session, mismatches,
//!   blocking, data_base64}}`; with empty `bytes` the data kept in the
//!   session are used and returned as `data_base64`.

use crate::export::session::{ModelChoice, SelectionChoice, Session};
use crate::export::{self, Bundle};
use crate::wasm::{error, fit_request, ok, ReadRequest};
use serde::{Deserialize, Serialize};
use std::collections::BTreeMap;
use wasm_bindgen::prelude::*;

#[derive(Deserialize)]
#[serde(default)]
struct FormulaRequest {
    cells: BTreeMap<String, String>,
    first_row: usize,
    separator: String,
    decimal_comma: bool,
}

impl Default for FormulaRequest {
    fn default() -> Self {
        FormulaRequest { cells: BTreeMap::new(), first_row: 2, separator: ";".into(), decimal_comma: false }
    }
}

/// The spreadsheet formula of a model; see the module doc.
#[wasm_bindgen]
pub fn formula_bytes(bytes: &[u8], request: &str) -> String {
    let fr: FormulaRequest = match serde_json::from_str(request) {
        Ok(r) => r,
        Err(e) => return error("request", &format!("The formula request is not valid: {e}")),
    };
    let separator = match fr.separator.trim() {
        ";" | "" => ';',
        "," => ',',
        other => return error("request", &format!("The argument separator must be ; or , (not {other}).")),
    };
    let f = match fit_request(bytes, request, "formula") {
        Ok(f) => f,
        Err(e) => return e,
    };
    let o = export::formula::FormulaOptions { cells: fr.cells, first_row: fr.first_row, separator, decimal_comma: fr.decimal_comma };
    match export::formula::formula(&f.fitted, &f.spec, &f.table, &o) {
        Ok(formula) => ok(&formula),
        Err(e) => error("model", &e.to_string()),
    }
}

/// Tab-separated text of a result's table; see the module doc.
#[wasm_bindgen]
pub fn export_tsv(what: &str, result_json: &str) -> String {
    let Some(table) = export::tsv::Table::parse(what) else {
        return error("request", &format!("\"{what}\" is not a table to copy; use coefficients, candidates or predictions."));
    };
    let v: serde_json::Value = match serde_json::from_str(result_json) {
        Ok(v) => v,
        Err(e) => return error("request", &format!("The result to copy is not valid: {e}")),
    };
    match export::tsv::tsv(table, &v) {
        Ok(t) => ok(&t),
        Err(e) => error("request", &e),
    }
}

fn bundle(json: &str) -> Result<Bundle, String> {
    serde_json::from_str(json).map_err(|e| error("request", &format!("The export request is not valid: {e}")))
}

/// The results workbook, in base64; see the module doc.
#[wasm_bindgen]
pub fn export_workbook(bundle_json: &str) -> String {
    let b = match bundle(bundle_json) {
        Ok(b) => b,
        Err(e) => return e,
    };
    match export::workbook::results_workbook(&b) {
        Ok(bytes) => ok(&export::base64_encode(&bytes)),
        Err(e) => error("model", &e),
    }
}

/// The report's HTML; see the module doc.
#[wasm_bindgen]
pub fn export_report(bundle_json: &str) -> String {
    let b = match bundle(bundle_json) {
        Ok(b) => b,
        Err(e) => return e,
    };
    match export::report::report_html(&b) {
        Ok(html) => ok(&html),
        Err(e) => error("model", &e),
    }
}

/// SHA-256 of the bytes, in hex.
#[wasm_bindgen]
pub fn sha256_hex(bytes: &[u8]) -> String {
    export::sha256_hex(bytes)
}

#[derive(Deserialize, Default)]
#[serde(default)]
struct SaveRequest {
    file_name: String,
    #[serde(flatten)]
    read: ReadRequest,
    saved: String,
    kinds: BTreeMap<String, String>,
    level_names: BTreeMap<String, BTreeMap<String, String>>,
    excluded_columns: Vec<String>,
    model: Option<ModelChoice>,
    selection: Option<SelectionChoice>,
    include_data: bool,
}

/// A session file for the data in `bytes`; see the module doc.
#[wasm_bindgen]
pub fn session_save(bytes: &[u8], request: &str) -> String {
    let r: SaveRequest = match serde_json::from_str(request) {
        Ok(r) => r,
        Err(e) => return error("request", &format!("The session request is not valid: {e}")),
    };
    let loaded = match r.read.load(bytes) {
        Ok(l) => l,
        Err(e) => return error("read", &format!("Could not read the file: {e}")),
    };
    let mut s = Session::new(&r.file_name, bytes, &loaded.table, &r.read.options(), r.read.paste);
    s.saved = r.saved;
    s.kinds = r.kinds;
    s.level_names = r.level_names;
    s.excluded_columns = r.excluded_columns;
    s.model = r.model;
    s.selection = r.selection;
    if r.include_data {
        s.keep_data(bytes);
    }
    ok(&s.to_json())
}

#[derive(Serialize)]
struct Opened {
    session: Session,
    mismatches: Vec<export::session::Mismatch>,
    /// True when the session's model cannot be fitted to these data.
    blocking: bool,
    /// The data kept in the session, when they were used.
    data_base64: Option<String>,
}

/// Opens a session file against the data; see the module doc.
#[wasm_bindgen]
pub fn session_open(session_text: &str, bytes: &[u8]) -> String {
    let s = match Session::from_json(session_text) {
        Ok(s) => s,
        Err(e) => return error("session", &e.to_string()),
    };
    let (data, embedded) = if bytes.is_empty() {
        match s.data_bytes() {
            Ok(Some(d)) => (d, true),
            Ok(None) => {
                return error("session", "The session does not keep the data; load the data file first, then open the session.")
            }
            Err(e) => return error("session", &e.to_string()),
        }
    } else {
        (bytes.to_vec(), false)
    };
    let mut read = ReadRequest::default();
    read.sheet = s.source.sheet.clone();
    read.header_row = s.source.header_row;
    read.paste = s.source.paste;
    let loaded = match read.load(&data) {
        Ok(l) => l,
        Err(e) => return error("read", &format!("Could not read the session's data: {e}")),
    };
    let mismatches = s.compare(&data, &loaded.table);
    let blocking = mismatches.iter().any(|m| m.blocking);
    let data_base64 = embedded.then(|| export::base64_encode(&data));
    ok(&Opened { session: s, mismatches, blocking, data_base64 })
}
