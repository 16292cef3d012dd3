//! Properties of the whole fit (issue 9, item 3), on seeded random
//! problems with categories, weights, powers and products, through
//! `model::fit` and `diagnostics::check`. They extend `tests/algebra.rs`
//! (plain numeric designs: coefficients under row and term order, one
//! column rescaled, nested R², both paths on well-conditioned data) to:
//!
//! * row order: fitted values, t statistics, R² and the per-row
//!   diagnostics follow their rows;
//! * scaling every column and the response by arbitrary factors, out to
//!   1e±300: fitted values scale with the response, R² and t do not move,
//!   and each coefficient scales by (response factor)/(its column's factor);
//! * a row of weight zero, with any values at all, changes nothing;
//! * R² never decreases as terms of any kind are added, with or without an
//!   intercept and weights (least squares over a larger column space cannot
//!   fit worse: a fact of the algebra);
//! * the double and the double-double paths agree to the digits the
//!   kernel's perturbation bound promises, on designs from well to badly
//!   conditioned, and to 12 digits wherever the kernel would choose double.
//!
//! The proptest runner is seeded (`RngSeed::Fixed`), so every run draws the
//! same cases.

mod common;

use common::{spec, Rng};
use plumbline::diagnostics::check;
use plumbline::lstsq::SolverPath;
use plumbline::model::{fit, FitOptions, Fitted};
use plumbline::schema::FitReport;
use plumbline::table::{Column, ColumnData, Table};
use plumbline::terms::ModelSpec;
use proptest::prelude::*;
use proptest::test_runner::RngSeed;

fn config(seed: u64) -> ProptestConfig {
    ProptestConfig { cases: 64, rng_seed: RngSeed::Fixed(seed), failure_persistence: None, ..ProptestConfig::default() }
}

/// A seeded problem: numeric x1, x2, x3 on different scales, x4 > 0, a
/// three-level category g (text), positive weights w, and
/// y = 2 + x1 − 0.5·x2 + 0.3·x1·x2 + level effect + noise.
fn problem(seed: u64, n: usize) -> Table {
    let mut rng = Rng::new(seed);
    let mut cols: Vec<(String, Vec<f64>)> = Vec::new();
    let x1: Vec<f64> = (0..n).map(|_| rng.normal() * 3.0 + 1.0).collect();
    let x2: Vec<f64> = (0..n).map(|_| rng.normal() * 0.01 + 0.05).collect();
    let x3: Vec<f64> = (0..n).map(|_| rng.normal() * 1e4).collect();
    let x4: Vec<f64> = (0..n).map(|_| 0.5 + 10.0 * rng.uniform()).collect();
    let w: Vec<f64> = (0..n).map(|_| 0.2 + 3.0 * rng.uniform()).collect();
    // Every level appears at least twice, so each fit estimates it.
    let g: Vec<usize> = (0..n).map(|i| if i < 6 { i % 3 } else { (rng.next_u64() % 3) as usize }).collect();
    let y: Vec<f64> = (0..n)
        .map(|i| 2.0 + x1[i] - 50.0 * x2[i] + 6.0 * x1[i] * x2[i] + 1e-4 * x3[i] + x4[i].ln() + [0.0, 1.5, -0.7][g[i]] + rng.normal())
        .collect();
    for (name, v) in [("y", y), ("x1", x1), ("x2", x2), ("x3", x3), ("x4", x4), ("w", w)] {
        cols.push((name.into(), v));
    }
    let mut t = Table::from_numeric(cols);
    let labels = ["north", "south", "east"];
    t.columns.push(Column::new("g", ColumnData::Text(g.iter().map(|&k| Some(labels[k].to_string())).collect())));
    t
}

const TERMS: &str = "x1, x2, x3, log(x4), cat(g), x1*x2, x1^2";

fn model(terms: &str, intercept: bool, weights: bool) -> ModelSpec {
    ModelSpec { weights: weights.then(|| "w".to_string()), ..spec("y", terms, intercept) }
}

fn fitted(t: &Table, s: &ModelSpec) -> Fitted {
    fit(t, s, &FitOptions::default()).unwrap_or_else(|e| panic!("{e}"))
}

/// |a − b| within `rel` of the larger, or within `abs`.
fn near(a: f64, b: f64, rel: f64, abs: f64) -> bool {
    a == b || (a - b).abs() <= abs + rel * a.abs().max(b.abs())
}

/// The rows of every column in a new order: row i of the result is row
/// perm[i] of `t` (source row numbers travel with their rows).
fn permute(t: &Table, perm: &[usize]) -> Table {
    let mut out = t.clone();
    for c in out.columns.iter_mut() {
        c.data = match &c.data {
            ColumnData::Numeric(v) => ColumnData::Numeric(perm.iter().map(|&j| v[j]).collect()),
            ColumnData::Date(v) => ColumnData::Date(perm.iter().map(|&j| v[j]).collect()),
            ColumnData::Text(v) => ColumnData::Text(perm.iter().map(|&j| v[j].clone()).collect()),
        };
    }
    out.source_rows = perm.iter().map(|&j| t.source_rows[j]).collect();
    out
}

fn shuffle(seed: u64, n: usize) -> Vec<usize> {
    let mut rng = Rng::new(seed);
    let mut perm: Vec<usize> = (0..n).collect();
    for i in (1..n).rev() {
        perm.swap(i, (rng.next_u64() % (i as u64 + 1)) as usize);
    }
    perm
}

fn numeric_mut<'a>(t: &'a mut Table, name: &str) -> &'a mut Vec<f64> {
    match &mut t.columns.iter_mut().find(|c| c.name == name).unwrap().data {
        ColumnData::Numeric(v) => v,
        _ => unreachable!(),
    }
}

/// Every report number that does not depend on row numbering, as (name, value).
fn figures(r: &FitReport) -> Vec<(String, f64)> {
    let mut out = Vec::new();
    for c in &r.coefficients {
        for (k, v) in [("estimate", c.estimate), ("SE", c.std_error), ("t", c.t), ("p", c.p_value), ("low", c.ci_low), ("high", c.ci_high)] {
            out.push((format!("{} {k}", c.term), v));
        }
    }
    for (k, v) in [("R²", r.r_squared), ("adj R²", r.adj_r_squared), ("σ", r.residual_std_error), ("RSS", r.rss), ("TSS", r.tss), ("F", r.f_statistic), ("ℓ", r.log_likelihood), ("AIC", r.aic), ("BIC", r.bic), ("κ", r.condition_number)] {
        out.push((k.to_string(), v));
    }
    out
}

proptest! {
    #![proptest_config(config(0x9A11_0001))]

    /// Shuffling the rows moves each row's fitted value, residual and
    /// influence with it and changes no t statistic, R² or test.
    #[test]
    fn row_order_moves_nothing_but_the_rows(seed in 0u64..1_000_000, n in 20usize..70, weights in any::<bool>()) {
        let t = problem(seed, n);
        let s = model(TERMS, true, weights);
        let a = fitted(&t, &s);
        let perm = shuffle(seed ^ 0x5EED, n);
        let b = fitted(&permute(&t, &perm), &s);
        let (ra, rb) = (&a.report, &b.report);
        for (ca, cb) in ra.coefficients.iter().zip(&rb.coefficients) {
            prop_assert_eq!(&ca.term, &cb.term);
            prop_assert!(near(ca.t, cb.t, 1e-9, 1e-9), "{}: t {} vs {}", ca.term, ca.t, cb.t);
            prop_assert!(near(ca.p_value, cb.p_value, 1e-8, 1e-14), "{}: p {} vs {}", ca.term, ca.p_value, cb.p_value);
        }
        prop_assert!(near(ra.r_squared, rb.r_squared, 0.0, 1e-13), "R² {} vs {}", ra.r_squared, rb.r_squared);
        prop_assert!(near(ra.adj_r_squared, rb.adj_r_squared, 0.0, 1e-13));
        prop_assert!(near(ra.f_statistic, rb.f_statistic, 1e-11, 0.0));
        let ca = check(&a, &s, None);
        let cb = check(&b, &s, None);
        // Row perm[i] of the original is row i of the shuffled table.
        let scale = ra.residual_std_error;
        for (i, &j) in perm.iter().enumerate() {
            let (x, y) = (&ca.rows[j], &cb.rows[i]);
            prop_assert_eq!(x.row, y.row);
            prop_assert!(near(x.fitted, y.fitted, 1e-12, 1e-12 * scale), "row {}: fitted {} vs {}", x.row, x.fitted, y.fitted);
            prop_assert!(near(x.residual, y.residual, 1e-9, 1e-12 * scale), "row {}: residual", x.row);
            prop_assert!(near(x.leverage, y.leverage, 1e-11, 1e-14), "row {}: leverage {} vs {}", x.row, x.leverage, y.leverage);
            prop_assert!(near(x.studentized, y.studentized, 1e-9, 1e-11), "row {}: studentized", x.row);
            prop_assert!(near(x.cooks_distance, y.cooks_distance, 1e-8, 1e-14), "row {}: Cook's D", x.row);
        }
        let sw = (ca.normality.shapiro_wilk.unwrap().statistic, cb.normality.shapiro_wilk.unwrap().statistic);
        prop_assert!(near(sw.0, sw.1, 1e-12, 0.0), "Shapiro–Wilk {} vs {}", sw.0, sw.1);
        let bp = (ca.breusch_pagan.unwrap().statistic, cb.breusch_pagan.unwrap().statistic);
        prop_assert!(near(bp.0, bp.1, 1e-8, 1e-12), "Breusch–Pagan {} vs {}", bp.0, bp.1);
        for (u, v) in ca.collinearity.terms.iter().zip(&cb.collinearity.terms) {
            prop_assert!(near(u.gvif, v.gvif, 1e-9, 0.0), "GVIF of {}", u.term);
        }
    }

    /// Multiplying y by 10^ey and x1, x2, x3 by 10^e1, 10^e2, 10^e3 (any
    /// exponents out to ±300 whose coefficients stay within f64): fitted
    /// values scale by 10^ey, each coefficient by 10^ey over its column's
    /// factor (x1·x2 by both, log(x4) and the levels by 10^ey alone), and
    /// R², t and the studentized residuals do not move. The scaled inputs
    /// are rounded to f64, a relative change of 1e-16 per value, hence the
    /// tolerances.
    #[test]
    fn column_and_response_scaling(seed in 0u64..1_000_000, n in 20usize..60, ey in -300i32..300, e1 in -140i32..140, e2 in -140i32..140, e3 in -300i32..300) {
        // The coefficients' own size must stay inside f64 (about 1e±308):
        // that of x3 is about 1e-4 × 10^(ey − e3), of x1·x2 10^(ey − e1 − e2).
        prop_assume!((ey - e3).abs() <= 290 && (ey - e1 - e2).abs() <= 290 && (ey - e1).abs() <= 290 && (ey - e2).abs() <= 290);
        let t = problem(seed, n);
        let terms = "x1, x2, x3, log(x4), cat(g), x1*x2";
        let s = model(terms, true, false);
        let a = fitted(&t, &s);
        let (cy, c1, c2, c3) = (10f64.powi(ey), 10f64.powi(e1), 10f64.powi(e2), 10f64.powi(e3));
        let mut u = t.clone();
        for (name, c) in [("y", cy), ("x1", c1), ("x2", c2), ("x3", c3)] {
            numeric_mut(&mut u, name).iter_mut().for_each(|v| *v *= c);
        }
        let b = fitted(&u, &s);
        let (ra, rb) = (&a.report, &b.report);
        prop_assert!(near(ra.r_squared, rb.r_squared, 0.0, 1e-12), "R² {} vs {}", ra.r_squared, rb.r_squared);
        prop_assert!(near(ra.f_statistic, rb.f_statistic, 1e-10, 0.0));
        for (ca, cb) in ra.coefficients.iter().zip(&rb.coefficients) {
            let factor = match ca.term.as_str() {
                "x1" => cy / c1,
                "x2" => cy / c2,
                "x3" => cy / c3,
                "x1*x2" => cy / c1 / c2,
                _ => cy,
            };
            // An estimate near zero is compared on the scale of its SE.
            prop_assert!(near(cb.estimate, ca.estimate * factor, 1e-10, 1e-10 * cb.std_error), "{}: {} vs {} × {factor:e}", ca.term, cb.estimate, ca.estimate);
            prop_assert!(near(cb.std_error, ca.std_error * factor, 1e-10, 0.0), "{}: SE {} vs {}", ca.term, cb.std_error, ca.std_error * factor);
            prop_assert!(near(ca.t, cb.t, 1e-9, 1e-9), "{}: t {} vs {}", ca.term, ca.t, cb.t);
        }
        let (ka, kb) = (check(&a, &s, None), check(&b, &s, None));
        for (x, y) in ka.rows.iter().zip(&kb.rows) {
            prop_assert!(near(y.fitted, x.fitted * cy, 1e-11, 1e-11 * ra.residual_std_error * cy), "row {}: fitted {} vs {}", x.row, y.fitted, x.fitted * cy);
            prop_assert!(near(x.studentized, y.studentized, 1e-8, 1e-10), "row {}: studentized {} vs {}", x.row, x.studentized, y.studentized);
            prop_assert!(near(x.leverage, y.leverage, 1e-10, 1e-13), "row {}: leverage", x.row);
        }
    }

    /// A row of weight zero is left out and named, whatever its values
    /// (here huge, and with a category level no other row has): every
    /// figure of the fit and of its check is the same, bit for bit, since
    /// the remaining arithmetic is the same.
    #[test]
    fn a_zero_weight_row_changes_nothing(seed in 0u64..1_000_000, n in 20usize..60, at in 0usize..60, huge in any::<bool>(), intercept in any::<bool>()) {
        let t = problem(seed, n);
        let at = at % (n + 1);
        let mut u = t.clone();
        let v = if huge { 1e300 } else { -3.5 };
        for c in u.columns.iter_mut() {
            match &mut c.data {
                ColumnData::Numeric(col) => col.insert(at, if c.name == "w" { 0.0 } else if c.name == "x4" { 2.0 } else { v }),
                ColumnData::Text(col) => col.insert(at, Some("only here".into())),
                ColumnData::Date(_) => unreachable!(),
            }
        }
        let extra_row = 1_000_000;
        u.source_rows.insert(at, extra_row);
        let s = model(TERMS, intercept, true);
        let a = fitted(&t, &s);
        let b = fitted(&u, &s);
        let (fa, fb) = (figures(&a.report), figures(&b.report));
        prop_assert_eq!(fa.len(), fb.len());
        for ((k, x), (_, y)) in fa.iter().zip(&fb) {
            prop_assert!(x == y || (x.is_nan() && y.is_nan()), "{k}: {x} vs {y}");
        }
        prop_assert_eq!(&a.report.rows_used, &b.report.rows_used);
        prop_assert_eq!(b.report.dropped.len(), 1);
        prop_assert_eq!(b.report.dropped[0].reason.as_str(), "weight is zero");
        prop_assert_eq!(&b.report.dropped[0].first_rows, &vec![extra_row]);
        let (ka, kb) = (check(&a, &s, None), check(&b, &s, None));
        prop_assert_eq!(ka.rows.len(), kb.rows.len());
        for (x, y) in ka.rows.iter().zip(&kb.rows) {
            prop_assert_eq!((x.row, x.fitted, x.leverage, x.cooks_distance), (y.row, y.fitted, y.leverage, y.cooks_distance));
        }
        prop_assert_eq!(ka.press, kb.press);
    }

    /// Adding terms in any order, of any kind, never lowers R² (centred
    /// with an intercept, uncentred without), weighted or not.
    #[test]
    fn r_squared_never_falls_as_terms_are_added(seed in 0u64..1_000_000, n in 25usize..60, order in Just((0..8).collect::<Vec<usize>>()).prop_shuffle(), intercept in any::<bool>(), weights in any::<bool>()) {
        let pool = ["x1", "x2", "x3", "log(x4)", "cat(g)", "x1*x2", "x1^2", "cat(g)*x3"];
        let t = problem(seed, n);
        let mut terms: Vec<&str> = Vec::new();
        let mut previous = f64::NEG_INFINITY;
        for &k in &order {
            terms.push(pool[k]);
            let r = fitted(&t, &model(&terms.join(", "), intercept, weights)).report;
            prop_assert!(r.r_squared >= previous - 1e-13, "adding {} to {:?}: R² {} after {}", pool[k], &terms[..terms.len() - 1], r.r_squared, previous);
            prop_assert!(r.r_squared <= 1.0 + 1e-15);
            previous = r.r_squared;
        }
    }

    /// The double path forced and the double-double path forced agree to the
    /// digits the kernel's bound promises for the double path (normwise, on
    /// the power-of-two-scaled coefficients the bound is about), with a
    /// factor 10 for the bound's looseness; and to 12 digits in every
    /// coefficient, SE, R² and leverage wherever the kernel would itself
    /// choose double (and there the chosen result is the forced double one).
    /// For k ≥ 0, x3 is made close to a combination of x1 and x2, at a
    /// distance 10^-k, so that the cases run from well to badly conditioned;
    /// for k < 0 it is left independent.
    #[test]
    fn fast_and_extended_paths_agree_where_both_apply(seed in 0u64..1_000_000, n in 15usize..60, k in -3i32..9, weights in any::<bool>()) {
        let mut t = problem(seed, n);
        let mut rng = Rng::new(seed ^ 0xC0FFEE);
        let (x1, x2) = (numeric_mut(&mut t, "x1").clone(), numeric_mut(&mut t, "x2").clone());
        if k >= 0 {
            let x3: Vec<f64> = (0..n).map(|i| x1[i] + 20.0 * x2[i] + 10f64.powi(-k) * rng.normal()).collect();
            *numeric_mut(&mut t, "x3") = x3;
        }
        let s = model("x1, x2, x3, cat(g), x1^2", true, weights);
        let run = |path| {
            let mut o = FitOptions::default();
            o.lstsq.force_path = Some(path);
            fit(&t, &s, &o).unwrap()
        };
        let (fast, slow) = (run(SolverPath::Double), run(SolverPath::DoubleDouble));
        let chosen = fitted(&t, &s);
        let digits = fast.solution.double_digits;
        prop_assert_eq!(digits, slow.solution.double_digits, "the bound comes from the double pass either way");
        prop_assert_eq!(chosen.solution.path, if digits >= 13.0 { SolverPath::Double } else { SolverPath::DoubleDouble });
        prop_assert_eq!(&fast.report.aliased, &slow.report.aliased);
        // Normwise on the scaled problem.
        let unit = |f: &Fitted| -> Vec<f64> { f.solution.coef.iter().zip(f.solution.scales()).map(|(b, s)| b / s).filter(|v| v.is_finite()).collect() };
        let (bf, bs) = (unit(&fast), unit(&slow));
        let diff = bf.iter().zip(&bs).map(|(a, b)| (a - b).powi(2)).sum::<f64>().sqrt();
        let size = bs.iter().map(|b| b * b).sum::<f64>().sqrt();
        let promised = 10f64.powf(-digits.min(15.0));
        prop_assert!(diff <= 10.0 * promised * size + 1e-15 * size, "κ {:.3e}, {digits:.1} digits promised: |Δβ|/|β| = {:.2e}", fast.solution.condition, diff / size);
        if digits >= 13.0 {
            prop_assert_eq!(&chosen.solution.coef_dd, &fast.solution.coef_dd);
            for (a, b) in fast.report.coefficients.iter().zip(&slow.report.coefficients).filter(|(a, _)| !a.aliased) {
                prop_assert!(near(a.estimate, b.estimate, 1e-12, 1e-12 * b.std_error), "{}: {} vs {}", a.term, a.estimate, b.estimate);
                prop_assert!(near(a.std_error, b.std_error, 1e-12, 0.0), "{}: SE {} vs {}", a.term, a.std_error, b.std_error);
            }
            prop_assert!(near(fast.report.r_squared, slow.report.r_squared, 0.0, 1e-14));
            for (a, b) in fast.solution.leverage().iter().zip(slow.solution.leverage()) {
                prop_assert!(near(*a, *b, 1e-12, 1e-15), "leverage {a} vs {b}");
            }
        }
        // The residuals are accumulated in double-double on either path.
        let rss = (fast.report.rss, slow.report.rss);
        prop_assert!(near(rss.0, rss.1, 1e-10, 0.0), "RSS {} vs {}", rss.0, rss.1);
    }
}
