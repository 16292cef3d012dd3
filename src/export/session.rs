//! The session file: every choice of an analysis, and the data only when
//! the user asks, as a versioned JSON format of our own.
//!
//! ```json
//! {"format": "plumbline-session", "version": 1, "saved": "2026-12-02 10:30 UTC",
//!  "source": {"file_name": "energy.csv", "sha256": "…", "sheet": null, "header_row": null,
//!             "paste": false, "columns": ["site", "zone", …], "rows": 240},
//!  "kinds": {"zone": "coded_category"},
//!  "level_names": {"zone": {"1": "north"}},
//!  "excluded_columns": ["site"],
//!  "model": {"response": "log(energy)", "terms": "floor_area, cat(zone)", "intercept": true,
//!            "weights": null, "exclude_rows": [17], "level": 0.95, "hc3": false},
//!  "selection": {"candidates": "…", "force": "", "by": "bic", "search": "exhaustive",
//!                "folds": 5, "seed": 1, "stability": null},
//!  "data": null}
//! ```
//!
//! `data`, when present, is the file's bytes in base64; its SHA-256 must be
//! `source.sha256`. Reopening checks the data against `source` and explains
//! each difference (another file, missing columns, another number of rows)
//! instead of failing on it. A file of a later version is refused with a
//! message; unknown fields are ignored, so a later minor addition still
//! opens. Version history: 1 (first).

use super::{base64_decode, base64_encode, sha256_hex};
use crate::model::FitOptions;
use crate::read::ReadOptions;
use crate::table::Table;
use crate::terms::{parse_term, parse_terms, ModelSpec};
use serde::{Deserialize, Serialize};
use std::collections::BTreeMap;
use std::fmt;

pub const FORMAT: &str = "plumbline-session";
pub const VERSION: u32 = 1;

/// Where the data came from and what it looked like.
#[derive(Clone, Debug, Default, PartialEq, Serialize, Deserialize)]
#[serde(default)]
pub struct SessionSource {
    pub file_name: String,
    pub sha256: String,
    pub sheet: Option<String>,
    pub header_row: Option<usize>,
    /// The data were cells pasted from a spreadsheet.
    pub paste: bool,
    pub columns: Vec<String>,
    pub rows: usize,
}

/// The model the user chose.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct ModelChoice {
    pub response: String,
    #[serde(default)]
    pub terms: String,
    #[serde(default = "yes")]
    pub intercept: bool,
    #[serde(default)]
    pub weights: Option<String>,
    #[serde(default)]
    pub exclude_rows: Vec<usize>,
    #[serde(default = "default_level")]
    pub level: f64,
    #[serde(default)]
    pub hc3: bool,
}

/// How the candidates were searched.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(default)]
pub struct SelectionChoice {
    pub candidates: String,
    pub force: String,
    pub by: String,
    pub search: String,
    pub folds: usize,
    pub seed: u64,
    pub stability: Option<usize>,
}

impl Default for SelectionChoice {
    fn default() -> Self {
        SelectionChoice {
            candidates: String::new(),
            force: String::new(),
            by: "bic".into(),
            search: "exhaustive".into(),
            folds: 5,
            seed: 1,
            stability: None,
        }
    }
}

fn yes() -> bool {
    true
}

fn default_level() -> f64 {
    0.95
}

/// A whole analysis; see the module doc.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct Session {
    pub format: String,
    pub version: u32,
    #[serde(default)]
    pub saved: String,
    #[serde(default)]
    pub source: SessionSource,
    /// Column → kind, where the user overrode what was found.
    #[serde(default)]
    pub kinds: BTreeMap<String, String>,
    /// Column → (code → name), the names the user gave to category codes.
    #[serde(default)]
    pub level_names: BTreeMap<String, BTreeMap<String, String>>,
    #[serde(default)]
    pub excluded_columns: Vec<String>,
    #[serde(default)]
    pub model: Option<ModelChoice>,
    #[serde(default)]
    pub selection: Option<SelectionChoice>,
    /// The file's bytes in base64, only when the user asked to keep them.
    #[serde(default)]
    pub data: Option<String>,
}

/// Why a session file cannot be used.
#[derive(Clone, Debug, PartialEq)]
pub enum SessionError {
    NotJson(String),
    NotASession,
    Newer(u32),
    Damaged(String),
    /// The model's text no longer parses.
    Terms(String),
    /// The embedded data do not match their recorded SHA-256.
    DataChanged,
}

impl fmt::Display for SessionError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            SessionError::NotJson(e) => write!(f, "This is not a session file (it is not JSON: {e})."),
            SessionError::NotASession => write!(f, "This JSON file is not a plumbline session file (it has no \"format\": \"{FORMAT}\")."),
            SessionError::Newer(v) => write!(
                f,
                "This session file is version {v}, made by a later plumbline; this one reads version {VERSION} and earlier. Open it with a newer copy."
            ),
            SessionError::Damaged(e) => write!(f, "The session file is damaged: {e}."),
            SessionError::Terms(e) => write!(f, "The session's model cannot be read: {e}"),
            SessionError::DataChanged => write!(f, "The data kept in the session file do not match the fingerprint saved with them; the file was altered."),
        }
    }
}

impl std::error::Error for SessionError {}

/// One way the data differ from what the session was saved with.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct Mismatch {
    /// True when the session's model cannot be fitted to these data.
    pub blocking: bool,
    pub message: String,
}

impl Session {
    /// An empty session for data with these bytes and this table.
    pub fn new(file_name: &str, bytes: &[u8], table: &Table, read: &ReadOptions, paste: bool) -> Session {
        Session {
            format: FORMAT.into(),
            version: VERSION,
            saved: String::new(),
            source: SessionSource {
                file_name: file_name.into(),
                sha256: sha256_hex(bytes),
                sheet: read.sheet.clone().or_else(|| table.sheet.clone()),
                header_row: read.header_row,
                paste,
                columns: table.columns.iter().map(|c| c.name.clone()).collect(),
                rows: table.n_rows(),
            },
            kinds: BTreeMap::new(),
            level_names: BTreeMap::new(),
            excluded_columns: Vec::new(),
            model: None,
            selection: None,
            data: None,
        }
    }

    /// Keeps the data's bytes in the file.
    pub fn keep_data(&mut self, bytes: &[u8]) {
        self.data = Some(base64_encode(bytes));
    }

    pub fn to_json(&self) -> String {
        let mut s = serde_json::to_string_pretty(self).unwrap_or_else(|_| "{}".into());
        s.push('\n');
        s
    }

    /// Reads a session file, checking its format and version.
    pub fn from_json(text: &str) -> Result<Session, SessionError> {
        let v: serde_json::Value = serde_json::from_str(text).map_err(|e| SessionError::NotJson(e.to_string()))?;
        if v.get("format").and_then(|f| f.as_str()) != Some(FORMAT) {
            return Err(SessionError::NotASession);
        }
        match v.get("version").and_then(|x| x.as_u64()) {
            Some(n) if n > u64::from(VERSION) => return Err(SessionError::Newer(n.min(u64::from(u32::MAX)) as u32)),
            Some(n) if n >= 1 => {}
            _ => return Err(SessionError::Damaged("its version is missing or not a positive whole number".into())),
        }
        let s: Session = serde_json::from_value(v).map_err(|e| SessionError::Damaged(e.to_string()))?;
        if let Some(m) = &s.model {
            if !(m.level > 0.0 && m.level < 1.0) {
                return Err(SessionError::Damaged(format!("its confidence level {} is not between 0 and 1", m.level)));
            }
        }
        Ok(s)
    }

    /// The embedded data, checked against their fingerprint.
    pub fn data_bytes(&self) -> Result<Option<Vec<u8>>, SessionError> {
        let Some(d) = &self.data else { return Ok(None) };
        let bytes = base64_decode(d).map_err(SessionError::Damaged)?;
        if sha256_hex(&bytes) != self.source.sha256 {
            return Err(SessionError::DataChanged);
        }
        Ok(Some(bytes))
    }

    /// How to read the data again.
    pub fn read_options(&self) -> ReadOptions {
        ReadOptions { sheet: self.source.sheet.clone(), header_row: self.source.header_row, ..ReadOptions::default() }
    }

    /// The saved model as a specification and fit options.
    pub fn model_spec(&self) -> Result<Option<(ModelSpec, FitOptions)>, SessionError> {
        let Some(m) = &self.model else { return Ok(None) };
        let response = parse_term(&m.response).map_err(|e| SessionError::Terms(format!("in the response: {e}")))?;
        let terms = parse_terms(&m.terms).map_err(|e| SessionError::Terms(format!("in the terms: {e}")))?;
        let spec = ModelSpec { response, terms, intercept: m.intercept, weights: m.weights.clone(), exclude: m.exclude_rows.clone() };
        Ok(Some((spec, FitOptions { level: m.level, hc3: m.hc3, ..FitOptions::default() })))
    }

    /// How the data differ from those the session was saved with, in words.
    pub fn compare(&self, bytes: &[u8], table: &Table) -> Vec<Mismatch> {
        let mut out = Vec::new();
        if sha256_hex(bytes) == self.source.sha256 {
            return out;
        }
        out.push(Mismatch {
            blocking: false,
            message: format!(
                "These data are not the file the session was saved with (\"{}\"): their fingerprints differ, so the numbers may differ too.",
                self.source.file_name
            ),
        });
        let have: Vec<&str> = table.columns.iter().map(|c| c.name.as_str()).collect();
        let mut needed: Vec<String> = Vec::new();
        if let Some(m) = &self.model {
            let mut add = |c: &str| {
                if !needed.iter().any(|n| n == c) {
                    needed.push(c.to_string())
                }
            };
            if let Ok(r) = parse_term(&m.response) {
                r.columns().into_iter().for_each(&mut add);
            }
            if let Ok(ts) = parse_terms(&m.terms) {
                ts.iter().flat_map(|t| t.columns()).for_each(&mut add);
            }
            if let Some(w) = &m.weights {
                add(w);
            }
        }
        let missing_model: Vec<&String> = needed.iter().filter(|c| !have.contains(&c.as_str())).collect();
        if !missing_model.is_empty() {
            out.push(Mismatch {
                blocking: true,
                message: format!(
                    "The model uses {} that these data do not have: {}.",
                    if missing_model.len() == 1 { "a column" } else { "columns" },
                    missing_model.iter().map(|c| format!("\"{c}\"")).collect::<Vec<_>>().join(", ")
                ),
            });
        }
        let missing_other: Vec<&String> =
            self.source.columns.iter().filter(|c| !have.contains(&c.as_str()) && !needed.contains(c)).collect();
        if !missing_other.is_empty() {
            out.push(Mismatch {
                blocking: false,
                message: format!(
                    "Columns of the saved data that these data lack (the model does not use them): {}.",
                    missing_other.iter().map(|c| format!("\"{c}\"")).collect::<Vec<_>>().join(", ")
                ),
            });
        }
        let added: Vec<&str> = have.iter().copied().filter(|c| !self.source.columns.iter().any(|s| s == c)).collect();
        if !added.is_empty() {
            out.push(Mismatch {
                blocking: false,
                message: format!("Columns these data have that the saved data did not: {}.", added.iter().map(|c| format!("\"{c}\"")).collect::<Vec<_>>().join(", ")),
            });
        }
        if table.n_rows() != self.source.rows {
            out.push(Mismatch {
                blocking: false,
                message: format!("These data have {} rows; the saved data had {}.", table.n_rows(), self.source.rows),
            });
        }
        out
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn minimal() -> String {
        format!(r#"{{"format": "{FORMAT}", "version": 1, "model": {{"response": "y", "terms": "x"}}}}"#)
    }

    #[test]
    fn a_minimal_file_opens_with_defaults() {
        let s = Session::from_json(&minimal()).unwrap();
        let m = s.model.unwrap();
        assert_eq!((m.intercept, m.level, m.hc3), (true, 0.95, false));
    }

    #[test]
    fn wrong_files_are_explained() {
        assert!(matches!(Session::from_json("not json"), Err(SessionError::NotJson(_))));
        assert_eq!(Session::from_json("{\"a\": 1}"), Err(SessionError::NotASession));
        let later = minimal().replace("\"version\": 1", "\"version\": 7");
        assert_eq!(Session::from_json(&later), Err(SessionError::Newer(7)));
        let bad_level = minimal().replace("\"terms\": \"x\"", "\"terms\": \"x\", \"level\": 1.5");
        assert!(matches!(Session::from_json(&bad_level), Err(SessionError::Damaged(_))));
        assert!(Session::from_json(&bad_level).unwrap_err().to_string().contains("between 0 and 1"));
    }

    #[test]
    fn altered_embedded_data_are_refused() {
        let mut s = Session::from_json(&minimal()).unwrap();
        s.source.sha256 = sha256_hex(b"a,b\n1,2\n");
        s.keep_data(b"a,b\n1,3\n");
        assert_eq!(s.data_bytes(), Err(SessionError::DataChanged));
        s.keep_data(b"a,b\n1,2\n");
        assert_eq!(s.data_bytes().unwrap().unwrap(), b"a,b\n1,2\n");
    }
}
