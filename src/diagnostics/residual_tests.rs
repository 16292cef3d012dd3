//! Tests on the residuals of a fit: constant spread, independence along the
//! row order, and missing curvature.
//!
//! * Breusch–Pagan in Koenker's studentized form (Koenker 1981, Journal of
//!   Econometrics 17): LM = n·R² of e² regressed on the model's columns
//!   (with an intercept), χ² on their number.
//! * Durbin–Watson d = Σ(eₜ − eₜ₋₁)²/Σeₜ² (Durbin and Watson 1950,
//!   Biometrika 37) along the rows as they are in the file. Its p-value is
//!   a normal approximation using the exact mean and variance of d under
//!   independent normal errors for this design (Durbin and Watson 1971,
//!   Biometrika 58): with M = I − H and A the differencing matrix,
//!   E d = tr(MA)/(n − p) and Var d = 2(tr((MA)²) − tr(MA)·E d)/((n − p)(n − p + 2)).
//!   Two-sided: small d means positive, large d negative autocorrelation.
//! * Ramsey's RESET (Ramsey 1969, JRSS B 31): the F test of adding ŷ² and
//!   ŷ³ to the model.
//! * Curvature: for each single-column numeric term, the t test of adding
//!   its centred square.

use super::normality::TestResult;
use crate::inference::t_p_value;
use crate::lstsq::{solve_lstsq, DdColumn, LstsqOptions};
use crate::model::Fitted;
use serde::Serialize;
use statrs::distribution::{ChiSquared, ContinuousCDF, FisherSnedecor};

/// An F test.
#[derive(Clone, Copy, Debug, Serialize)]
pub struct FTest {
    #[serde(serialize_with = "crate::schema::num")]
    pub statistic: f64,
    pub df1: usize,
    pub df2: usize,
    #[serde(serialize_with = "crate::schema::num")]
    pub p_value: f64,
}

/// The Breusch–Pagan result.
#[derive(Clone, Copy, Debug, Serialize)]
pub struct BreuschPagan {
    #[serde(serialize_with = "crate::schema::num")]
    pub statistic: f64,
    pub df: usize,
    #[serde(serialize_with = "crate::schema::num")]
    pub p_value: f64,
}

/// The Durbin–Watson result.
#[derive(Clone, Copy, Debug, Serialize)]
pub struct DurbinWatson {
    #[serde(serialize_with = "crate::schema::num")]
    pub statistic: f64,
    #[serde(serialize_with = "crate::schema::num")]
    pub mean_under_independence: f64,
    #[serde(serialize_with = "crate::schema::num")]
    pub p_value: f64,
    pub method: &'static str,
}

/// Curvature check of one term.
#[derive(Clone, Debug, Serialize)]
pub struct Curvature {
    pub term: String,
    #[serde(serialize_with = "crate::schema::num")]
    pub t: f64,
    #[serde(serialize_with = "crate::schema::num")]
    pub p_value: f64,
}

/// A power of two that brings the largest magnitude of `v` near 1, so that
/// squares of values near 1e±300 stay in range (exact: no digit changes).
pub(crate) fn pow2_for(v: &[f64]) -> f64 {
    let big = v.iter().fold(0.0f64, |m, x| m.max(x.abs()));
    if big > 0.0 && big.is_finite() {
        2f64.powi(-(big.log2().floor() as i32).clamp(-1020, 1020))
    } else {
        1.0
    }
}

fn root_weights(f: &Fitted) -> Vec<f64> {
    match &f.design.weights {
        Some(w) => w.iter().map(|v| v.sqrt()).collect(),
        None => vec![1.0; f.solution.rows],
    }
}

/// The model's weighted columns (the fitted system).
fn weighted_columns(f: &Fitted) -> Vec<DdColumn> {
    let rw = root_weights(f);
    f.design
        .columns
        .iter()
        .enumerate()
        .filter(|(j, _)| !f.solution.aliased.contains(j))
        .map(|(_, c)| DdColumn::from_f64((0..rw.len()).map(|i| c.values.get(i).to_f64() * rw[i]).collect()))
        .collect()
}

fn weighted_response(f: &Fitted) -> DdColumn {
    let rw = root_weights(f);
    DdColumn::from_f64((0..rw.len()).map(|i| f.design.response.get(i).to_f64() * rw[i]).collect())
}

/// Koenker's studentized Breusch–Pagan test; `None` without predictors.
pub fn breusch_pagan(f: &Fitted) -> Option<BreuschPagan> {
    let sol = &f.solution;
    let n = sol.rows;
    // LM is free of the residuals' scale; squares of the scaled residuals stay in range.
    let e2: Vec<f64> = (0..n).map(|i| sol.scaled_residual(i).powi(2)).collect();
    let mut z: Vec<DdColumn> = vec![DdColumn::from_f64(vec![1.0; n])];
    for (j, c) in f.design.columns.iter().enumerate() {
        if c.term.is_some() && !sol.aliased.contains(&j) {
            z.push(c.values.clone());
        }
    }
    if z.len() < 2 {
        return None;
    }
    let aux = solve_lstsq(&z, &DdColumn::from_f64(e2.clone()), &LstsqOptions::default());
    let mean = e2.iter().sum::<f64>() / n as f64;
    let tss: f64 = e2.iter().map(|v| (v - mean) * (v - mean)).sum();
    if !(tss > 0.0) {
        return None;
    }
    let r2 = 1.0 - aux.rss.to_f64() / tss;
    let df = aux.rank - 1;
    let lm = n as f64 * r2;
    let p = ChiSquared::new(df as f64).ok()?.sf(lm);
    Some(BreuschPagan { statistic: lm, df, p_value: p })
}

/// (A v) for the Durbin–Watson differencing matrix A.
fn apply_dw(v: &[f64]) -> Vec<f64> {
    let n = v.len();
    (0..n)
        .map(|t| {
            let mut s = 0.0;
            if t > 0 {
                s += v[t] - v[t - 1];
            }
            if t + 1 < n {
                s += v[t] - v[t + 1];
            }
            s
        })
        .collect()
}

/// Durbin–Watson along the row order; `None` for fewer than 3 rows.
pub fn durbin_watson(f: &Fitted) -> Option<DurbinWatson> {
    let sol = &f.solution;
    let n = sol.rows;
    let r = sol.rank;
    if n < 3 || n <= r + 2 {
        return None;
    }
    let e: Vec<f64> = (0..n).map(|i| sol.scaled_residual(i)).collect();
    let num: f64 = e.windows(2).map(|w| (w[1] - w[0]) * (w[1] - w[0])).sum();
    let den: f64 = e.iter().map(|v| v * v).sum();
    if !(den > 0.0) {
        return None;
    }
    let d = num / den;
    // Traces with H = QQᵀ.
    let q = sol.thin_q();
    let cols: Vec<&[f64]> = (0..r).map(|k| &q[k * n..(k + 1) * n]).collect();
    let aq: Vec<Vec<f64>> = cols.iter().map(|c| apply_dw(c)).collect();
    let tr_a = 2.0 * (n as f64 - 1.0);
    let tr_a2 = 6.0 * n as f64 - 8.0;
    let dot = |a: &[f64], b: &[f64]| a.iter().zip(b).map(|(x, y)| x * y).sum::<f64>();
    let tr_ha: f64 = (0..r).map(|k| dot(cols[k], &aq[k])).sum();
    let tr_ha2: f64 = aq.iter().map(|v| dot(v, v)).sum();
    let mut tr_haha = 0.0;
    for k in 0..r {
        for l in 0..r {
            let m = dot(cols[k], &aq[l]);
            tr_haha += m * m;
        }
    }
    let p_tr = tr_a - tr_ha;
    let q_tr = tr_a2 - 2.0 * tr_ha2 + tr_haha;
    let m = (n - r) as f64;
    let mean = p_tr / m;
    let var = 2.0 * (q_tr - p_tr * mean) / (m * (m + 2.0));
    let z = (d - mean) / var.sqrt();
    let p = libm::erfc(z.abs() / std::f64::consts::SQRT_2).min(1.0);
    Some(DurbinWatson {
        statistic: d,
        mean_under_independence: mean,
        p_value: p,
        method: "normal approximation with the exact mean and variance of d for this design (Durbin and Watson 1971)",
    })
}

/// Refits with extra weighted columns; returns the solution.
fn augmented(f: &Fitted, extra: Vec<Vec<f64>>) -> crate::lstsq::LstsqSolution {
    let rw = root_weights(f);
    let mut x = weighted_columns(f);
    for v in extra {
        x.push(DdColumn::from_f64(v.iter().zip(&rw).map(|(a, b)| a * b).collect()));
    }
    solve_lstsq(&x, &weighted_response(f), &LstsqOptions::default())
}

/// Ramsey's RESET with ŷ² and ŷ³; `None` when there is no room for it.
pub fn reset(f: &Fitted, rows: &[super::influence::RowDiagnostics]) -> Option<FTest> {
    let sol = &f.solution;
    let n = sol.rows;
    // Standardized below, so any exact power-of-two scale may be applied first.
    let c = pow2_for(&rows.iter().map(|r| r.fitted).collect::<Vec<_>>());
    let fitted: Vec<f64> = rows.iter().map(|r| r.fitted * c).collect();
    let mean = fitted.iter().sum::<f64>() / n as f64;
    let sd = (fitted.iter().map(|v| (v - mean) * (v - mean)).sum::<f64>() / n as f64).sqrt();
    if !(sd > 0.0) {
        return None;
    }
    let z: Vec<f64> = fitted.iter().map(|v| (v - mean) / sd).collect();
    let aug = augmented(f, vec![z.iter().map(|v| v * v).collect(), z.iter().map(|v| v * v * v).collect()]);
    let q = aug.rank.checked_sub(sol.rank)?;
    if q == 0 || n <= aug.rank {
        return None;
    }
    let df2 = n - aug.rank;
    // Both on the scale of the augmented fit's response (the two scales are
    // powers of two, and in practice equal).
    let rss0 = sol.rss_scaled.to_f64() * (aug.y_scale / sol.y_scale).powi(2);
    let rss1 = aug.rss_scaled.to_f64();
    let fstat = ((rss0 - rss1) / q as f64) / (rss1 / df2 as f64);
    let p = FisherSnedecor::new(q as f64, df2 as f64).ok()?.sf(fstat.max(0.0));
    Some(FTest { statistic: fstat, df1: q, df2, p_value: p })
}

/// The curvature check of every single-column numeric term that is not
/// already a power.
pub fn curvature(f: &Fitted, spec: &crate::terms::ModelSpec) -> Vec<Curvature> {
    let sol = &f.solution;
    let n = sol.rows;
    let mut out = Vec::new();
    for (t, term) in spec.terms.iter().enumerate() {
        if term.has_category() || matches!(term, crate::terms::Term::Power(..)) {
            continue;
        }
        let cols: Vec<usize> = (0..f.design.columns.len()).filter(|&j| f.design.columns[j].term == Some(t)).collect();
        let [j] = cols[..] else { continue };
        if sol.aliased.contains(&j) {
            continue;
        }
        // Standardized below, so an exact power of two may be applied first.
        let v: Vec<f64> = (0..n).map(|i| f.design.columns[j].values.get(i).to_f64()).collect();
        let c = pow2_for(&v);
        let v: Vec<f64> = v.iter().map(|x| x * c).collect();
        let mean = v.iter().sum::<f64>() / n as f64;
        let sd = (v.iter().map(|x| (x - mean) * (x - mean)).sum::<f64>() / n as f64).sqrt();
        if !(sd > 0.0) {
            continue;
        }
        let sq: Vec<f64> = v.iter().map(|x| ((x - mean) / sd).powi(2)).collect();
        let aug = augmented(f, vec![sq]);
        let k = aug.cols - 1;
        if aug.aliased.contains(&k) || n <= aug.rank {
            continue;
        }
        let dfr = (n - aug.rank) as f64;
        let se = aug.sigma() * aug.se_factor(k);
        let tstat = aug.coef[k] / se;
        out.push(Curvature { term: term.to_string(), t: tstat, p_value: t_p_value(tstat, dfr) });
    }
    out
}

/// The normality tests on the (weighted) residuals.
#[derive(Clone, Debug, Serialize)]
pub struct Normality {
    pub shapiro_wilk: Option<TestResult>,
    pub anderson_darling: Option<AndersonDarling>,
    pub jarque_bera: Option<TestResult>,
}

/// Anderson–Darling statistics and p-value.
#[derive(Clone, Copy, Debug, Serialize)]
pub struct AndersonDarling {
    #[serde(serialize_with = "crate::schema::num")]
    pub statistic: f64,
    #[serde(serialize_with = "crate::schema::num")]
    pub adjusted: f64,
    #[serde(serialize_with = "crate::schema::num")]
    pub p_value: f64,
}

pub fn normality(f: &Fitted) -> Normality {
    // The tests are free of the residuals' scale; the scaled residuals'
    // squares and fourth powers stay in range for data near 1e±300.
    let e: Vec<f64> = (0..f.solution.rows).map(|i| f.solution.scaled_residual(i)).collect();
    Normality {
        shapiro_wilk: super::normality::shapiro_wilk(&e),
        anderson_darling: super::normality::anderson_darling(&e)
            .map(|(a, adj, p)| AndersonDarling { statistic: a, adjusted: adj, p_value: p }),
        jarque_bera: super::normality::jarque_bera(&e),
    }
}
