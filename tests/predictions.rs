//! Predictions against the textbook formulas: tests/data/reference/predict/
//! was made by tests/reference/predict_reference.py (numpy least squares,
//! scipy.stats.t quantiles, the explicit (XᵀX)⁻¹ for h₀, and Duan's
//! smearing recomputed there by plain loops). Through the library and the
//! CLI's `--json`.

mod common;

use common::{data_dir, json_f64, read_json, run_cli, Mismatches};
use plumbline::model::{fit, FitOptions};
use plumbline::predict::predict;
use plumbline::read::csv::read_csv;
use plumbline::terms::{parse_term, parse_terms, ModelSpec};
use serde_json::Value;

fn compare(name: &str, got: &Value, want: &Value, m: &mut Mismatches) {
    let g = got["predictions"].as_array().unwrap();
    let w = want["predictions"].as_array().unwrap();
    assert_eq!(g.len(), w.len(), "{name}: predictions");
    for (i, (g, w)) in g.iter().zip(w).enumerate() {
        for key in ["estimate", "ci_low", "ci_high", "pi_low", "pi_high", "leverage"] {
            m.check(&format!("[{i}] {key}"), json_f64(&g[key]), json_f64(&w[key]), 1e-11, 1e-13);
        }
        assert_eq!(g["extrapolation"], w["extrapolation"], "{name}: row {i} extrapolation ({})", g["extrapolation_reasons"]);
        match (&g["original"], &w["original"]) {
            (Value::Null, Value::Null) => {}
            (go, wo) => {
                for key in ["estimate", "ci_low", "ci_high", "pi_low", "pi_high"] {
                    m.check(&format!("[{i}] original {key}"), json_f64(&go[key]), json_f64(&wo[key]), 1e-11, 0.0);
                }
            }
        }
    }
    m.check("max training leverage", json_f64(&got["max_training_leverage"]), json_f64(&want["max_training_leverage"]), 1e-11, 0.0);
    if !want["smearing"].is_null() {
        m.check("smearing", json_f64(&got["smearing"]), json_f64(&want["smearing"]), 1e-12, 0.0);
    }
}

#[test]
fn predictions_match_the_textbook_formulas() {
    for name in ["linear", "logresp", "poly"] {
        let dir = data_dir().join("reference/predict");
        let want = read_json(&dir.join(format!("{name}.json")));
        let req = &want["request"];
        let train = read_csv(&std::fs::read(dir.join(want["training_csv"].as_str().unwrap())).unwrap()).unwrap();
        let new = read_csv(&std::fs::read(dir.join(want["new_csv"].as_str().unwrap())).unwrap()).unwrap();
        let spec = ModelSpec {
            response: parse_term(req["response"].as_str().unwrap()).unwrap(),
            terms: parse_terms(req["terms"].as_str().unwrap()).unwrap(),
            intercept: true,
            weights: None,
            exclude: Vec::new(),
        };
        let level = req["level"].as_f64().unwrap();
        let fitted = fit(&train, &spec, &FitOptions { level, ..FitOptions::default() }).unwrap();
        let report = predict(&fitted, &spec, &train, &new, level).unwrap();
        let mut m = Mismatches::default();
        compare(name, &serde_json::to_value(&report).unwrap(), &want, &mut m);
        m.assert_none(name);

        let (code, out, err) = run_cli(&[
            "predict",
            dir.join(want["training_csv"].as_str().unwrap()).to_str().unwrap(),
            "--response",
            req["response"].as_str().unwrap(),
            "--terms",
            req["terms"].as_str().unwrap(),
            "--level",
            &level.to_string(),
            "--new",
            dir.join(want["new_csv"].as_str().unwrap()).to_str().unwrap(),
            "--json",
        ]);
        assert_eq!(code, 0, "{name}: {err}");
        let mut m = Mismatches::default();
        compare(name, &serde_json::from_str(&out).unwrap(), &want, &mut m);
        m.assert_none(&format!("{name} (CLI)"));
    }
}

#[test]
fn unseen_levels_and_missing_inputs_are_explained_row_by_row() {
    let train = read_csv(b"y,x,g\n1,1,a\n2,2,b\n3,3.5,a\n4,4,b\n5,5.5,a\n6,6,b\n").unwrap();
    let new = read_csv(b"x,g\n2.5,a\n3,c\n,b\nlots,a\n").unwrap();
    let spec = ModelSpec { response: parse_term("y").unwrap(), terms: parse_terms("x, cat(g)").unwrap(), intercept: true, weights: None, exclude: Vec::new() };
    let fitted = fit(&train, &spec, &FitOptions::default()).unwrap();
    let r = predict(&fitted, &spec, &train, &new, 0.95).unwrap();
    assert!(r.predictions[0].estimate.is_some());
    assert_eq!(
        r.predictions[1].problem.as_deref(),
        Some("Row 3 has \"c\" in \"g\", a value the model never saw (it knows a, b); it cannot be predicted.")
    );
    assert_eq!(r.predictions[2].problem.as_deref(), Some("Row 4 has no value in \"x\", so it cannot be predicted."));
    assert!(r.predictions[3].problem.as_deref().unwrap_or("").contains("\"lots\""), "{:?}", r.predictions[3].problem);
    let no_g = read_csv(b"x\n1\n").unwrap();
    let e = predict(&fitted, &spec, &train, &no_g, 0.95).unwrap_err();
    assert!(e.to_string().contains("no column called \"g\""), "{e}");
}
