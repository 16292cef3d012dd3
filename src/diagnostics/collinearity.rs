//! Collinearity: variance inflation per term and the condition number of
//! the scaled design.
//!
//! * For a single-column term, VIF = 1/(1 − R²ⱼ), R²ⱼ from regressing the
//!   column on the other columns; computed as [R⁻¹]ⱼⱼ of the correlation
//!   matrix R of the non-intercept columns.
//! * For a term with several columns (a category's dummies, products with
//!   a category), the generalized VIF of Fox and Monette (1992, JASA 87):
//!   GVIF = det R₁₁ · det R₂₂ / det R, with R₁₁ the block of the term's
//!   columns and R₂₂ that of the rest, reported also as GVIF^(1/(2·df)),
//!   which is comparable to √VIF across terms of different sizes.
//! * Without an intercept the "correlations" are uncentred (cosines).
//! * The condition number is the ratio of the largest to the smallest
//!   singular value of the design with every column scaled to unit length
//!   (Belsley, Kuh and Welsch 1980), with and without the intercept.

use crate::lstsq::dd::DD;
use crate::model::Fitted;
use nalgebra::{DMatrix, SymmetricEigen};
use serde::Serialize;

/// Variance inflation of one term.
#[derive(Clone, Debug, Serialize)]
pub struct TermInflation {
    /// The term as written.
    pub term: String,
    /// Number of columns (degrees of freedom) of the term.
    pub df: usize,
    /// VIF, for single-column terms.
    #[serde(serialize_with = "crate::schema::opt_num")]
    pub vif: Option<f64>,
    #[serde(serialize_with = "crate::schema::num")]
    pub gvif: f64,
    /// GVIF^(1/(2·df)).
    #[serde(serialize_with = "crate::schema::num")]
    pub gvif_adjusted: f64,
}

/// Collinearity summary of a fit.
#[derive(Clone, Debug, Serialize)]
pub struct Collinearity {
    pub terms: Vec<TermInflation>,
    /// Condition number of all design columns, each scaled to unit length.
    #[serde(serialize_with = "crate::schema::num")]
    pub condition_number: f64,
    /// The same for the non-intercept columns only.
    #[serde(serialize_with = "crate::schema::num")]
    pub condition_number_predictors: f64,
}

/// log det of a symmetric positive definite matrix, or None if it is not.
fn log_det(m: &DMatrix<f64>) -> Option<f64> {
    if m.nrows() == 0 {
        return Some(0.0);
    }
    let c = m.clone().cholesky()?;
    Some(2.0 * c.l().diagonal().iter().map(|v| v.ln()).sum::<f64>())
}

/// √(λmax/λmin) of a Gram matrix of unit-length columns.
fn condition_of_gram(g: &DMatrix<f64>) -> f64 {
    if g.nrows() == 0 {
        return 1.0;
    }
    let e = SymmetricEigen::new(g.clone()).eigenvalues;
    let max = e.iter().cloned().fold(f64::MIN, f64::max);
    let min = e.iter().cloned().fold(f64::MAX, f64::min);
    if min <= 0.0 {
        f64::INFINITY
    } else {
        (max / min).sqrt()
    }
}

/// Computes the collinearity summary.
pub fn collinearity(f: &Fitted) -> Collinearity {
    let d = &f.design;
    let sol = &f.solution;
    let n = sol.rows;
    let w: Vec<f64> = d.weights.clone().unwrap_or_else(|| vec![1.0; n]);
    let sw: f64 = w.iter().sum();
    let intercept = f.report.intercept;
    // Non-intercept, non-aliased columns.
    let cols: Vec<usize> = (0..d.columns.len()).filter(|&j| d.columns[j].term.is_some() && !sol.aliased.contains(&j)).collect();
    let k = cols.len();
    // Centred (or not) weighted columns, scaled to unit length.
    let prep = |j: usize, centre: bool| -> Vec<f64> {
        let v: Vec<f64> = (0..n).map(|i| d.columns[j].values.get(i).to_f64()).collect();
        // Scaled to unit length below, so an exact power of two may be
        // applied first: squares of values near 1e±300 then stay in range.
        let c = super::residual_tests::pow2_for(&v);
        let v: Vec<f64> = v.iter().map(|x| x * c).collect();
        let mean = if centre { v.iter().zip(&w).map(|(a, b)| a * b).sum::<f64>() / sw } else { 0.0 };
        let c: Vec<f64> = v.iter().zip(&w).map(|(a, b)| (a - mean) * b.sqrt()).collect();
        let norm = c.iter().map(|x| x * x).sum::<f64>().sqrt();
        c.iter().map(|x| if norm > 0.0 { x / norm } else { 0.0 }).collect()
    };
    let gram = |vs: &[Vec<f64>]| -> DMatrix<f64> {
        let m = vs.len();
        DMatrix::from_fn(m, m, |a, b| {
            vs[a].iter().zip(&vs[b]).fold(DD::ZERO, |s, (&x, &y)| s + DD::mul_f64s(x, y)).to_f64()
        })
    };
    let centred: Vec<Vec<f64>> = cols.iter().map(|&j| prep(j, intercept)).collect();
    let r = gram(&centred);
    let ld_all = log_det(&r);
    let mut terms = Vec::new();
    let mut term_ids: Vec<usize> = cols.iter().filter_map(|&j| d.columns[j].term).collect();
    term_ids.dedup();
    for t in term_ids {
        let mine: Vec<usize> = (0..k).filter(|&a| d.columns[cols[a]].term == Some(t)).collect();
        let rest: Vec<usize> = (0..k).filter(|a| !mine.contains(a)).collect();
        let sub = |idx: &[usize]| DMatrix::from_fn(idx.len(), idx.len(), |a, b| r[(idx[a], idx[b])]);
        let gvif = match (ld_all, log_det(&sub(&mine)), log_det(&sub(&rest))) {
            (Some(all), Some(a), Some(b)) => (a + b - all).exp(),
            _ => f64::INFINITY,
        };
        let df = mine.len();
        terms.push(TermInflation {
            term: f.report.terms[t].clone(),
            df,
            vif: (df == 1).then_some(gvif),
            gvif,
            gvif_adjusted: gvif.powf(1.0 / (2.0 * df as f64)),
        });
    }
    let all: Vec<Vec<f64>> = (0..d.columns.len()).filter(|j| !sol.aliased.contains(j)).map(|j| prep(j, false)).collect();
    let raw_predictors: Vec<Vec<f64>> = cols.iter().map(|&j| prep(j, false)).collect();
    Collinearity {
        terms,
        condition_number: condition_of_gram(&gram(&all)),
        condition_number_predictors: condition_of_gram(&gram(&raw_predictors)),
    }
}
