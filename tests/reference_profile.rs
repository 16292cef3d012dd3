//! Column summaries and power transforms against scipy: the fixture
//! tests/data/reference/profile/samples.json was produced by
//! tests/reference/profile_reference.py with scipy.stats.skew(bias=False),
//! scipy.stats.kurtosis(fisher=True, bias=False), scipy.stats.boxcox (λ MLE
//! and its alpha=0.05 interval), scipy.stats.yeojohnson and their _llf
//! functions; λ values are the script's tightly refined maximisers of
//! scipy's own likelihoods (see the script's docstring).

mod common;

use common::{data_dir, json_f64, read_json, Mismatches};
use plumbline::profile::stats::summarise;
use plumbline::profile::transform::{boxcox, boxcox_llf, fit_boxcox, fit_yeojohnson, yeojohnson, yeojohnson_llf};
use serde_json::Value;

/// λ is found by a tight optimiser on both sides; at the maximum the
/// likelihood is flat, so λ agrees to about √ε of its scale.
const LAMBDA_ABS: f64 = 1e-6;

fn skew(v: &[f64]) -> f64 {
    plumbline::profile::stats::skewness(v).unwrap()
}

#[test]
fn summaries_and_transforms_match_scipy() {
    let doc = read_json(&data_dir().join("reference/profile/samples.json"));
    let samples = doc["samples"].as_array().unwrap();
    assert!(samples.len() >= 10, "expected the reference samples");
    let mut checked_boxcox = 0;
    for s in samples {
        let name = s["name"].as_str().unwrap();
        let x: Vec<f64> = s["values"].as_array().unwrap().iter().map(json_f64).collect();
        let e = &s["expected"];
        let mut m = Mismatches::default();
        let sum = summarise(&x);
        for (key, got) in [
            ("mean", sum.mean),
            ("median", sum.median),
            ("sd", sum.sd),
            ("min", sum.min),
            ("max", sum.max),
            ("skewness", sum.skewness),
            ("skewness_se", sum.skewness_se),
            ("kurtosis", sum.kurtosis),
        ] {
            m.check(key, got.unwrap_or(f64::NAN), json_f64(&e[key]), 1e-10, 1e-14);
        }
        if e["positive"].as_bool() == Some(true) && e["boxcox_no_interior_maximum"].as_bool() == Some(false) {
            let fit = fit_boxcox(&x, 0.95).unwrap();
            let want = json_f64(&e["boxcox_lambda_refined"]);
            m.check("boxcox lambda", fit.lambda, want, 0.0, LAMBDA_ABS);
            m.check("boxcox llf at scipy's lambda", boxcox_llf(&x, json_f64(&e["boxcox_lambda"])), json_f64(&e["boxcox_llf_at_lambda"]), 1e-11, 0.0);
            let ci = e["boxcox_ci_refined"].as_array().unwrap();
            m.check("boxcox ci low", fit.ci_low, json_f64(&ci[0]), 0.0, LAMBDA_ABS);
            m.check("boxcox ci high", fit.ci_high, json_f64(&ci[1]), 0.0, LAMBDA_ABS);
            let after: Vec<f64> = x.iter().map(|&v| boxcox(v, want)).collect();
            m.check("skewness after boxcox", skew(&after), json_f64(&e["skewness_after_boxcox"]), 1e-8, 1e-12);
            let logs: Vec<f64> = x.iter().map(|v| v.ln()).collect();
            m.check("skewness after log", skew(&logs), json_f64(&e["skewness_after_log"]), 1e-10, 1e-13);
            checked_boxcox += 1;
        }
        if e["yeojohnson_no_interior_maximum"].as_bool() == Some(false) {
            let l = fit_yeojohnson(&x).unwrap();
            let want = json_f64(&e["yeojohnson_lambda_refined"]);
            m.check("yeojohnson lambda", l, want, 0.0, LAMBDA_ABS);
            m.check(
                "yeojohnson llf at scipy's lambda",
                yeojohnson_llf(&x, json_f64(&e["yeojohnson_lambda"])),
                json_f64(&e["yeojohnson_llf_at_lambda"]),
                1e-11,
                0.0,
            );
            let after: Vec<f64> = x.iter().map(|&v| yeojohnson(v, want)).collect();
            m.check("skewness after yeojohnson", skew(&after), json_f64(&e["skewness_after_yeojohnson"]), 1e-8, 1e-12);
        }
        if e["non_negative"].as_bool() == Some(true) {
            if let Some(want) = e.get("skewness_after_sqrt").filter(|v| !v.is_null()) {
                let roots: Vec<f64> = x.iter().map(|v| v.sqrt()).collect();
                m.check("skewness after sqrt", skew(&roots), json_f64(want), 1e-10, 1e-13);
            }
        }
        m.assert_none(name);
    }
    assert!(checked_boxcox >= 6, "only {checked_boxcox} samples had their Box–Cox checked");
}

/// A sample whose likelihood has no interior maximum (scipy's bounded
/// search runs to the edge) gets no λ at all: the data do not determine it.
#[test]
fn flat_likelihoods_do_not_invent_an_interior_lambda() {
    let doc = read_json(&data_dir().join("reference/profile/samples.json"));
    let s: &Value = doc["samples"].as_array().unwrap().iter().find(|s| s["name"] == "near_constant").unwrap();
    let x: Vec<f64> = s["values"].as_array().unwrap().iter().map(json_f64).collect();
    assert_eq!(s["expected"]["boxcox_no_interior_maximum"], true);
    assert_eq!(fit_boxcox(&x, 0.95), None, "a flat likelihood must not yield a λ");
}
