//! NIST StRD linear least squares, all 11 sets (source: NIST/ITL
//! Statistical Reference Datasets, copied with their README into
//! tests/data/nist-strd-lls/). Every certified coefficient, coefficient
//! standard deviation, residual SD, R² and ANOVA entry is scored in LRE
//! digits (McCullough 1998) through the library and through the CLI's
//! `--json`; every value must reach 12 digits. The table of minimum LRE per
//! set is printed and written to target/nist-lre.md.

mod common;

use common::{data_dir, json_f64, lre, read_json, run_cli};
use plumbline::lstsq::SolverPath;
use plumbline::model::FitOptions;
use serde_json::Value;
use std::fmt::Write;

const SETS: [&str; 11] =
    ["Norris", "Pontius", "NoInt1", "NoInt2", "Filip", "Longley", "Wampler1", "Wampler2", "Wampler3", "Wampler4", "Wampler5"];
const CAP: f64 = 15.0;
const REQUIRED: f64 = 12.0;

/// The response, terms and intercept flag that reproduce a set's design.
fn model_of(meta: &Value) -> (String, String, bool) {
    let cols: Vec<String> = meta["csv_columns"].as_array().unwrap().iter().map(|v| v.as_str().unwrap().to_string()).collect();
    let response = cols[0].clone();
    match meta["design"].as_str().unwrap() {
        "columns" => (response, cols[1..].join(", "), true),
        "no_intercept" => (response, cols[1..].join(", "), false),
        "polynomial" => {
            let d = meta["degree"].as_u64().unwrap();
            let x = &cols[1];
            let terms: Vec<String> = (1..=d).map(|k| if k == 1 { x.clone() } else { format!("{x}^{k}") }).collect();
            (response, terms.join(", "), true)
        }
        other => panic!("unknown design {other}"),
    }
}

fn cert(v: &Value) -> f64 {
    v.as_str().unwrap().parse::<f64>().unwrap()
}

/// Minimum LRE over each group of certified values, and the failures.
struct Score {
    groups: Vec<(&'static str, f64)>,
    failures: Vec<String>,
}

fn score(meta: &Value, report: &Value) -> Score {
    let c = &meta["certified"];
    let mut groups = Vec::new();
    let mut failures = Vec::new();
    let mut group = |name: &'static str, pairs: Vec<(String, f64, f64)>| {
        let mut min = CAP;
        for (what, got, want) in pairs {
            let digits = lre(got, want, CAP);
            if digits < REQUIRED {
                failures.push(format!("{what}: computed {got:e}, certified {want:e}, {digits:.1} digits"));
            }
            min = min.min(digits);
        }
        groups.push((name, min));
    };
    let coefs = report["coefficients"].as_array().unwrap();
    assert_eq!(coefs.len(), c["beta"].as_array().unwrap().len(), "one coefficient per certified parameter");
    group(
        "beta",
        coefs.iter().zip(c["beta"].as_array().unwrap()).map(|(g, w)| (format!("estimate {}", g["term"]), json_f64(&g["estimate"]), cert(w))).collect(),
    );
    group(
        "beta_sd",
        coefs
            .iter()
            .zip(c["beta_sd"].as_array().unwrap())
            .map(|(g, w)| (format!("std_error {}", g["term"]), json_f64(&g["std_error"]), cert(w)))
            .collect(),
    );
    group("residual_sd", vec![("residual_sd".into(), json_f64(&report["residual_std_error"]), cert(&c["residual_sd"]))]);
    group("r_squared", vec![("r_squared".into(), json_f64(&report["r_squared"]), cert(&c["r_squared"]))]);
    let a = &c["anova"];
    let df_res = json_f64(&report["df_residual"]);
    let rss = json_f64(&report["rss"]);
    let model_ss = json_f64(&report["model_ss"]);
    let df_model = json_f64(&report["df_model"]);
    let f = json_f64(&report["f_statistic"]);
    let certified_f = cert(&a["f_statistic"]);
    // An infinite certified F (exact fits) is scored through 1/F, certified 0.
    let (f_got, f_want) = if certified_f.is_infinite() { (1.0 / f, 0.0) } else { (f, certified_f) };
    group(
        "anova",
        vec![
            ("df_regression".into(), df_model, a["df_regression"].as_f64().unwrap()),
            ("df_residual".into(), df_res, a["df_residual"].as_f64().unwrap()),
            ("ss_regression".into(), model_ss, cert(&a["ss_regression"])),
            ("ms_regression".into(), model_ss / df_model, cert(&a["ms_regression"])),
            ("ss_residual".into(), rss, cert(&a["ss_residual"])),
            ("ms_residual".into(), rss / df_res, cert(&a["ms_residual"])),
            ("f_statistic".into(), f_got, f_want),
        ],
    );
    Score { groups, failures }
}

#[test]
fn nist_strd_every_certified_value_to_12_digits() {
    let dir = data_dir().join("nist-strd-lls");
    let mut table = String::from(
        "| set | difficulty | path | beta | beta_sd | residual_sd | r_squared | anova | min (library) | min (CLI) |\n|---|---|---|---|---|---|---|---|---|---|\n",
    );
    let mut failures = Vec::new();
    for name in SETS {
        let meta = read_json(&dir.join(format!("{name}.json")));
        let csv = dir.join(format!("{name}.csv"));
        let (response, terms, intercept) = model_of(&meta);

        let fitted = common::fit_file(&csv, &response, &terms, intercept, None, FitOptions::default());
        let lib = serde_json::to_value(&fitted.report).unwrap();
        let lib_score = score(&meta, &lib);

        let csv_s = csv.to_str().unwrap();
        let mut args = vec!["fit", csv_s, "--response", &response, "--terms", &terms, "--json"];
        if !intercept {
            args.push("--no-intercept");
        }
        let (code, out, err) = run_cli(&args);
        assert_eq!(code, 0, "{name}: CLI failed: {err}");
        let cli: Value = serde_json::from_str(&out).unwrap_or_else(|e| panic!("{name}: CLI JSON: {e}"));
        assert_eq!(cli["coefficients"], lib["coefficients"], "{name}: the CLI and the library disagree");
        let cli_score = score(&meta, &cli);

        let path = match fitted.report.solver_path {
            SolverPath::Double => "double",
            SolverPath::DoubleDouble => "double-double",
        };
        let lib_min = lib_score.groups.iter().map(|g| g.1).fold(CAP, f64::min);
        let cli_min = cli_score.groups.iter().map(|g| g.1).fold(CAP, f64::min);
        let _ = write!(table, "| {name} | {} | {path} |", meta["difficulty"].as_str().unwrap());
        for (_, v) in &lib_score.groups {
            let _ = write!(table, " {v:.1} |");
        }
        let _ = writeln!(table, " {lib_min:.1} | {cli_min:.1} |");
        for f in lib_score.failures.iter().map(|f| format!("{name} (library): {f}")) {
            failures.push(f);
        }
        for f in cli_score.failures.iter().map(|f| format!("{name} (CLI): {f}")) {
            failures.push(f);
        }
    }
    println!("NIST StRD linear least squares, minimum LRE digits (cap {CAP}, required {REQUIRED})\n{table}");
    let out = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("target").join("nist-lre.md");
    let _ = std::fs::write(&out, format!("NIST StRD linear least squares: minimum LRE digits (cap {CAP}, required {REQUIRED})\n\n{table}"));
    assert!(failures.is_empty(), "values below {REQUIRED} digits:\n  {}\n{table}", failures.join("\n  "));
}

/// The hard sets need the extended path, and the path chosen is the one reported.
#[test]
fn ill_conditioned_sets_take_the_extended_path() {
    let dir = data_dir().join("nist-strd-lls");
    for (name, want) in [("Norris", SolverPath::Double), ("Filip", SolverPath::DoubleDouble), ("Wampler5", SolverPath::DoubleDouble)] {
        let meta = read_json(&dir.join(format!("{name}.json")));
        let (response, terms, intercept) = model_of(&meta);
        let fitted = common::fit_file(&dir.join(format!("{name}.csv")), &response, &terms, intercept, None, FitOptions::default());
        assert_eq!(fitted.report.solver_path, want, "{name}");
    }
}

/// Double precision cannot *promise* Filip's digits: the bound the path
/// choice rests on falls short of the target, so the automatic choice is
/// the extended path. (Forced onto the double path, the semi-normal
/// refinement with residuals accumulated to twice double precision happens
/// to converge on Filip; nothing guarantees that for a design this badly
/// conditioned, which is why the bound decides.)
#[test]
fn filip_is_beyond_what_double_precision_can_promise() {
    let dir = data_dir().join("nist-strd-lls");
    let meta = read_json(&dir.join("Filip.json"));
    let (response, terms, intercept) = model_of(&meta);
    let mut options = FitOptions::default();
    options.lstsq.force_path = Some(SolverPath::Double);
    let forced = common::fit_file(&dir.join("Filip.csv"), &response, &terms, intercept, None, options);
    assert!(forced.report.double_precision_digits < 13.0, "{}", forced.report.double_precision_digits);
    let chosen = common::fit_file(&dir.join("Filip.csv"), &response, &terms, intercept, None, FitOptions::default());
    assert_eq!(chosen.solution.path, SolverPath::DoubleDouble);
}

/// The scoring can fail: a report whose coefficients are off in the
/// tenth digit scores about ten digits, below the twelve required.
#[test]
fn the_score_catches_a_coefficient_off_in_the_tenth_digit() {
    let dir = data_dir().join("nist-strd-lls");
    let meta = read_json(&dir.join("Filip.json"));
    let (response, terms, intercept) = model_of(&meta);
    let fitted = common::fit_file(&dir.join("Filip.csv"), &response, &terms, intercept, None, FitOptions::default());
    let mut report = serde_json::to_value(&fitted.report).unwrap();
    assert!(score(&meta, &report).failures.is_empty(), "the unperturbed fit passes");
    let est = json_f64(&report["coefficients"][3]["estimate"]);
    report["coefficients"][3]["estimate"] = serde_json::json!(est * (1.0 + 3e-10));
    let s = score(&meta, &report);
    let beta_min = s.groups[0].1;
    assert!((9.0..10.5).contains(&beta_min), "{beta_min:.1} digits");
    assert_eq!(s.failures.len(), 1, "{:?}", s.failures);
}
