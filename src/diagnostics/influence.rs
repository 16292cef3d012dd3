//! Per-row diagnostics: residuals in their scaled forms, leverage and the
//! influence measures, all from the fit's own factorization (no refits).
//!
//! With e the residual, h the leverage, σ̂² = RSS/(n − p) and
//! σ̂²₍ᵢ₎ = ((n − p)σ̂² − eᵢ²/(1 − hᵢ))/(n − p − 1) (the variance without
//! row i; Belsley, Kuh and Welsch 1980, *Regression Diagnostics*, ch. 2):
//! standardized rᵢ = eᵢ/(σ̂√(1 − hᵢ)); externally studentized
//! tᵢ = eᵢ/(σ̂₍ᵢ₎√(1 − hᵢ)); Cook's Dᵢ = rᵢ²hᵢ/(p(1 − hᵢ)) (Cook 1977,
//! Technometrics 19); DFFITSᵢ = tᵢ√(hᵢ/(1 − hᵢ)); DFBETASᵢⱼ =
//! [(XᵀX)⁻¹xᵢ]ⱼ·eᵢ/(1 − hᵢ) / (σ̂₍ᵢ₎√[(XᵀX)⁻¹]ⱼⱼ), the exact change in β̂ⱼ
//! when row i is left out, in standard errors. For weighted fits every
//! quantity is that of the √w-scaled problem.

use crate::model::Fitted;
use serde::Serialize;

/// Diagnostics of one row used in the fit.
#[derive(Clone, Debug, Serialize)]
pub struct RowDiagnostics {
    /// The row's number in the source (sheet row or file line).
    pub row: usize,
    #[serde(serialize_with = "crate::schema::num")]
    pub fitted: f64,
    /// Observed minus fitted, on the response's scale (unweighted).
    #[serde(serialize_with = "crate::schema::num")]
    pub residual: f64,
    #[serde(serialize_with = "crate::schema::num")]
    pub standardized: f64,
    #[serde(serialize_with = "crate::schema::num")]
    pub studentized: f64,
    #[serde(serialize_with = "crate::schema::num")]
    pub leverage: f64,
    #[serde(serialize_with = "crate::schema::num")]
    pub cooks_distance: f64,
    #[serde(serialize_with = "crate::schema::num")]
    pub dffits: f64,
    /// One per coefficient, in the order of the coefficients (null when aliased).
    pub dfbetas: Vec<Option<f64>>,
}

/// Computes the per-row diagnostics of a fit.
pub fn row_diagnostics(f: &Fitted) -> Vec<RowDiagnostics> {
    let sol = &f.solution;
    let d = &f.design;
    let n = sol.rows;
    let p = sol.cols;
    let r = sol.rank as f64;
    let dfr = n as f64 - r;
    // Every ratio below is free of the response's scale, so it is computed
    // on the residuals times the kernel's power of two (`y_scale`), whose
    // squares stay in range for data near 1e±300.
    let rss = sol.rss_scaled.to_f64();
    let sigma2 = rss / dfr;
    let sigma = sigma2.sqrt();
    let unit = sol.unit_xtx_inv();
    let scales = sol.scales();
    let root_w: Vec<f64> = match &d.weights {
        Some(w) => w.iter().map(|v| v.sqrt()).collect(),
        None => vec![1.0; n],
    };
    let accepted: Vec<usize> = (0..p).filter(|j| !sol.aliased.contains(j)).collect();
    let mut out = Vec::with_capacity(n);
    for i in 0..n {
        let e = sol.scaled_residual(i); // √w-weighted, times y_scale
        let h = sol.leverage()[i];
        let y = d.response.get(i).to_f64();
        let resid = sol.residuals[i].to_f64() / root_w[i];
        let fitted = y - resid;
        let one_minus_h = 1.0 - h;
        let s2_i = ((dfr * sigma2 - e * e / one_minus_h) / (dfr - 1.0)).max(0.0);
        let s_i = s2_i.sqrt();
        let standardized = e / (sigma * one_minus_h.sqrt());
        let studentized = e / (s_i * one_minus_h.sqrt());
        let cooks = standardized * standardized * h / (r * one_minus_h);
        let dffits = studentized * (h / one_minus_h).sqrt();
        // (XᵀX)⁻¹ x̃ᵢ, x̃ᵢ the weighted row, on the scaled columns (the
        // column scale cancels between the change and its standard error).
        let mut dfbetas = vec![None; p];
        for &j in &accepted {
            let mut cx = 0.0;
            for &k in &accepted {
                cx += unit[j * p + k] * (d.columns[k].values.get(i).to_f64() * root_w[i] * scales[k]);
            }
            let change = cx * e / one_minus_h;
            dfbetas[j] = Some(change / (s_i * unit[j * p + j].sqrt()));
        }
        out.push(RowDiagnostics {
            row: f.report.rows_used[i],
            fitted,
            residual: resid,
            standardized,
            studentized,
            leverage: h,
            cooks_distance: cooks,
            dffits,
            dfbetas,
        });
    }
    out
}

/// PRESS, the sum of squared leave-one-out prediction errors,
/// Σ(eᵢ/(1 − hᵢ))² (Allen 1974, Technometrics 16), on the weighted scale.
pub fn press(f: &Fitted) -> f64 {
    let sol = &f.solution;
    let scaled: f64 = (0..sol.rows)
        .map(|i| {
            let e = sol.scaled_residual(i) / (1.0 - sol.leverage()[i]);
            e * e
        })
        .sum();
    // Back to the response's scale one factor at a time.
    scaled / sol.y_scale / sol.y_scale
}
