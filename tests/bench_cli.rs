//! `plumbline bench`: the JSON has its fields with sane values, the sizes
//! echo, and the generated data are the seeded ones. Nothing here asserts a
//! time beyond "positive": timings are for BENCHMARKS.md, not for tests.

mod common;

use common::run_cli;
use serde_json::Value;

fn bench_json(args: &[&str]) -> Value {
    let (code, out, err) = run_cli(args);
    assert_eq!(code, 0, "{args:?}: {err}");
    serde_json::from_str(&out).unwrap_or_else(|e| panic!("{args:?}: not JSON ({e}): {out}"))
}

fn positive(v: &Value, field: &str) -> f64 {
    let x = v[field].as_f64().unwrap_or_else(|| panic!("{field} is not a number in {v}"));
    assert!(x.is_finite() && x > 0.0, "{field} = {x} in {v}");
    x
}

#[test]
fn bench_fit_reports_size_time_and_flops() {
    let v = bench_json(&["bench", "fit", "--rows", "2000", "--cols", "6", "--seed", "3", "--json"]);
    assert_eq!(v["rows"], 2000);
    assert_eq!(v["cols"], 6);
    assert_eq!(v["seed"], 3);
    positive(&v, "seconds");
    positive(&v, "gflops");
    let flops = positive(&v, "flops");
    // Householder QR: 2np² − 2p³/3.
    let want = 2.0 * 2000.0 * 36.0 - 2.0 * 216.0 / 3.0;
    assert!((flops - want).abs() <= 1e-9 * want, "flops {flops}, want {want}");
}

#[test]
fn bench_fit_accepts_1e_notation_and_reading_the_csv() {
    let v = bench_json(&["bench", "fit", "--rows", "1e3", "--cols", "3", "--through-read", "--json"]);
    assert_eq!(v["rows"], 1000);
    assert_eq!(v["through_read"], true);
    positive(&v, "seconds");
}

#[test]
fn bench_select_reports_models_examined() {
    let v = bench_json(&["bench", "select", "--terms", "8", "--rows", "120", "--json"]);
    assert_eq!(v["terms"], 8);
    assert_eq!(v["rows"], 120);
    assert_eq!(v["exhaustive_complete"], true);
    let models = positive(&v, "models_examined");
    assert!(models <= 256.0, "at most 2^8 subsets, got {models}");
    positive(&v, "seconds");
}

#[test]
fn bench_text_output_names_the_sizes() {
    let (code, out, err) = run_cli(&["bench", "fit", "--rows", "500", "--cols", "4"]);
    assert_eq!(code, 0, "{err}");
    assert!(out.contains("500 rows x 4 columns") && out.contains("GFLOP/s"), "{out}");
    let (code, out, err) = run_cli(&["bench", "select", "--terms", "5", "--rows", "60"]);
    assert_eq!(code, 0, "{err}");
    assert!(out.contains("5 terms") && out.contains("models examined"), "{out}");
}

/// The CSV written by --write-csv is the seeded data: the same seed writes
/// the same bytes, another seed other bytes, and a fit of the file finds
/// the recipe's coefficients.
#[test]
fn bench_writes_the_seeded_data_as_csv() {
    let dir = std::env::temp_dir().join(format!("plumbline-bench-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let path = |name: &str| dir.join(name).to_string_lossy().into_owned();
    let (a, b, c) = (path("a.csv"), path("b.csv"), path("c.csv"));
    for (file, seed) in [(&a, "5"), (&b, "5"), (&c, "6")] {
        bench_json(&["bench", "fit", "--rows", "50", "--cols", "3", "--seed", seed, "--write-csv", file, "--json"]);
    }
    let (ta, tb, tc) = (std::fs::read(&a).unwrap(), std::fs::read(&b).unwrap(), std::fs::read(&c).unwrap());
    assert_eq!(ta, tb, "the same seed writes the same data");
    assert_ne!(ta, tc, "another seed writes other data");
    let text = String::from_utf8(ta).unwrap();
    assert_eq!(text.lines().count(), 51);
    assert_eq!(text.lines().next(), Some("y,x1,x2"));
    let (code, out, err) = run_cli(&["fit", &a, "--response", "y", "--terms", "x1, x2", "--json"]);
    assert_eq!(code, 0, "{err}");
    let report: Value = serde_json::from_str(&out).unwrap();
    assert_eq!(report["n"], 50);
    // The recipe: y = 1 + x1 + x2/2 + noise of SD 0.1; with 50 rows the
    // standard errors are about 0.03.
    let est: Vec<f64> = report["coefficients"].as_array().unwrap().iter().map(|c| c["estimate"].as_f64().unwrap()).collect();
    for (got, want) in est.iter().zip([1.0, 1.0, 0.5]) {
        assert!((got - want).abs() < 0.2, "estimates {est:?}");
    }
    std::fs::remove_dir_all(&dir).ok();
}

#[test]
fn bench_refuses_bad_sizes_with_exit_code_2() {
    for args in [
        &["bench", "fit", "--rows", "10", "--cols", "10"][..],
        &["bench", "fit", "--rows", "ten", "--cols", "2"],
        &["bench", "fit", "--cols", "2"],
        &["bench", "select", "--terms", "5", "--rows", "4"],
        &["bench", "sideways"],
        &["bench", "fit", "--rows", "100", "--cols", "2", "--fast"],
    ] {
        let (code, _, err) = run_cli(args);
        assert_eq!(code, 2, "{args:?}: {err}");
        assert!(!err.trim().is_empty(), "{args:?}: a message");
    }
}
