//! Everything that goes back to the spreadsheet and to a colleague: the
//! formula, tab-separated text, the results workbook, the report and the
//! session file.
//!
//! The workbook and the report are made from a [`Bundle`]: the results as
//! the JSON the CLI prints and the page receives (`fit`, and when there are
//! any, `check`, `select`, `predict`), where the data came from, the choices
//! made on the way in plain words, and the figures as PNG. The page sends a
//! bundle with what it shows, so the exports hold exactly those numbers; the
//! CLI builds one from the same results. A bundle as JSON:
//!
//! ```json
//! {"source": {"file_name": "energy.xlsx", "sha256": "…", "sheet": "Sites", "header_row": 1},
//!  "choices": ["zone is treated as a category"],
//!  "fit": {…}, "check": {…}, "select": {…}, "predict": {…},
//!  "formula": "=…",
//!  "plots": [{"title": "Residuals against fitted", "png_base64": "…"}],
//!  "date": "2026-12-02 10:30"}
//! ```

pub mod formula;
pub mod report;
pub mod session;
pub mod tsv;
pub mod workbook;

use serde::{Deserialize, Serialize};
use serde_json::Value;

/// Where the data came from.
#[derive(Clone, Debug, Default, PartialEq, Serialize, Deserialize)]
#[serde(default)]
pub struct Source {
    pub file_name: String,
    /// SHA-256 of the file's bytes, in hex.
    pub sha256: String,
    pub sheet: Option<String>,
    pub header_row: Option<usize>,
}

/// A figure as PNG.
#[derive(Clone, Debug, Default, Serialize, Deserialize)]
#[serde(default)]
pub struct Plot {
    pub title: String,
    pub png_base64: String,
}

/// What an export is made from; see the module doc.
#[derive(Clone, Debug, Default, Serialize, Deserialize)]
#[serde(default)]
pub struct Bundle {
    pub source: Source,
    pub choices: Vec<String>,
    pub fit: Value,
    pub check: Option<Value>,
    pub select: Option<Value>,
    pub predict: Option<Value>,
    pub formula: Option<String>,
    pub plots: Vec<Plot>,
    /// When the export was made, as the user's clock gives it.
    pub date: String,
}

impl Bundle {
    /// Refuses a bundle without a fit, in plain words.
    pub fn check_complete(&self) -> Result<(), String> {
        if self.fit.get("coefficients").and_then(Value::as_array).is_none() {
            return Err("There is no fitted model to export yet; fit a model first.".into());
        }
        Ok(())
    }
}

/// SHA-256 of bytes, in lower-case hex.
pub fn sha256_hex(bytes: &[u8]) -> String {
    use sha2::Digest;
    sha2::Sha256::digest(bytes).iter().map(|b| format!("{b:02x}")).collect()
}

/// Base64 (standard alphabet, padded).
pub fn base64_encode(bytes: &[u8]) -> String {
    use base64::Engine;
    base64::engine::general_purpose::STANDARD.encode(bytes)
}

/// Decodes base64, or says why not.
pub fn base64_decode(text: &str) -> Result<Vec<u8>, String> {
    use base64::Engine;
    base64::engine::general_purpose::STANDARD.decode(text.trim()).map_err(|e| format!("the embedded data is not valid base64 ({e})"))
}

/// Today's date and time (UTC) from the system clock, `YYYY-MM-DD HH:MM UTC`.
pub fn now_utc() -> String {
    let secs = std::time::SystemTime::now().duration_since(std::time::UNIX_EPOCH).map_or(0, |d| d.as_secs());
    let days = (secs / 86400) as i64;
    let (y, m, d) = crate::read::cells::civil_from_days(days);
    let rem = secs % 86400;
    format!("{y:04}-{m:02}-{d:02} {:02}:{:02} UTC", rem / 3600, rem % 3600 / 60)
}

/// The choices a model's terms make, in plain words (codings and transforms).
pub fn term_choices(spec: &crate::terms::ModelSpec) -> Vec<String> {
    use crate::terms::Term;
    fn walk(t: &Term, out: &mut Vec<String>) {
        let say = |out: &mut Vec<String>, s: String| {
            if !out.contains(&s) {
                out.push(s)
            }
        };
        match t {
            Term::Column(_) => {}
            Term::Cat { column, reference } => say(
                out,
                match reference {
                    Some(r) => format!("\"{column}\" is treated as a category, compared with its level {r}."),
                    None => format!("\"{column}\" is treated as a category, compared with its first level."),
                },
            ),
            Term::Log(x) => {
                say(out, format!("{t}: the natural logarithm of {x}."));
                walk(x, out)
            }
            Term::Sqrt(x) => {
                say(out, format!("{t}: the square root of {x}."));
                walk(x, out)
            }
            Term::Power(x, k) => {
                say(out, format!("{t}: {x} to the power {k}."));
                walk(x, out)
            }
            Term::BoxCox(x, l) => {
                say(out, format!("{t}: the Box–Cox transform of {x} with λ = {l}."));
                walk(x, out)
            }
            Term::YeoJohnson(x, l) => {
                say(out, format!("{t}: the Yeo–Johnson transform of {x} with λ = {l}."));
                walk(x, out)
            }
            Term::Product(a, b) => {
                say(out, format!("{t}: the product of {a} and {b} (an interaction)."));
                walk(a, out);
                walk(b, out)
            }
        }
    }
    let mut out = Vec::new();
    if !matches!(spec.response, Term::Column(_)) {
        out.push(format!("The response is {}, not the column itself.", spec.response));
        walk(&spec.response, &mut out);
    }
    for t in &spec.terms {
        walk(t, &mut out);
    }
    if !spec.intercept {
        out.push("The model has no intercept.".into());
    }
    if let Some(w) = &spec.weights {
        out.push(format!("Rows are weighted by \"{w}\"."));
    }
    if !spec.exclude.is_empty() {
        let rows: Vec<String> = spec.exclude.iter().map(usize::to_string).collect();
        out.push(format!("Rows left out by choice: {}.", rows.join(", ")));
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn sha256_of_abc() {
        // FIPS 180-2, appendix B.1: SHA-256("abc").
        assert_eq!(sha256_hex(b"abc"), "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad");
    }

    #[test]
    fn base64_round_trips() {
        // RFC 4648 section 10 test vector.
        assert_eq!(base64_encode(b"foobar"), "Zm9vYmFy");
        assert_eq!(base64_decode("Zm9vYmFy").unwrap(), b"foobar");
        assert!(base64_decode("not base64!").is_err());
    }
}
