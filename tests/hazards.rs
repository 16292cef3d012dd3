//! Numerical hazards (issue 9, item 2): each gives a plain error or a
//! correct result, never a table of NaN or infinities dressed as results and
//! never a panic, through `model::fit`, `diagnostics::check`,
//! `select::select`, `predict::predict` and the CLI.
//!
//! Where to look for the expected values: every expectation below is either
//! an exact construction (a column that is a copy, a multiple or a sum of
//! others; data multiplied by an exact power of two, for which IEEE
//! arithmetic and the kernel's own power-of-two scaling give results scaled
//! exactly, bit for bit), the same problem without the hazard, or a count
//! done by hand from the fixture. Each test says which.

mod common;

use common::{json_f64, run_cli, spec};
use plumbline::diagnostics::{check, CheckReport};
use plumbline::model::{fit, FitError, FitOptions, Fitted};
use plumbline::predict::predict;
use plumbline::read::csv::read_csv;
use plumbline::schema::FitReport;
use plumbline::select::{select, SelectError, SelectOptions, SelectReport, SelectRequest};
use plumbline::table::{Column, ColumnData, Table};
use plumbline::terms::{parse_term, parse_terms, DesignError, ModelSpec};
use serde_json::Value;
use std::path::PathBuf;

/// The base problem every hazard is a variation of: eight rows, a trend in
/// x, a second predictor z, and noise (numbers chosen by hand).
const X: [f64; 8] = [1.0, 2.0, 3.0, 4.0, 5.0, 6.0, 7.0, 8.0];
const Z: [f64; 8] = [3.0, 1.0, 4.0, 1.0, 5.0, 9.0, 2.0, 6.0];
const Y: [f64; 8] = [1.1, 2.3, 2.9, 4.2, 4.8, 6.1, 7.2, 7.9];

fn table(cols: &[(&str, Vec<f64>)]) -> Table {
    Table::from_numeric(cols.iter().map(|(n, v)| (n.to_string(), v.clone())).collect())
}

fn base() -> Table {
    table(&[("y", Y.to_vec()), ("x", X.to_vec()), ("z", Z.to_vec())])
}

fn fit_of(t: &Table, response: &str, terms: &str) -> Result<Fitted, FitError> {
    fit(t, &spec(response, terms, true), &FitOptions::default())
}

fn request(response: &str, candidates: &str) -> SelectRequest {
    SelectRequest {
        response: parse_term(response).unwrap(),
        candidates: parse_terms(candidates).unwrap(),
        forced: Vec::new(),
        intercept: true,
        weights: None,
        exclude: Vec::new(),
    }
}

fn select_of(t: &Table, response: &str, candidates: &str) -> Result<SelectReport, SelectError> {
    select(t, &request(response, candidates), &SelectOptions::default(), None)
}

/// A table as CSV, every number written as the shortest decimal that reads
/// back to the same f64 (so the CLI sees exactly the library's data).
fn csv_of(t: &Table) -> String {
    let mut s = t.columns.iter().map(|c| c.name.clone()).collect::<Vec<_>>().join(",");
    s.push('\n');
    for i in 0..t.n_rows() {
        let cells: Vec<String> = t
            .columns
            .iter()
            .map(|c| match &c.data {
                ColumnData::Numeric(v) => if v[i].is_nan() { String::new() } else { format!("{:e}", v[i]) },
                ColumnData::Text(v) => v[i].clone().unwrap_or_default(),
                ColumnData::Date(_) => unreachable!("no dates here"),
            })
            .collect();
        s.push_str(&cells.join(","));
        s.push('\n');
    }
    s
}

/// Writes a fixture file under the test target's scratch folder.
fn file(name: &str, content: &str) -> PathBuf {
    let dir = PathBuf::from(env!("CARGO_TARGET_TMPDIR")).join("hazards");
    std::fs::create_dir_all(&dir).unwrap();
    let p = dir.join(name);
    std::fs::write(&p, content).unwrap();
    p
}

/// Runs the CLI; on success returns stdout, and checks that no panic text
/// ever appears.
fn cli(args: &[&str]) -> (i32, String, String) {
    let (code, out, err) = run_cli(args);
    assert!(code != 101 && !err.contains("panicked") && !err.contains("internal error"), "{args:?} panicked:\n{err}");
    (code, out, err)
}

/// The CLI must fail with exit code 1 (a data or model problem) and a
/// message holding every fragment.
fn cli_refuses(args: &[&str], fragments: &[&str]) {
    let (code, out, err) = cli(args);
    assert_eq!(code, 1, "{args:?}: exit code; stderr: {err}");
    assert!(out.is_empty(), "{args:?}: nothing on stdout for a failure, got {out}");
    for f in fragments {
        assert!(err.contains(f), "{args:?}: expected {f:?} in:\n{err}");
    }
}

fn cli_json(args: &[&str]) -> Value {
    let (code, out, err) = cli(args);
    assert_eq!(code, 0, "{args:?}: {err}");
    serde_json::from_str(&out).unwrap_or_else(|e| panic!("{args:?}: {e}\n{out}"))
}

/// Every number in a coefficient table is finite unless the coefficient
/// is reported as aliased; an exact fit may have t = ±∞ (SE exactly 0).
fn assert_clean_coefficients(r: &FitReport, context: &str) {
    for c in &r.coefficients {
        if c.aliased {
            assert!(c.estimate.is_nan() && c.std_error.is_nan(), "{context}: aliased {} carries numbers", c.term);
            continue;
        }
        for (what, v) in [("estimate", c.estimate), ("std. error", c.std_error), ("low", c.ci_low), ("high", c.ci_high), ("p-value", c.p_value)] {
            assert!(v.is_finite(), "{context}: {} {what} is {v}", c.term);
        }
        assert!(!c.t.is_nan(), "{context}: {} t is NaN", c.term);
    }
    for (what, v) in [("R²", r.r_squared), ("adjusted R²", r.adj_r_squared), ("σ", r.residual_std_error), ("AIC", r.aic), ("BIC", r.bic)] {
        assert!(v.is_finite(), "{context}: {what} is {v}");
    }
}

/// Every per-row figure and every test of a check is a number (or absent
/// because the test does not apply), except DFBETAS of aliased columns.
fn assert_clean_check(c: &CheckReport, context: &str) {
    assert_clean_coefficients(&c.fit, context);
    for r in &c.rows {
        for (what, v) in [("fitted", r.fitted), ("residual", r.residual), ("standardized", r.standardized), ("studentized", r.studentized), ("leverage", r.leverage), ("Cook's D", r.cooks_distance), ("DFFITS", r.dffits)] {
            assert!(v.is_finite(), "{context}: row {} {what} is {v}", r.row);
        }
        for (j, d) in r.dfbetas.iter().enumerate() {
            assert_eq!(d.is_some(), !c.fit.coefficients[j].aliased, "{context}: DFBETAS {j}");
            assert!(d.is_none_or(f64::is_finite), "{context}: row {} DFBETAS {j} is {d:?}", r.row);
        }
    }
    for t in &c.collinearity.terms {
        assert!(t.gvif.is_finite(), "{context}: GVIF of {} is {}", t.term, t.gvif);
    }
    assert!(c.collinearity.condition_number.is_finite(), "{context}: condition number");
    if let Some(sw) = &c.normality.shapiro_wilk {
        assert!(sw.statistic.is_finite() && sw.p_value.is_finite(), "{context}: Shapiro–Wilk {sw:?}");
    }
    if let Some(bp) = &c.breusch_pagan {
        assert!(bp.statistic.is_finite() && bp.p_value.is_finite(), "{context}: Breusch–Pagan {bp:?}");
    }
    if let Some(dw) = &c.durbin_watson {
        assert!(dw.statistic.is_finite() && dw.p_value.is_finite(), "{context}: Durbin–Watson {dw:?}");
    }
    if let Some(r) = &c.reset {
        assert!(r.statistic.is_finite() && r.p_value.is_finite(), "{context}: RESET {r:?}");
    }
    for cv in &c.curvature {
        assert!(cv.t.is_finite() && cv.p_value.is_finite(), "{context}: curvature of {} {cv:?}", cv.term);
    }
}

// ---------------------------------------------------------------------------
// Constant columns and perfect collinearity

/// Exact construction: c = 5 in every row is the intercept times 5; x2 = 2x
/// and x3 = x + z exactly (small integers, so the products and sums are
/// exact in f64). Each is aliased by name, its numbers are undefined (JSON
/// null, text "aliased"), and every other number equals the fit without it.
#[test]
fn constant_and_collinear_columns_are_aliased_by_name() {
    let t = table(&[
        ("y", Y.to_vec()),
        ("x", X.to_vec()),
        ("z", Z.to_vec()),
        ("c", vec![5.0; 8]),
        ("x2", X.iter().map(|v| 2.0 * v).collect()),
        ("x3", X.iter().zip(&Z).map(|(a, b)| a + b).collect()),
    ]);
    for (terms, aliased, without) in [
        ("x, c", vec!["c"], "x"),
        ("x, x2", vec!["x2"], "x"),
        ("x, z, x3", vec!["x3"], "x, z"),
        ("c, x, z, x2, x3", vec!["c", "x2", "x3"], "x, z"),
    ] {
        let r = fit_of(&t, "y", terms).unwrap().report;
        assert_eq!(r.aliased, aliased, "{terms}");
        assert_eq!(r.rank, r.n_columns - aliased.len(), "{terms}");
        assert!(r.warnings.iter().any(|w| w.contains(aliased[0]) && w.contains("not estimated")), "{terms}: {:?}", r.warnings);
        assert_clean_coefficients(&r, terms);
        let reference = fit_of(&t, "y", without).unwrap().report;
        assert_eq!(r.df_residual, reference.df_residual, "{terms}");
        for c in r.coefficients.iter().filter(|c| !c.aliased) {
            if let Some(b) = reference.coefficients.iter().find(|b| b.term == c.term) {
                assert!((c.estimate - b.estimate).abs() <= 1e-13 * b.estimate.abs().max(1.0), "{terms}: {} {} vs {}", c.term, c.estimate, b.estimate);
                assert!((c.std_error - b.std_error).abs() <= 1e-13 * b.std_error, "{terms}: {} SE", c.term);
            }
        }
        assert!((r.r_squared - reference.r_squared).abs() < 1e-15, "{terms}");
    }
    // The constant column: "c" is aliased even though it comes before x.
    let r = fit_of(&t, "y", "c, x").unwrap().report;
    assert_eq!(r.aliased, ["c"], "the intercept is always first, so a constant column is the later copy");

    // Diagnostics skip the aliased column and stay finite.
    let s = spec("y", "x, z, x3", true);
    let f = fit(&t, &s, &FitOptions::default()).unwrap();
    let c = check(&f, &s, None);
    assert_clean_check(&c, "check with x3 aliased");
    assert!(c.findings[0].text.contains("x3 could not be estimated"), "{:?}", c.findings[0]);

    // Prediction uses the estimated columns only.
    let new = table(&[("x", vec![4.5]), ("z", vec![2.0]), ("x3", vec![6.5])]);
    let p = predict(&f, &s, &t, &new, 0.95).unwrap();
    let reduced = fit(&t, &spec("y", "x, z", true), &FitOptions::default()).unwrap();
    let q = predict(&reduced, &spec("y", "x, z", true), &t, &table(&[("x", vec![4.5]), ("z", vec![2.0])]), 0.95).unwrap();
    let (a, b) = (p.predictions[0].estimate.unwrap(), q.predictions[0].estimate.unwrap());
    assert!((a - b).abs() < 1e-13 * b.abs(), "prediction {a} vs the reduced model's {b}");
    assert!((p.predictions[0].pi_high.unwrap() - q.predictions[0].pi_high.unwrap()).abs() < 1e-12);

    // Through the CLI: JSON encodes the undefined numbers as null, text says "aliased".
    let path = file("collinear.csv", &csv_of(&t));
    let p = path.to_str().unwrap();
    let j = cli_json(&["fit", p, "--response", "y", "--terms", "x, z, x3", "--json"]);
    assert_eq!(j["aliased"], serde_json::json!(["x3"]));
    let x3 = &j["coefficients"][3];
    assert_eq!(x3["aliased"], true);
    for k in ["estimate", "std_error", "t", "p_value", "ci_low", "ci_high"] {
        assert!(x3[k].is_null(), "x3 {k} should be null, is {}", x3[k]);
        assert!(j["coefficients"][1][k].is_number(), "x {k} should be a number");
    }
    let (_, text, _) = cli(&["fit", p, "--response", "y", "--terms", "x, z, x3"]);
    assert!(text.lines().any(|l| l.trim_start().starts_with("x3") && l.contains("aliased")), "{text}");
    assert!(text.contains("x3: aliased, not estimated"), "{text}");
    assert!(!text.contains("NaN"), "{text}");
    let j = cli_json(&["check", p, "--response", "y", "--terms", "x, c", "--json"]);
    assert_eq!(j["fit"]["aliased"], serde_json::json!(["c"]));
}

/// Selection cannot rank subsets honestly when a candidate is a constant,
/// a copy or an exact combination (its updated factorization loses the
/// residual in the rounding noise of a zero pivot), so it refuses and names
/// the candidate; the same candidates without it select normally.
#[test]
fn selection_refuses_dependent_candidates_by_name() {
    let t = table(&[
        ("y", Y.to_vec()),
        ("x", X.to_vec()),
        ("z", Z.to_vec()),
        ("c", vec![5.0; 8]),
        ("x2", X.iter().map(|v| 2.0 * v).collect()),
        ("x3", X.iter().zip(&Z).map(|(a, b)| a + b).collect()),
    ]);
    for (cands, named) in [("x, c", "c"), ("x, x2", "x2"), ("x, z, x3", "x3")] {
        let e = select_of(&t, "y", cands).unwrap_err();
        assert_eq!(e, SelectError::Fit(FitError::DependentCandidates { terms: vec![named.to_string()] }), "{cands}");
        let m = e.to_string();
        assert!(m.starts_with(&format!("{named} adds no information of its own")) && m.contains("remove it from the candidates"), "{m}");
    }
    let ok = select_of(&t, "y", "x, z").unwrap();
    assert_clean_coefficients(&ok.best.fit, "select x, z");
    for c in &ok.comparison {
        assert!(c.criteria.aic.is_finite() && c.criteria.rss > 0.0, "{:?}", c.criteria);
    }
    let path = file("collinear-select.csv", &csv_of(&t));
    cli_refuses(&["select", path.to_str().unwrap(), "--response", "y", "--candidates", "x, z, x3"], &["x3 adds no information of its own"]);
}

// ---------------------------------------------------------------------------
// n ≤ p

/// With no more complete rows than coefficients the error cannot be
/// estimated, so the fit is refused in plain words (counts by hand: 3 rows;
/// intercept + a + b + c = 4 coefficients, then intercept + a + b = 3).
/// An exact fit with all its standard errors undefined is not offered as a
/// result.
#[test]
fn no_more_rows_than_coefficients_is_refused() {
    let t = table(&[("y", vec![1.0, 2.0, 4.0]), ("a", vec![1.0, 3.0, 2.0]), ("b", vec![2.0, 1.0, 2.0]), ("c", vec![3.0, 2.0, 5.0])]);
    let e = fit_of(&t, "y", "a, b, c").unwrap_err();
    assert_eq!(e, FitError::TooFewRows { rows: 3, parameters: 4 });
    assert_eq!(
        e.to_string(),
        "The model has 4 coefficients to estimate but only 3 complete rows; it needs at least 5 rows (more rows than \
         coefficients) to estimate the error. Use fewer terms or more rows."
    );
    assert_eq!(fit_of(&t, "y", "a, b").unwrap_err(), FitError::TooFewRows { rows: 3, parameters: 3 });
    let one = table(&[("y", vec![1.0]), ("x", vec![2.0])]);
    let e = fit_of(&one, "y", "x").unwrap_err();
    assert_eq!(e, FitError::TooFewRows { rows: 1, parameters: 2 });
    assert!(e.to_string().contains("only 1 complete row;"), "{e}");
    let e = fit(&one, &spec("y", "", true), &FitOptions::default()).unwrap_err();
    assert!(e.to_string().starts_with("The model has 1 coefficient to estimate but only 1 complete row;"), "{e}");
    assert!(matches!(select_of(&t, "y", "a, b, c"), Err(SelectError::TooFewRows { rows: 3, coefficients: 4 })));

    // Rows are counted after the ones left out: 4 rows, one with a missing a.
    let t4 = table(&[("y", vec![1.0, 2.0, 4.0, 3.0]), ("a", vec![1.0, 3.0, 2.0, f64::NAN]), ("b", vec![2.0, 1.0, 2.0, 7.0])]);
    assert_eq!(fit_of(&t4, "y", "a, b").unwrap_err(), FitError::TooFewRows { rows: 3, parameters: 3 });

    // As many rows as columns, but one column is aliased: the rank (2) is
    // below the row count, so this is a fit with one residual degree of
    // freedom, not an error.
    let t = table(&[("y", vec![1.0, 2.0, 4.0]), ("a", vec![1.0, 3.0, 2.0]), ("k", vec![7.0, 7.0, 7.0])]);
    let r = fit_of(&t, "y", "a, k").unwrap().report;
    assert_eq!((r.rank, r.df_residual, r.aliased.clone()), (2, 1, vec!["k".to_string()]));
    assert_clean_coefficients(&r, "n = p with an aliased column");

    let p = file("n-le-p.csv", "y,a,b,c\n1,1,2,3\n2,3,1,2\n4,2,2,5\n");
    let p = p.to_str().unwrap();
    for cmd in ["fit", "check", "predict"] {
        let mut args = vec![cmd, p, "--response", "y", "--terms", "a, b, c"];
        if cmd == "predict" {
            args.extend(["--new", p]);
        }
        cli_refuses(&args, &["4 coefficients to estimate but only 3 complete rows", "Use fewer terms or more rows."]);
    }
    cli_refuses(&["select", p, "--response", "y", "--candidates", "a, b, c"], &["4 coefficients but there are only 3 complete rows"]);
}

// ---------------------------------------------------------------------------
// Values near 1e±300

/// Multiplies a column of a table by `c`.
fn scaled(t: &Table, column: &str, c: f64) -> Table {
    let mut out = t.clone();
    let col = out.columns.iter_mut().find(|k| k.name == column).unwrap();
    if let ColumnData::Numeric(v) = &mut col.data {
        v.iter_mut().for_each(|x| *x *= c);
    }
    out
}

/// Exact construction: the base problem with y multiplied by cy and x by
/// cx, both exact powers of two (2^±1000, about 1e±301). Least squares is
/// equivariant: β₀ scales by cy, β_x by cy/cx, β_z by cy, standard errors
/// and interval ends likewise, and t, p, R², F, VIF, leverages and every
/// standardized residual are unchanged. The kernel scales by powers of two
/// itself, so the results are those of the base problem bit for bit; the
/// log-likelihood moves by −n·ln cy (by hand from its formula), to 1e-12.
/// RSS and TSS scale by cy², which leaves f64's range at 2^±2000: they are
/// then infinite or zero and a note says why.
#[test]
fn values_near_1e300_give_exactly_rescaled_results() {
    let b = base();
    let s = spec("y", "x, z", true);
    let f0 = fit(&b, &s, &FitOptions::default()).unwrap();
    let c0 = check(&f0, &s, None);
    let new = table(&[("x", vec![2.5, 9.0]), ("z", vec![4.0, 0.5])]);
    let p0 = predict(&f0, &s, &b, &new, 0.95).unwrap();
    let big = 2f64.powi(1000);
    let small = 2f64.powi(-1000);
    for (cy, cx) in [(big, 1.0), (small, 1.0), (1.0, big), (1.0, small), (big, big), (small, small)] {
        let context = format!("y × 2^{}, x × 2^{}", cy.log2(), cx.log2());
        let t = scaled(&scaled(&b, "y", cy), "x", cx);
        let f = fit(&t, &s, &FitOptions::default()).unwrap_or_else(|e| panic!("{context}: {e}"));
        let r = &f.report;
        assert_clean_coefficients(r, &context);
        let factor = [cy, cy / cx, cy];
        for (j, (c, c0)) in r.coefficients.iter().zip(&f0.report.coefficients).enumerate() {
            assert_eq!(c.estimate, c0.estimate * factor[j], "{context}: {} estimate", c.term);
            assert_eq!(c.std_error, c0.std_error * factor[j], "{context}: {} SE", c.term);
            assert_eq!(c.ci_low, c0.ci_low * factor[j], "{context}: {} low", c.term);
            assert_eq!(c.ci_high, c0.ci_high * factor[j], "{context}: {} high", c.term);
            assert_eq!(c.t, c0.t, "{context}: {} t", c.term);
            assert_eq!(c.p_value, c0.p_value, "{context}: {} p", c.term);
            assert_eq!(c.standardized, c0.standardized, "{context}: {} standardized", c.term);
        }
        assert_eq!(r.r_squared, f0.report.r_squared, "{context}");
        assert_eq!(r.adj_r_squared, f0.report.adj_r_squared, "{context}");
        assert_eq!(r.f_statistic, f0.report.f_statistic, "{context}");
        assert_eq!(r.residual_std_error, f0.report.residual_std_error * cy, "{context}");
        assert_eq!(r.condition_number, f0.report.condition_number, "{context}");
        let n = r.n as f64;
        let ll = f0.report.log_likelihood - n * cy.ln();
        assert!((r.log_likelihood - ll).abs() <= 1e-12 * ll.abs(), "{context}: ℓ {} vs {ll}", r.log_likelihood);
        assert!((r.aic - (f0.report.aic + 2.0 * n * cy.ln())).abs() <= 1e-12 * r.aic.abs(), "{context}: AIC");
        let rss = f0.report.rss * cy * cy;
        assert_eq!(r.rss, rss, "{context}: RSS is the base RSS × cy² (here {rss:e})");
        let lost = rss.is_infinite() || rss == 0.0;
        assert_eq!(r.warnings.iter().any(|w| w.contains("beyond the range of double precision")), lost, "{context}: {:?}", r.warnings);

        // check: every scale-free figure is the base's.
        let c = check(&f, &s, None);
        assert_clean_check(&c, &context);
        for (a, a0) in c.rows.iter().zip(&c0.rows) {
            assert_eq!(a.fitted, a0.fitted * cy, "{context}: fitted");
            assert_eq!(a.leverage, a0.leverage, "{context}: leverage");
            assert_eq!(a.studentized, a0.studentized, "{context}: studentized");
            assert_eq!(a.cooks_distance, a0.cooks_distance, "{context}: Cook's D");
            for (d, d0) in a.dfbetas.iter().zip(&a0.dfbetas) {
                let (d, d0) = (d.unwrap(), d0.unwrap());
                assert!((d - d0).abs() <= 1e-14 * d0.abs().max(1.0), "{context}: DFBETAS {d} vs {d0}");
            }
        }
        assert_eq!(c.normality.shapiro_wilk.unwrap().statistic, c0.normality.shapiro_wilk.unwrap().statistic, "{context}");
        assert_eq!(c.normality.jarque_bera.unwrap().statistic, c0.normality.jarque_bera.unwrap().statistic, "{context}");
        assert_eq!(c.normality.anderson_darling.unwrap().statistic, c0.normality.anderson_darling.unwrap().statistic, "{context}");
        assert_eq!(c.durbin_watson.unwrap().statistic, c0.durbin_watson.unwrap().statistic, "{context}");
        let (bp, bp0) = (c.breusch_pagan.unwrap().statistic, c0.breusch_pagan.unwrap().statistic);
        assert!((bp - bp0).abs() <= 1e-12 * bp0, "{context}: Breusch–Pagan {bp} vs {bp0}");
        let (rs, rs0) = (c.reset.unwrap().statistic, c0.reset.unwrap().statistic);
        assert!((rs - rs0).abs() <= 1e-12 * rs0, "{context}: RESET {rs} vs {rs0}");
        for (v, v0) in c.collinearity.terms.iter().zip(&c0.collinearity.terms) {
            assert!((v.gvif - v0.gvif).abs() <= 1e-13 * v0.gvif, "{context}: VIF of {}", v.term);
        }
        for (k, k0) in c.curvature.iter().zip(&c0.curvature) {
            assert!((k.t - k0.t).abs() <= 1e-12 * k0.t.abs(), "{context}: curvature of {}: {} vs {}", k.term, k.t, k0.t);
        }
        assert!(c.press == c0.press * cy * cy, "{context}: PRESS {} vs {}", c.press, c0.press * cy * cy);
        assert_eq!(c.findings.iter().any(|f| f.rule.starts_with("range of double precision")), lost, "{context}: {:?}", c.findings);

        // predict: the same cases with x scaled the same way.
        let p = predict(&f, &s, &t, &scaled(&new, "x", cx), 0.95).unwrap();
        for (a, a0) in p.predictions.iter().zip(&p0.predictions) {
            let close = |u: Option<f64>, v: Option<f64>, k: f64| (u.unwrap() - v.unwrap() * k).abs() <= 1e-14 * (v.unwrap() * k).abs();
            assert!(close(a.estimate, a0.estimate, cy), "{context}: prediction {:?} vs {:?}", a.estimate, a0.estimate);
            assert!(close(a.pi_low, a0.pi_low, cy) && close(a.pi_high, a0.pi_high, cy), "{context}: interval");
            assert!(close(a.leverage, a0.leverage, 1.0), "{context}: leverage {:?} vs {:?}", a.leverage, a0.leverage);
            assert_eq!(a.extrapolation, a0.extrapolation, "{context}");
        }
    }
}

/// The same through the CLI, with data typed as decimals near 1e±300: the
/// expected values are those of the base problem rescaled by hand (the
/// decimals round differently from the base's, hence 1e-12).
#[test]
fn values_near_1e300_through_the_cli() {
    let rel = |a: f64, b: f64| (a - b).abs() <= 1e-12 * b.abs();
    let base_csv = file("base.csv", &csv_of(&base()));
    let j0 = cli_json(&["fit", base_csv.to_str().unwrap(), "--response", "y", "--terms", "x, z", "--json"]);
    let rows = |fy: &str, fx: &str| -> String {
        let mut s = String::from("y,x,z\n");
        for i in 0..8 {
            s.push_str(&format!("{}{fy},{}{fx},{}\n", Y[i], X[i], Z[i]));
        }
        s
    };
    for (name, fy, fx, cy, cx) in [("huge-y", "e300", "", 1e300, 1.0), ("tiny-y", "e-300", "", 1e-300, 1.0), ("huge-x", "", "e300", 1.0, 1e300), ("tiny-both", "e-300", "e-300", 1e-300, 1e-300)] {
        let path = file(&format!("{name}.csv"), &rows(fy, fx));
        let p = path.to_str().unwrap();
        let j = cli_json(&["fit", p, "--response", "y", "--terms", "x, z", "--json"]);
        let factor = [cy, cy / cx, cy];
        for k in 0..3 {
            let (c, c0) = (&j["coefficients"][k], &j0["coefficients"][k]);
            for f in ["estimate", "std_error", "ci_low", "ci_high"] {
                assert!(rel(json_f64(&c[f]), json_f64(&c0[f]) * factor[k]), "{name}: {} {f}: {} vs {}", c["term"], c[f], c0[f]);
            }
            assert!(rel(json_f64(&c["t"]), json_f64(&c0["t"])), "{name}: t");
        }
        // (Not the condition number: it is of the power-of-two-scaled
        // columns, which a decimal factor such as 1e300 scales differently.)
        for f in ["r_squared", "adj_r_squared", "f_statistic", "f_p_value"] {
            assert!(rel(json_f64(&j[f]), json_f64(&j0[f])), "{name}: {f} {} vs {}", j[f], j0[f]);
        }
        let sums_lost = cy != 1.0;
        if cy > 1.0 {
            assert_eq!(j["rss"], "Infinity", "{name}: RSS ≈ 1e600 is encoded as the string Infinity, never null");
        }
        let (_, text, _) = cli(&["fit", p, "--response", "y", "--terms", "x, z"]);
        assert_eq!(text.contains("lie beyond the range of double precision"), sums_lost, "{name}:\n{text}");
        assert!(!text.contains("n/a"), "{name}: nothing undefined in the tables:\n{text}");
        let c = cli_json(&["check", p, "--response", "y", "--terms", "x, z", "--json"]);
        for (row, row0) in c["rows"].as_array().unwrap().iter().zip(cli_json(&["check", base_csv.to_str().unwrap(), "--response", "y", "--terms", "x, z", "--json"])["rows"].as_array().unwrap()) {
            for f in ["studentized", "leverage", "cooks_distance"] {
                assert!((json_f64(&row[f]) - json_f64(&row0[f])).abs() <= 1e-11 * json_f64(&row0[f]).abs().max(1e-3), "{name}: {f}");
            }
        }
        let (code, _, err) = cli(&["select", p, "--response", "y", "--candidates", "x, z"]);
        if cy == 1.0 {
            assert_eq!(code, 0, "{name}: a huge column alone is rescaled inside the search: {err}");
        } else {
            assert_eq!(code, 1, "{name}");
            assert!(err.contains("sums of squares the search compares lie beyond double precision"), "{name}: {err}");
        }
    }
    // Weights near 1e300 on a response near 1e300: √w·y (≈ 1e450) is beyond
    // f64, which is said in words with the first row concerned (line 2).
    let mut s = String::from("y,x,z,w\n");
    for i in 0..8 {
        s.push_str(&format!("{}e300,{},{},{}\n", Y[i], X[i], Z[i], if i == 0 { "4e300" } else { "1" }));
    }
    let path = file("huge-weights.csv", &s);
    for cmd in ["fit", "check", "select"] {
        let flag = if cmd == "select" { "--candidates" } else { "--terms" };
        cli_refuses(&[cmd, path.to_str().unwrap(), "--response", "y", flag, "x, z", "--weights", "w"], &["y × √w is too large to compute (beyond about 1e308) in row 2"]);
    }
    // A response near 1e300 and a column near 1e-300: the slope (≈ 1e600)
    // itself is beyond f64, which is said in words.
    let path = file("mixed.csv", &rows("e300", "e-300"));
    cli_refuses(&["fit", path.to_str().unwrap(), "--response", "y", "--terms", "x, z"], &[
        "The coefficient of x is too large or too small for double precision",
        "Rescale one of them",
    ]);
}

/// Selection with a column near 1e±300: the search multiplies the column by
/// a power of two, so every criterion equals the base problem's exactly
/// (exact construction as above); a response near 1e±300 is refused.
#[test]
fn selection_with_values_near_1e300() {
    let b = base();
    let r0 = select_of(&b, "y", "x, z").unwrap();
    for cx in [2f64.powi(1000), 2f64.powi(-1000)] {
        let r = select_of(&scaled(&b, "x", cx), "y", "x, z").unwrap();
        assert_eq!(r.best.terms, r0.best.terms);
        assert_eq!(r.comparison.len(), r0.comparison.len());
        for (c, c0) in r.comparison.iter().zip(&r0.comparison) {
            assert_eq!(c.terms, c0.terms);
            assert_eq!(c.criteria, c0.criteria, "{:?}", c.terms);
            assert!((c.cv_rmse - c0.cv_rmse).abs() <= 1e-14 * c0.cv_rmse, "{:?}: CV {} vs {}", c.terms, c.cv_rmse, c0.cv_rmse);
            assert!((c.press - c0.press).abs() <= 1e-13 * c0.press, "{:?}: PRESS", c.terms);
        }
    }
    for cy in [2f64.powi(1000), 2f64.powi(-1000)] {
        assert_eq!(
            select_of(&scaled(&b, "y", cy), "y", "x, z").unwrap_err(),
            SelectError::Fit(FitError::ResponseOutOfRange { response: "y".into() })
        );
    }
}

// ---------------------------------------------------------------------------
// An all-equal response

/// A response that is the same in every row has nothing to explain: its
/// fit is exact and every standard error, t and R² is 0/0. It is refused by
/// fit, check, select and predict, and the message names the value (5, by
/// construction). Without an intercept a constant non-zero response is an
/// ordinary fit; a response of zeros is refused there too.
#[test]
fn an_all_equal_response_is_refused() {
    let t = table(&[("y", vec![5.0; 8]), ("x", X.to_vec()), ("z", Z.to_vec())]);
    let e = fit_of(&t, "y", "x, z").unwrap_err();
    assert_eq!(e, FitError::ConstantResponse { response: "y".into(), value: 5.0 });
    assert!(e.to_string().starts_with("The response y is 5 in every row used, so there is nothing for the terms to explain"), "{e}");
    assert_eq!(select_of(&t, "y", "x, z").unwrap_err(), SelectError::Fit(e.clone()));
    // Constant only in the rows used: the row that differs has no x.
    let t2 = table(&[("y", vec![5.0, 5.0, 5.0, 9.0, 5.0]), ("x", vec![1.0, 2.0, 3.0, f64::NAN, 5.0])]);
    assert!(matches!(fit_of(&t2, "y", "x"), Err(FitError::ConstantResponse { .. })));
    // A transformed response: log(y) of a constant is a constant.
    assert!(matches!(fit_of(&t, "log(y)", "x"), Err(FitError::ConstantResponse { .. })));

    let r = fit(&t, &spec("y", "x, z", false), &FitOptions::default()).unwrap().report;
    assert_clean_coefficients(&r, "constant y without an intercept");
    assert_eq!(r.r_squared_kind, "uncentred");
    let zeros = table(&[("y", vec![0.0; 8]), ("x", X.to_vec())]);
    assert_eq!(
        fit(&zeros, &spec("y", "x", false), &FitOptions::default()).unwrap_err(),
        FitError::ConstantResponse { response: "y".into(), value: 0.0 }
    );

    let path = file("constant-y.csv", &csv_of(&t));
    let p = path.to_str().unwrap();
    for cmd in ["fit", "check"] {
        cli_refuses(&[cmd, p, "--response", "y", "--terms", "x, z"], &["The response y is 5 in every row used"]);
    }
    cli_refuses(&["predict", p, "--response", "y", "--terms", "x", "--new", p], &["The response y is 5 in every row used"]);
    cli_refuses(&["select", p, "--response", "y", "--candidates", "x, z"], &["The response y is 5 in every row used"]);
}

// ---------------------------------------------------------------------------
// A category with a single level

/// cat(g) with one level in the rows used adds no column, says so, and
/// leaves the fit exactly that without it (same arithmetic, so equal bit
/// for bit). Also when the second level exists only in rows left out for a
/// missing value. Selection refuses it by name.
#[test]
fn a_category_with_a_single_level() {
    let csv = format!(
        "y,x,g,h\n{}",
        (0..8).map(|i| format!("{},{},a,{}\n", Y[i], X[i], if i == 7 { "b" } else { "a" })).collect::<String>()
    );
    let mut t = read_csv(csv.as_bytes()).unwrap();
    let reference = fit_of(&t, "y", "x").unwrap().report;
    for term in ["cat(g)", "cat(g, ref=a)"] {
        let r = fit_of(&t, "y", &format!("x, {term}")).unwrap().report;
        assert_eq!(r.n_columns, 2, "{term}");
        assert!(r.warnings.iter().any(|w| w == &format!("{term} has a single value in the rows used, so it adds no column to the model.")), "{:?}", r.warnings);
        for (c, c0) in r.coefficients.iter().zip(&reference.coefficients) {
            assert_eq!((c.estimate, c.std_error), (c0.estimate, c0.std_error));
        }
    }
    // h has a second level only in the last row; without x there, h has one level.
    if let ColumnData::Numeric(v) = &mut t.columns[1].data {
        v[7] = f64::NAN;
    }
    let r = fit_of(&t, "y", "x, cat(h)").unwrap().report;
    assert_eq!((r.n, r.n_columns), (7, 2));
    assert!(r.warnings.iter().any(|w| w.starts_with("cat(h) has a single value")), "{:?}", r.warnings);
    assert_eq!(r.dropped[0].reason, "missing value in x");

    let t = read_csv(csv.as_bytes()).unwrap();
    let s = spec("y", "x, cat(g)", true);
    let f = fit(&t, &s, &FitOptions::default()).unwrap();
    assert_clean_check(&check(&f, &s, None), "check with a one-level category");
    // Predictions: the known level works; an unseen one gets a reason, not a panic.
    let new = read_csv(b"x,g\n4.5,a\n4.5,b\n").unwrap();
    let p = predict(&f, &s, &t, &new, 0.95).unwrap();
    assert!(p.predictions[0].estimate.unwrap().is_finite());
    assert_eq!(p.predictions[1].estimate, None);
    assert!(p.predictions[1].problem.as_deref().unwrap().contains("\"b\" in \"g\", a value the model never saw"), "{:?}", p.predictions[1]);

    assert_eq!(select_of(&t, "y", "x, cat(g)").unwrap_err(), SelectError::Fit(FitError::DependentCandidates { terms: vec!["cat(g)".into()] }));
    let path = file("one-level.csv", &csv);
    let p = path.to_str().unwrap();
    let (code, text, _) = cli(&["fit", p, "--response", "y", "--terms", "x, cat(g)"]);
    assert_eq!(code, 0);
    assert!(text.contains("cat(g) has a single value in the rows used"), "{text}");
    cli_refuses(&["select", p, "--response", "y", "--candidates", "x, cat(g)"], &["cat(g) adds no information of its own"]);
}

// ---------------------------------------------------------------------------
// NaN and Inf cells

/// Readers treat NaN, NA and empty cells as missing: the design drops those
/// rows and reports each reason with its rows (lines 3, 7 and 10 by hand:
/// the header is line 1). Inf and other non-numbers in a number column are
/// refused with the row and the cell text. The same holds for a table built
/// in memory: NaN is missing, ±∞ is refused, in a term, the response and
/// the weights.
#[test]
fn nan_and_inf_cells() {
    let csv = "y,x,w\n1.1,1,1\n2.3,NaN,1\n2.9,3,1\n4.2,4,2\n4.8,5,1\n6.1,,1\n7.2,7,1\n7.9,8,1\n9,NA,1\n10.1,10,NaN\n";
    let t = read_csv(csv.as_bytes()).unwrap();
    let r = fit_of(&t, "y", "x").unwrap().report;
    assert_eq!(r.n, 7);
    assert_eq!(r.n_dropped, 3);
    assert_eq!(r.dropped.len(), 1, "{:?}", r.dropped);
    assert_eq!((r.dropped[0].reason.as_str(), r.dropped[0].count, r.dropped[0].first_rows.clone()), ("missing value in x", 3, vec![3, 7, 10]));
    assert_clean_coefficients(&r, "NaN cells");
    let s = ModelSpec { weights: Some("w".into()), ..spec("y", "x", true) };
    let r = fit(&t, &s, &FitOptions::default()).unwrap().report;
    assert_eq!(r.dropped.iter().map(|d| (d.reason.as_str(), d.count)).collect::<Vec<_>>(), [("missing value in x", 3), ("missing value in w", 1)]);
    let path = file("nan-cells.csv", csv);
    let p = path.to_str().unwrap();
    let (code, text, _) = cli(&["fit", p, "--response", "y", "--terms", "x"]);
    assert_eq!(code, 0);
    assert!(text.contains("rows: 7 used, 3 left out (missing value in x: 3)"), "{text}");
    let (_, text, _) = cli(&["fit", p, "--response", "y", "--terms", "x", "--weights", "w"]);
    assert!(text.contains("rows: 6 used, 4 left out (missing value in x: 3; missing value in w: 1)"), "{text}");

    // Lower-case nan and NULL, as common data tools write a missing number, are missing.
    for marker in ["nan", "NULL"] {
        let t = read_csv(format!("y,x\n1.1,1\n2.3,{marker}\n2.9,3\n4.2,4\n4.8,5\n").as_bytes()).unwrap();
        let r = fit_of(&t, "y", "x").unwrap().report;
        assert_eq!((r.n, r.dropped[0].first_rows.clone()), (4, vec![3]), "{marker}");
    }
    for (cell, shown) in [("inf", "inf"), ("-Infinity", "-Infinity"), ("1e999", "1e999")] {
        let bad = format!("y,x\n1.1,1\n2.3,{cell}\n2.9,3\n4.2,4\n4.8,5\n");
        let path = file(&format!("bad-{}.csv", cell.trim_start_matches('-')), &bad);
        let e = fit_of(&read_csv(bad.as_bytes()).unwrap(), "y", "x").unwrap_err();
        assert_eq!(e, FitError::Design(DesignError::NotNumeric { column: "x".into(), row: 3, value: shown.into() }), "{cell}");
        for cmd in ["fit", "check", "select"] {
            let flag = if cmd == "select" { "--candidates" } else { "--terms" };
            cli_refuses(&[cmd, path.to_str().unwrap(), "--response", "y", flag, "x"], &[&format!("row 3 holds \"{shown}\", which is not a number")]);
        }
    }

    // In memory: NaN is missing, ±∞ refused wherever it appears.
    let mut x = X.to_vec();
    x[2] = f64::NAN;
    let r = fit_of(&table(&[("y", Y.to_vec()), ("x", x)]), "y", "x").unwrap().report;
    assert_eq!((r.n, r.dropped[0].first_rows.clone()), (7, vec![4]));
    for (name, response, terms, weights) in [("x", "y", "x", None), ("y", "y", "x", None), ("w", "y", "x", Some("w"))] {
        let mut cols = vec![("y", Y.to_vec()), ("x", X.to_vec()), ("w", vec![1.0; 8])];
        cols.iter_mut().find(|c| c.0 == name).unwrap().1[5] = f64::INFINITY;
        let s = ModelSpec { weights: weights.map(String::from), ..spec(response, terms, true) };
        let e = fit(&table(&cols), &s, &FitOptions::default()).unwrap_err();
        assert_eq!(e, FitError::Design(DesignError::Overflow { term: name.into(), first_row: 7 }), "∞ in {name}");
        assert!(e.to_string().contains("beyond about 1e308) in row 7"), "{e}");
    }
    // A text column read as numbers refuses "inf" as well.
    let mut t = table(&[("y", Y[..3].to_vec())]);
    t.columns.push(Column::new("x", ColumnData::Text(vec![Some("1".into()), Some("inf".into()), Some("3".into())])));
    assert!(matches!(fit_of(&t, "y", "x"), Err(FitError::Design(DesignError::NotNumeric { .. }))));

    // New cases: a missing or non-numeric input gets a reason per row.
    let b = base();
    let s = spec("y", "x", true);
    let f = fit(&b, &s, &FitOptions::default()).unwrap();
    let new = read_csv(b"x\n2\nNaN\ninf\n").unwrap();
    let p = predict(&f, &s, &b, &new, 0.95).unwrap();
    assert!(p.predictions[0].estimate.unwrap().is_finite());
    assert_eq!(p.predictions[1].problem.as_deref(), Some("Row 3 has no value in \"x\", so it cannot be predicted."));
    assert_eq!(p.predictions[2].problem.as_deref(), Some("Row 4 holds \"inf\" in \"x\", which is not a number, so it cannot be predicted."));
}
