//! Inference against numpy/scipy: the fixtures in tests/data/reference/fit/
//! were produced by tests/reference/fit_reference.py (numpy.linalg.lstsq for
//! the coefficients, scipy.stats.t and scipy.stats.f for p-values and
//! quantiles; see that script for versions and formulas). Every case goes
//! through the library and through the CLI's `--json`.

mod common;

use common::{data_dir, json_f64, read_json, run_cli, Mismatches};
use plumbline::model::FitOptions;
use serde_json::Value;

/// Relative tolerance for quantities computed by both sides in f64 from a
/// well-conditioned problem.
const REL: f64 = 1e-10;
/// p-values come from different incomplete-beta implementations (statrs
/// and scipy's cephes); they agree far better than any decision needs.
const REL_P: f64 = 1e-8;

fn cases() -> Vec<Value> {
    let dir = data_dir().join("reference").join("fit");
    let mut names: Vec<_> = std::fs::read_dir(&dir)
        .unwrap()
        .map(|e| e.unwrap().path())
        .filter(|p| p.extension().is_some_and(|e| e == "json"))
        .collect();
    names.sort();
    assert!(names.len() >= 11, "expected the 11 reference cases, found {}", names.len());
    names.iter().map(|p| read_json(p)).collect()
}

fn compare(name: &str, got: &Value, want: &Value, m: &mut Mismatches) {
    for key in ["n", "n_dropped", "df_model", "df_residual"] {
        if got[key] != want[key] {
            m.0.push(format!("{key}: got {}, expected {}", got[key], want[key]));
        }
    }
    for key in ["r_squared", "adj_r_squared", "residual_std_error", "rss", "tss", "f_statistic", "log_likelihood", "aic", "bic"] {
        m.check(key, json_f64(&got[key]), json_f64(&want[key]), REL, 0.0);
    }
    m.check("f_p_value", json_f64(&got["f_p_value"]), json_f64(&want["f_p_value"]), REL_P, 0.0);
    let gc = got["coefficients"].as_array().unwrap();
    let wc = want["coefficients"].as_array().unwrap();
    assert_eq!(gc.len(), wc.len(), "{name}: number of coefficients");
    for (g, w) in gc.iter().zip(wc) {
        let term = w["term"].as_str().unwrap();
        assert_eq!(g["term"], w["term"], "{name}: coefficient order and labels");
        for key in ["estimate", "std_error", "t", "ci_low", "ci_high"] {
            m.check(&format!("{term} {key}"), json_f64(&g[key]), json_f64(&w[key]), REL, 1e-14);
        }
        m.check(&format!("{term} p_value"), json_f64(&g["p_value"]), json_f64(&w["p_value"]), REL_P, 0.0);
        if w["standardized"].is_null() {
            assert!(g["standardized"].is_null(), "{name}: {term} standardized should be null");
        } else {
            m.check(&format!("{term} standardized"), json_f64(&g["standardized"]), json_f64(&w["standardized"]), REL, 1e-14);
        }
    }
    match (got["hc3"].as_array(), want["hc3"].as_array()) {
        (None, None) => {}
        (Some(g), Some(w)) => {
            for (g, w) in g.iter().zip(w) {
                let term = w["term"].as_str().unwrap();
                for key in ["std_error", "t", "ci_low", "ci_high"] {
                    m.check(&format!("hc3 {term} {key}"), json_f64(&g[key]), json_f64(&w[key]), REL, 1e-14);
                }
                m.check(&format!("hc3 {term} p_value"), json_f64(&g["p_value"]), json_f64(&w["p_value"]), REL_P, 0.0);
            }
        }
        (g, w) => m.0.push(format!("hc3 presence differs: got {}, expected {}", g.is_some(), w.is_some())),
    }
}

#[test]
fn library_matches_numpy_and_scipy() {
    let dir = data_dir().join("reference").join("fit");
    for case in cases() {
        let name = case["name"].as_str().unwrap();
        let req = &case["request"];
        let options = FitOptions { level: req["level"].as_f64().unwrap(), hc3: req["hc3"].as_bool().unwrap(), ..FitOptions::default() };
        let fitted = common::fit_file(
            &dir.join(format!("{name}.csv")),
            req["response"].as_str().unwrap(),
            req["terms"].as_str().unwrap(),
            req["intercept"].as_bool().unwrap(),
            req["weights"].as_str(),
            options,
        );
        let got = serde_json::to_value(&fitted.report).unwrap();
        let want = &case["expected"];
        let mut m = Mismatches::default();
        compare(name, &got, want, &mut m);

        // Per-row quantities: residuals y − ŷ and (weighted) leverages.
        let sol = &fitted.solution;
        let w = fitted.design.weights.clone().unwrap_or_else(|| vec![1.0; sol.rows]);
        let lev = want["leverage"].as_array().unwrap();
        let res = want["residuals"].as_array().unwrap();
        assert_eq!(lev.len(), sol.rows, "{name}: rows");
        for i in 0..sol.rows {
            m.check(&format!("leverage[{i}]"), sol.leverage()[i], json_f64(&lev[i]), 1e-9, 1e-15);
            m.check(&format!("residual[{i}]"), sol.residuals[i].to_f64() / w[i].sqrt(), json_f64(&res[i]), 1e-9, 1e-13);
        }
        m.assert_none(name);
    }
}

#[test]
fn cli_json_matches_numpy_and_scipy() {
    let dir = data_dir().join("reference").join("fit");
    for case in cases() {
        let name = case["name"].as_str().unwrap();
        let req = &case["request"];
        let csv = dir.join(format!("{name}.csv"));
        let level = req["level"].as_f64().unwrap().to_string();
        let mut args = vec![
            "fit".to_string(),
            csv.to_str().unwrap().to_string(),
            "--response".into(),
            req["response"].as_str().unwrap().into(),
            "--terms".into(),
            req["terms"].as_str().unwrap().into(),
            "--level".into(),
            level,
            "--json".into(),
        ];
        if !req["intercept"].as_bool().unwrap() {
            args.push("--no-intercept".into());
        }
        if req["hc3"].as_bool().unwrap() {
            args.push("--hc3".into());
        }
        if let Some(w) = req["weights"].as_str() {
            args.push("--weights".into());
            args.push(w.into());
        }
        let args: Vec<&str> = args.iter().map(String::as_str).collect();
        let (code, out, err) = run_cli(&args);
        assert_eq!(code, 0, "{name}: {err}");
        let got: Value = serde_json::from_str(&out).unwrap();
        let mut m = Mismatches::default();
        compare(name, &got, &case["expected"], &mut m);
        m.assert_none(&format!("{name} (CLI)"));
    }
}
