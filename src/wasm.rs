//! The WebAssembly binding: converts and calls, holds no statistics.
//!
//! Every export takes plain bytes and JSON text and returns JSON text of
//! the form `{"ok": ...}` or `{"error": "plain words"}`, so that no error
//! and no panic crosses into JavaScript as an exception.

use crate::model::{fit, FitOptions};
use crate::read::csv::read_csv;
use crate::terms::{parse_term, parse_terms, ModelSpec};
use serde::Deserialize;
use std::cell::RefCell;
use wasm_bindgen::prelude::*;

thread_local! {
    static LAST_PANIC: RefCell<Option<String>> = const { RefCell::new(None) };
}

/// Installs a panic hook that keeps the message for [`last_panic`].
#[wasm_bindgen(start)]
pub fn start() {
    std::panic::set_hook(Box::new(|info| {
        let msg = format!("plumbline stopped on an internal error, which is a bug: {info}");
        LAST_PANIC.with(|p| *p.borrow_mut() = Some(msg));
    }));
}

/// The message of the last panic, if one happened (the worker reports it).
#[wasm_bindgen]
pub fn last_panic() -> Option<String> {
    LAST_PANIC.with(|p| p.borrow().clone())
}

/// A fit request, as the page sends it.
#[derive(Deserialize)]
struct FitRequest {
    response: String,
    #[serde(default)]
    terms: String,
    #[serde(default = "yes")]
    intercept: bool,
    #[serde(default = "default_level")]
    level: f64,
    #[serde(default)]
    weights: Option<String>,
    #[serde(default)]
    hc3: bool,
}

fn yes() -> bool {
    true
}

fn default_level() -> f64 {
    0.95
}

fn ok<T: serde::Serialize>(v: &T) -> String {
    serde_json::to_string(&serde_json::json!({ "ok": v }))
        .unwrap_or_else(|e| error(&format!("The result could not be encoded: {e}")))
}

fn error(message: &str) -> String {
    serde_json::json!({ "error": message }).to_string()
}

/// Fits a model to CSV bytes; `request` is the JSON of a fit request.
#[wasm_bindgen]
pub fn fit_csv(bytes: &[u8], request: &str) -> String {
    let req: FitRequest = match serde_json::from_str(request) {
        Ok(r) => r,
        Err(e) => return error(&format!("The fit request is not valid: {e}")),
    };
    let table = match read_csv(bytes) {
        Ok(t) => t,
        Err(e) => return error(&format!("Could not read the file: {e}")),
    };
    let response = match parse_term(&req.response) {
        Ok(t) => t,
        Err(e) => return error(&format!("In the response: {e}")),
    };
    let terms = match parse_terms(&req.terms) {
        Ok(t) => t,
        Err(e) => return error(&format!("In the terms: {e}")),
    };
    let spec = ModelSpec { response, terms, intercept: req.intercept, weights: req.weights };
    let options = FitOptions { level: req.level, hc3: req.hc3, ..FitOptions::default() };
    match fit(&table, &spec, &options) {
        Ok(f) => ok(&f.report),
        Err(e) => error(&e.to_string()),
    }
}
