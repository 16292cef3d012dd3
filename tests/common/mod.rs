//! Helpers shared by the integration tests: reading fixtures, running the
//! CLI, and scoring agreement.
#![allow(dead_code)]

use plumbline::model::{fit, FitOptions, Fitted};
use plumbline::read::csv::read_csv;
use plumbline::terms::{parse_term, parse_terms, ModelSpec};
use serde_json::Value;
use std::path::{Path, PathBuf};
use std::process::Command;

pub fn data_dir() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("tests").join("data")
}

pub fn read_json(path: &Path) -> Value {
    let text = std::fs::read_to_string(path).unwrap_or_else(|e| panic!("{}: {e}", path.display()));
    serde_json::from_str(&text).unwrap_or_else(|e| panic!("{}: {e}", path.display()))
}

/// A model specification from response and terms text (no weights, no rows left out).
pub fn spec(response: &str, terms: &str, intercept: bool) -> ModelSpec {
    ModelSpec {
        response: parse_term(response).unwrap(),
        terms: parse_terms(terms).unwrap(),
        intercept,
        weights: None,
        exclude: Vec::new(),
    }
}

/// Fits through the library, as the page does.
pub fn fit_file(csv: &Path, response: &str, terms: &str, intercept: bool, weights: Option<&str>, options: FitOptions) -> Fitted {
    let bytes = std::fs::read(csv).unwrap();
    let table = read_csv(&bytes).unwrap();
    let spec = ModelSpec { weights: weights.map(String::from), ..spec(response, terms, intercept) };
    fit(&table, &spec, &options).unwrap_or_else(|e| panic!("{}: {e}", csv.display()))
}

/// Runs the `plumbline` binary; returns (exit code, stdout, stderr).
pub fn run_cli(args: &[&str]) -> (i32, String, String) {
    let out = Command::new(env!("CARGO_BIN_EXE_plumbline")).args(args).output().expect("the binary runs");
    (
        out.status.code().unwrap_or(-1),
        String::from_utf8_lossy(&out.stdout).into_owned(),
        String::from_utf8_lossy(&out.stderr).into_owned(),
    )
}

/// A JSON number, or "Infinity"/"-Infinity", or null (NaN).
pub fn json_f64(v: &Value) -> f64 {
    match v {
        Value::Number(n) => n.as_f64().unwrap(),
        Value::String(s) if s == "Infinity" => f64::INFINITY,
        Value::String(s) if s == "-Infinity" => f64::NEG_INFINITY,
        Value::String(s) => s.parse().unwrap_or_else(|_| panic!("not a number: {s}")),
        Value::Null => f64::NAN,
        other => panic!("not a number: {other}"),
    }
}

/// Log relative error (McCullough 1998, The American Statistician 52):
/// -log10(|c - t|/|t|), or -log10(|c - t|) when t = 0, capped at `cap`.
pub fn lre(computed: f64, certified: f64, cap: f64) -> f64 {
    if computed == certified {
        return cap;
    }
    let err = if certified == 0.0 { (computed - certified).abs() } else { ((computed - certified) / certified).abs() };
    if err.is_nan() {
        return 0.0;
    }
    (-err.log10()).clamp(0.0, cap)
}

/// Relative difference, with an absolute floor for values near zero.
pub fn close(a: f64, b: f64, rel: f64, abs: f64) -> bool {
    if a == b {
        return true;
    }
    (a - b).abs() <= abs + rel * a.abs().max(b.abs())
}

/// Collects mismatches between named values so a test reports them all.
#[derive(Default)]
pub struct Mismatches(pub Vec<String>);

impl Mismatches {
    pub fn check(&mut self, what: &str, got: f64, want: f64, rel: f64, abs: f64) {
        if !close(got, want, rel, abs) {
            self.0.push(format!("{what}: got {got:e}, expected {want:e}"));
        }
    }
    pub fn assert_none(&self, context: &str) {
        assert!(self.0.is_empty(), "{context}: {} mismatches:\n  {}", self.0.len(), self.0.join("\n  "));
    }
}

/// A seeded generator for test data: the library's SplitMix64 stream,
/// with uniform and normal draws on top.
pub struct Rng(plumbline::select::cv::SplitMix64);

impl Rng {
    pub fn new(seed: u64) -> Rng {
        Rng(plumbline::select::cv::SplitMix64::new(seed))
    }
    pub fn next_u64(&mut self) -> u64 {
        self.0.next_u64()
    }
    /// Uniform in [0, 1).
    pub fn uniform(&mut self) -> f64 {
        (self.next_u64() >> 11) as f64 / (1u64 << 53) as f64
    }
    /// Standard normal (Box–Muller).
    pub fn normal(&mut self) -> f64 {
        let u = self.uniform().max(1e-300);
        let v = self.uniform();
        (-2.0 * u.ln()).sqrt() * (2.0 * std::f64::consts::PI * v).cos()
    }
}

/// A seeded regression problem: `p` predictors x1..xp with different
/// scales, y = 1 + Σ βⱼxⱼ + noise.
pub fn random_table(seed: u64, n: usize, p: usize) -> plumbline::table::Table {
    let mut rng = Rng::new(seed);
    let mut cols: Vec<(String, Vec<f64>)> = Vec::new();
    let mut y = vec![1.0; n];
    for j in 0..p {
        let scale = 10f64.powi((j % 5) as i32 - 2);
        let x: Vec<f64> = (0..n).map(|_| rng.normal() * scale + scale).collect();
        let beta = rng.normal() / scale;
        for i in 0..n {
            y[i] += beta * x[i];
        }
        cols.push((format!("x{}", j + 1), x));
    }
    for v in y.iter_mut() {
        *v += rng.normal();
    }
    cols.insert(0, ("y".to_string(), y));
    plumbline::table::Table::from_numeric(cols)
}

/// Fits a table through the library.
pub fn fit_table(table: &plumbline::table::Table, response: &str, terms: &str, intercept: bool, options: FitOptions) -> Result<Fitted, plumbline::model::FitError> {
    let spec = spec(response, terms, intercept);
    fit(table, &spec, &options)
}
