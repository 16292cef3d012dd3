//! The algebra of least squares, checked on seeded random problems:
//! X·P ≈ Q·R, QᵀQ ≈ I and Xᵀr ≈ 0 (products formed independently with
//! nalgebra); invariance to row order and term order; scaling a column
//! scales its coefficient inversely; both arithmetic paths agree. Plus two
//! facts of the trade (common practice, no source): R² never decreases when
//! a term is added, and adjusted R² is below R² whenever there is a term.

mod common;

use common::{fit_table, random_table, Rng};
use nalgebra::DMatrix;
use plumbline::lstsq::dd::DD;
use plumbline::lstsq::qr_pivot::{factor_qr_pivoted, QrParams};
use plumbline::lstsq::{solve_lstsq, DdColumn, LstsqOptions, SolverPath};
use plumbline::model::FitOptions;
use plumbline::table::{ColumnData, Table};
use proptest::prelude::*;

fn random_matrix(seed: u64, n: usize, p: usize) -> Vec<f64> {
    let mut rng = Rng::new(seed);
    (0..n * p).map(|_| rng.normal()).collect()
}

/// X·P ≈ Q·R and QᵀQ ≈ I, for sizes around small block edges, in both arithmetics.
#[test]
fn factorization_reproduces_its_input() {
    for (k, &(n, p)) in [(1, 1), (2, 1), (5, 3), (8, 8), (17, 16), (33, 7), (64, 31), (100, 40)].iter().enumerate() {
        let a = random_matrix(100 + k as u64, n, p);
        let x = DMatrix::from_column_slice(n, p, &a);
        let params = QrParams { rank_tol: 1e-12 };

        let f = factor_qr_pivoted(a.clone(), n, p, params);
        assert_eq!(f.rank, p.min(n), "{n}x{p}: random matrices have full rank");
        let q = DMatrix::from_column_slice(n, f.rank, &f.thin_q());
        let r = DMatrix::from_column_slice(f.rank, f.rank, &f.r_matrix());
        let xp = DMatrix::from_fn(n, f.rank, |i, j| x[(i, f.accepted[j])]);
        let err = (&q * &r - &xp).norm() / xp.norm();
        assert!(err < 1e-14, "{n}x{p}: |QR - XP|/|X| = {err:e}");
        let orth = (q.transpose() * &q - DMatrix::identity(f.rank, f.rank)).norm();
        assert!(orth < 1e-14, "{n}x{p}: |QᵀQ - I| = {orth:e}");

        let add: Vec<DD> = a.iter().map(|&v| DD::from_f64(v)).collect();
        let g = factor_qr_pivoted(add, n, p, params);
        let q: Vec<f64> = g.thin_q().iter().map(|v| v.to_f64()).collect();
        let r: Vec<f64> = g.r_matrix().iter().map(|v| v.to_f64()).collect();
        let q = DMatrix::from_column_slice(n, g.rank, &q);
        let r = DMatrix::from_column_slice(g.rank, g.rank, &r);
        let err = (&q * &r - &xp).norm() / xp.norm();
        assert!(err < 1e-15, "{n}x{p} double-double: |QR - XP|/|X| = {err:e}");
    }
}

/// The residual is orthogonal to every column: |Xᵀr| ≤ tol·|X||r|.
#[test]
fn residuals_are_orthogonal_to_the_columns() {
    for seed in 0..20u64 {
        let (n, p) = (30 + seed as usize * 7, 1 + seed as usize % 9);
        let a = random_matrix(seed, n, p);
        let mut rng = Rng::new(seed + 1000);
        let y: Vec<f64> = (0..n).map(|_| rng.normal()).collect();
        let x: Vec<DdColumn> = (0..p).map(|j| DdColumn::from_f64(a[j * n..(j + 1) * n].to_vec())).collect();
        let sol = solve_lstsq(&x, &DdColumn::from_f64(y), &LstsqOptions::default());
        let xm = DMatrix::from_column_slice(n, p, &a);
        let r = DMatrix::from_iterator(n, 1, sol.residuals.iter().map(|v| v.to_f64()));
        let xtr = (xm.transpose() * &r).norm() / (xm.norm() * r.norm());
        assert!(xtr < 1e-14, "seed {seed}: |Xᵀr|/(|X||r|) = {xtr:e}");
    }
}

fn permuted_rows(t: &Table, perm: &[usize]) -> Table {
    let mut out = t.clone();
    for c in out.columns.iter_mut() {
        if let ColumnData::Numeric(v) = &mut c.data {
            let old = v.clone();
            for (i, &j) in perm.iter().enumerate() {
                v[i] = old[j];
            }
        }
    }
    out
}

fn rel(a: f64, b: f64) -> f64 {
    if a == b {
        0.0
    } else {
        (a - b).abs() / a.abs().max(b.abs())
    }
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 64, ..ProptestConfig::default() })]

    /// Shuffling rows changes no number.
    #[test]
    fn row_order_does_not_matter(seed in 0u64..1_000_000, n in 12usize..80, p in 1usize..6) {
        let t = random_table(seed, n, p);
        let terms: Vec<String> = (1..=p).map(|j| format!("x{j}")).collect();
        let terms = terms.join(", ");
        let a = fit_table(&t, "y", &terms, true, FitOptions::default()).unwrap().report;
        let mut rng = Rng::new(seed ^ 0xABCD);
        let mut perm: Vec<usize> = (0..n).collect();
        for i in (1..n).rev() {
            perm.swap(i, (rng.next_u64() % (i as u64 + 1)) as usize);
        }
        let b = fit_table(&permuted_rows(&t, &perm), "y", &terms, true, FitOptions::default()).unwrap().report;
        for (ca, cb) in a.coefficients.iter().zip(&b.coefficients) {
            prop_assert!(rel(ca.estimate, cb.estimate) < 1e-10 || (ca.estimate - cb.estimate).abs() < 1e-12 * ca.std_error,
                "{}: {} vs {}", ca.term, ca.estimate, cb.estimate);
            prop_assert!(rel(ca.std_error, cb.std_error) < 1e-10);
        }
        prop_assert!(rel(a.rss, b.rss) < 1e-12);
        prop_assert!(rel(a.aic, b.aic) < 1e-12);
    }

    /// Reversing the terms reorders the coefficients and changes nothing else.
    #[test]
    fn term_order_does_not_matter(seed in 0u64..1_000_000, n in 12usize..80, p in 2usize..6) {
        let t = random_table(seed, n, p);
        let fwd: Vec<String> = (1..=p).map(|j| format!("x{j}")).collect();
        let rev: Vec<String> = fwd.iter().rev().cloned().collect();
        let a = fit_table(&t, "y", &fwd.join(", "), true, FitOptions::default()).unwrap().report;
        let b = fit_table(&t, "y", &rev.join(", "), true, FitOptions::default()).unwrap().report;
        for ca in &a.coefficients {
            let cb = b.coefficients.iter().find(|c| c.term == ca.term).unwrap();
            prop_assert!(rel(ca.estimate, cb.estimate) < 1e-10 || (ca.estimate - cb.estimate).abs() < 1e-12 * ca.std_error);
            prop_assert!(rel(ca.std_error, cb.std_error) < 1e-10);
        }
        prop_assert!(rel(a.r_squared, b.r_squared) < 1e-12);
    }

    /// Multiplying a column by c divides its coefficient and standard error by c.
    #[test]
    fn scaling_a_column_scales_its_coefficient_inversely(seed in 0u64..1_000_000, n in 12usize..60, exp in -8i32..8) {
        let t = random_table(seed, n, 3);
        let c = 10f64.powi(exp) * 1.7;
        let mut s = t.clone();
        if let ColumnData::Numeric(v) = &mut s.columns[2].data {
            for x in v.iter_mut() { *x *= c; }
        }
        let a = fit_table(&t, "y", "x1, x2, x3", true, FitOptions::default()).unwrap().report;
        let b = fit_table(&s, "y", "x1, x2, x3", true, FitOptions::default()).unwrap().report;
        prop_assert!(rel(a.coefficients[2].estimate, b.coefficients[2].estimate * c) < 1e-10);
        prop_assert!(rel(a.coefficients[2].std_error, b.coefficients[2].std_error * c) < 1e-10);
        prop_assert!(rel(a.coefficients[2].t, b.coefficients[2].t) < 1e-9);
        prop_assert!(rel(a.coefficients[1].estimate, b.coefficients[1].estimate) < 1e-10);
    }

    /// Common practice, no source: R² never decreases when a term is added,
    /// and adjusted R² is below R² whenever the model has a term.
    #[test]
    fn r_squared_is_monotone_and_adjusted_is_lower(seed in 0u64..1_000_000, n in 15usize..60, p in 1usize..7) {
        let t = random_table(seed, n, p);
        let mut prev = 0.0;
        for k in 1..=p {
            let terms: Vec<String> = (1..=k).map(|j| format!("x{j}")).collect();
            let r = fit_table(&t, "y", &terms.join(", "), true, FitOptions::default()).unwrap().report;
            prop_assert!(r.r_squared >= prev - 1e-13, "adding x{k}: R² {} after {}", r.r_squared, prev);
            prop_assert!(r.adj_r_squared < r.r_squared, "k={k}: adjusted {} vs {}", r.adj_r_squared, r.r_squared);
            prev = r.r_squared;
        }
    }

    /// The double and double-double paths agree where both apply.
    #[test]
    fn both_paths_agree(seed in 0u64..1_000_000, n in 10usize..60, p in 1usize..6) {
        let t = random_table(seed, n, p);
        let terms: Vec<String> = (1..=p).map(|j| format!("x{j}")).collect();
        let mut fast = FitOptions::default();
        fast.lstsq.force_path = Some(SolverPath::Double);
        let mut slow = FitOptions::default();
        slow.lstsq.force_path = Some(SolverPath::DoubleDouble);
        let a = fit_table(&t, "y", &terms.join(", "), true, fast).unwrap().report;
        let b = fit_table(&t, "y", &terms.join(", "), true, slow).unwrap().report;
        for (ca, cb) in a.coefficients.iter().zip(&b.coefficients) {
            prop_assert!(rel(ca.estimate, cb.estimate) < 1e-12 || (ca.estimate - cb.estimate).abs() < 1e-13 * ca.std_error);
            prop_assert!(rel(ca.std_error, cb.std_error) < 1e-12);
        }
    }
}

/// A duplicated column and a full set of dummies are aliased by name,
/// and the remaining coefficients are those of the model without them.
#[test]
fn aliased_terms_are_reported_by_name() {
    let t = random_table(7, 40, 2);
    let mut dup = t.clone();
    let x1 = dup.columns[1].data.clone();
    dup.columns.push(plumbline::table::Column::new("x1 copy", x1));
    let r = fit_table(&dup, "y", "x1, x2, \"x1 copy\"", true, FitOptions::default()).unwrap().report;
    assert_eq!(r.aliased, ["\"x1 copy\""], "labels are written as terms, quoted");
    assert!(r.coefficients[3].aliased && r.coefficients[3].estimate.is_nan());
    assert_eq!(r.rank, 3);
    assert_eq!(r.df_residual, 37);
    assert!(r.warnings.iter().any(|w| w.contains("\"x1 copy\"")), "{:?}", r.warnings);
    let base = fit_table(&t, "y", "x1, x2", true, FitOptions::default()).unwrap().report;
    for j in 0..3 {
        assert!(rel(r.coefficients[j].estimate, base.coefficients[j].estimate) < 1e-12);
        assert!(rel(r.coefficients[j].std_error, base.coefficients[j].std_error) < 1e-12);
    }
    // The dummy trap: a category with every level plus its complement.
    let csv = b"y,g,a,b\n1,a,1,0\n2,b,0,1\n3,a,1,0\n5,b,0,1\n4,a,1,0\n";
    let table = plumbline::read::csv::read_csv(csv).unwrap();
    let r = fit_table(&table, "y", "a, b", true, FitOptions::default()).unwrap().report;
    assert_eq!(r.aliased, ["b"]);
    let r = fit_table(&table, "y", "a, b", false, FitOptions::default()).unwrap().report;
    assert!(r.aliased.is_empty(), "without an intercept a and b are independent");
    let r = fit_table(&table, "y", "cat(g), a", true, FitOptions::default()).unwrap().report;
    assert_eq!(r.aliased, ["a"], "a = 1 − (g=b): the later column, a, is the aliased one");
}

/// An exact fit reports zero residuals, not rounding noise.
#[test]
fn exact_fits_report_zero_residual() {
    let x: Vec<f64> = (0..12).map(|i| i as f64 * 0.5).collect();
    let y: Vec<f64> = x.iter().map(|v| 2.0 + 3.0 * v).collect();
    let t = Table::from_numeric(vec![("y".into(), y), ("x".into(), x)]);
    let r = fit_table(&t, "y", "x", true, FitOptions::default()).unwrap().report;
    assert_eq!(r.rss, 0.0);
    assert_eq!(r.coefficients[1].estimate, 3.0);
    assert_eq!(r.r_squared, 1.0);
    assert!(r.f_statistic.is_infinite());
}
