//! Inference for a least-squares fit: standard errors, t tests, intervals,
//! R², the F test, the likelihood and the information criteria.
//!
//! Conventions (n rows used, r = rank = number of estimated coefficients):
//!
//! * σ̂² = RSS/(n − r); SE(β̂ⱼ) = σ̂·√[(XᵀWX)⁻¹]ⱼⱼ; t = β̂/SE with a
//!   Student t on n − r degrees of freedom; intervals β̂ ± t₁₋α/₂·SE.
//! * With an intercept, R² = 1 − RSS/TSS with TSS = Σw(y − ȳ_w)² and
//!   adjusted R² = 1 − (1 − R²)(n − 1)/(n − r); without one, TSS = Σwy²
//!   (the uncentred form NIST StRD uses) and adjusted R² = 1 − (1 − R²)n/(n − r).
//! * F = [(TSS − RSS)/df_model]/[RSS/(n − r)], df_model = r − 1 with an
//!   intercept and r without.
//! * The Gaussian log-likelihood at the maximum-likelihood σ² = RSS/n:
//!   ℓ = −n/2·(ln 2π + ln(RSS/n) + 1) + ½Σ ln wᵢ.
//! * AIC = −2ℓ + 2k and BIC = −2ℓ + k·ln n with k = r + 1: σ² counts as a
//!   parameter (Akaike 1974, IEEE Trans. Automatic Control 19; Schwarz 1978,
//!   Annals of Statistics 6).
//! * Standardized coefficient = β̂ⱼ·sd_w(xⱼ)/sd_w(y).
//! * HC3 covariance (MacKinnon and White 1985) from the sandwich with
//!   ωᵢ = eᵢ²/(1 − hᵢ)², on the weighted residuals and leverages.

use crate::lstsq::dd::DD;
use crate::lstsq::LstsqSolution;
use crate::schema::{Coefficient, FitReport, RobustCoefficient, CAUTIONS};
use crate::terms::design::{Design, ModelSpec};
use statrs::distribution::{ContinuousCDF, FisherSnedecor, StudentsT};

/// Options of the inference step.
#[derive(Clone, Copy, Debug)]
pub struct InferenceOptions {
    pub level: f64,
    pub hc3: bool,
}

/// Two-sided p-value of a t statistic on `df` degrees of freedom.
pub fn t_p_value(t: f64, df: f64) -> f64 {
    if t.is_nan() {
        return f64::NAN;
    }
    if t.is_infinite() {
        return 0.0;
    }
    let dist = StudentsT::new(0.0, 1.0, df).expect("df > 0 is checked before inference");
    (2.0 * dist.sf(t.abs())).min(1.0)
}

/// The t quantile for a two-sided interval at `level`.
pub fn t_quantile(level: f64, df: f64) -> f64 {
    let dist = StudentsT::new(0.0, 1.0, df).expect("df > 0 is checked before inference");
    dist.inverse_cdf(1.0 - (1.0 - level) / 2.0)
}

/// Assembles the report from the design and the least-squares solution.
/// Requires `n > rank` (checked by the caller).
pub fn infer(spec: &ModelSpec, design: &Design, sol: &LstsqSolution, table_rows: &[usize], opts: InferenceOptions) -> FitReport {
    let n = design.rows.len();
    let r = sol.rank;
    let df_res = n - r;
    let dfr = df_res as f64;
    let ones;
    let w: &[f64] = match &design.weights {
        Some(w) => w,
        None => {
            ones = vec![1.0; n];
            &ones
        }
    };
    let mut warnings = design.warnings.clone();

    // Sums of squares in double-double, on the response multiplied by the
    // kernel's power of two (`y_scale`), so that data near 1e±300 neither
    // overflow nor underflow; every ratio below is free of the scale.
    let ys = sol.y_scale;
    let unscale = 1.0 / ys;
    let y: Vec<DD> = (0..n).map(|i| design.response.get(i).scale(ys)).collect();
    let sw = w.iter().fold(DD::ZERO, |s, &v| s + DD::from_f64(v));
    let tss = if spec.intercept {
        let mean = y.iter().zip(w).fold(DD::ZERO, |s, (&yi, &wi)| s + yi * DD::from_f64(wi)) / sw;
        y.iter().zip(w).fold(DD::ZERO, |s, (&yi, &wi)| {
            let d = yi - mean;
            s + d * d * DD::from_f64(wi)
        })
    } else {
        y.iter().zip(w).fold(DD::ZERO, |s, (&yi, &wi)| s + yi * yi * DD::from_f64(wi))
    };
    let rss = sol.rss_scaled;
    let rss_f = rss.to_f64();
    let tss_f = tss.to_f64();
    if tss_f == 0.0 {
        warnings.push("The response has the same value in every row used, so R² and the F test are not defined.".into());
    }
    // The sums of squares as reported, on the response's own scale.
    let unscaled = |v: DD| crate::lstsq::unscale_sum(v, unscale).to_f64();
    let (rss_out, tss_out, model_ss_out) = (unscaled(rss), unscaled(tss), unscaled(tss - rss));
    let out_of_range = |reported: f64, scaled: f64| !reported.is_finite() || (scaled > 0.0 && reported < f64::MIN_POSITIVE);
    if out_of_range(rss_out, rss_f) || out_of_range(tss_out, tss_f) {
        warnings.push(format!(
            "The sums of squares of {} lie beyond the range of double precision (its values are near 1e±300), \
             so the residual, total and explained sums of squares show as infinite or zero. Every other figure was \
             computed on exactly rescaled values and is not affected.",
            design.response_label
        ));
    }
    let r2 = (DD::ONE - rss / tss).to_f64();
    let k0 = if spec.intercept { 1.0 } else { 0.0 };
    let adj = 1.0 - (1.0 - r2) * (n as f64 - k0) / dfr;
    let sigma2 = rss / DD::from_f64(dfr);
    let sigma = sigma2.sqrt().to_f64() / ys;
    let df_model = if spec.intercept { r.saturating_sub(1) } else { r };
    let (f, f_p) = if df_model == 0 {
        (f64::NAN, f64::NAN)
    } else {
        let f = ((tss - rss) / DD::from_f64(df_model as f64) / sigma2).to_f64();
        let fp = if f.is_infinite() {
            0.0
        } else if f.is_nan() {
            f64::NAN
        } else {
            FisherSnedecor::new(df_model as f64, dfr).expect("positive df").sf(f)
        };
        (f, fp)
    };
    let nf = n as f64;
    let sum_log_w: f64 = w.iter().map(|v| v.ln()).sum();
    // ln(RSS/n), from RSS·ys² (= ln(RSS·ys²/n) − 2 ln ys) when RSS itself
    // is out of range.
    let ln_rss_n = if rss_out.is_normal() { (rss_out / nf).ln() } else { (rss_f / nf).ln() - 2.0 * ys.ln() };
    let ll = -nf / 2.0 * ((2.0 * std::f64::consts::PI).ln() + ln_rss_n + 1.0) + sum_log_w / 2.0;
    let kpar = (r + 1) as f64;
    let aic = -2.0 * ll + 2.0 * kpar;
    let bic = -2.0 * ll + nf.ln() * kpar;

    // Coefficients.
    let q = t_quantile(opts.level, dfr);
    let sd_y = weighted_sd(&(0..n).map(|i| design.response.get(i).to_f64()).collect::<Vec<_>>(), w);
    let p = design.columns.len();
    // The columns' standard deviations (for the standardized coefficients),
    // one column per task on the solution's threads.
    let sds = crate::lstsq::rows::map_chunks(p, sol.threads(), |j| {
        let col = &design.columns[j];
        if col.term.is_some() && !sol.aliased.contains(&j) {
            weighted_sd(&col.values.hi, w)
        } else {
            f64::NAN
        }
    });
    let mut coefficients = Vec::with_capacity(p);
    for (j, col) in design.columns.iter().enumerate() {
        let group = col.term.map_or("(intercept)".to_string(), |t| spec.terms[t].to_string());
        let aliased = sol.aliased.contains(&j);
        if aliased {
            coefficients.push(Coefficient {
                term: col.label.clone(),
                group,
                estimate: f64::NAN,
                std_error: f64::NAN,
                t: f64::NAN,
                p_value: f64::NAN,
                ci_low: f64::NAN,
                ci_high: f64::NAN,
                standardized: None,
                aliased: true,
            });
            continue;
        }
        let b = sol.coef[j];
        let se = sigma * sol.se_factor(j);
        let t = b / se;
        let standardized = col.term.map(|_| b * sds[j] / sd_y);
        coefficients.push(Coefficient {
            term: col.label.clone(),
            group,
            estimate: b,
            std_error: se,
            t,
            p_value: t_p_value(t, dfr),
            ci_low: b - q * se,
            ci_high: b + q * se,
            standardized,
            aliased: false,
        });
    }
    if !sol.aliased.is_empty() {
        let names: Vec<String> = sol.aliased.iter().map(|&j| design.columns[j].label.clone()).collect();
        warnings.push(format!(
            "{} {} an exact combination of earlier columns (a duplicate, or a category coded with every level), \
             so {} not estimated.",
            names.join(", "),
            if names.len() == 1 { "is" } else { "are" },
            if names.len() == 1 { "it is" } else { "they are" },
        ));
    }

    let hc3 = opts.hc3.then(|| {
        // On the scaled residuals (√w-weighted already); the scale is taken
        // out of the standard error at the end.
        let omega: Vec<f64> = (0..n)
            .map(|i| {
                let e = sol.scaled_residual(i);
                let d = 1.0 - sol.leverage()[i];
                e * e / (d * d)
            })
            .collect();
        if sol.leverage().iter().any(|&h| h > 1.0 - 1e-10) {
            warnings.push("Some rows have leverage 1 (they alone fix a coefficient), so HC3 standard errors are not defined.".into());
        }
        let se_scaled = sol.sandwich_se(&omega);
        coefficients
            .iter()
            .enumerate()
            .map(|(j, c)| {
                let se = se_scaled[j] / ys;
                let t = c.estimate / se;
                RobustCoefficient {
                    term: c.term.clone(),
                    std_error: se,
                    t,
                    p_value: t_p_value(t, dfr),
                    ci_low: c.estimate - q * se,
                    ci_high: c.estimate + q * se,
                }
            })
            .collect()
    });

    FitReport {
        response: design.response_label.clone(),
        terms: spec.terms.iter().map(|t| t.to_string()).collect(),
        intercept: spec.intercept,
        weights: spec.weights.clone(),
        n,
        n_dropped: design.dropped.iter().map(|d| d.count).sum(),
        dropped: design.dropped.clone(),
        rows_used: design.rows.iter().map(|&i| table_rows[i]).collect(),
        df_model,
        df_residual: df_res,
        level: opts.level,
        coefficients,
        hc3,
        r_squared: r2,
        r_squared_kind: if spec.intercept { "centred" } else { "uncentred" },
        adj_r_squared: adj,
        residual_std_error: sigma,
        rss: rss_out,
        tss: tss_out,
        model_ss: model_ss_out,
        f_statistic: f,
        f_p_value: f_p,
        log_likelihood: ll,
        aic,
        bic,
        aliased: sol.aliased.iter().map(|&j| design.columns[j].label.clone()).collect(),
        n_columns: p,
        rank: r,
        rank_tolerance: sol.rank_tol,
        condition_number: sol.condition,
        double_precision_digits: sol.double_digits,
        solver_path: sol.path,
        warnings,
        cautions: CAUTIONS.iter().map(|s| s.to_string()).collect(),
    }
}

/// Weighted standard deviation √(Σw(v − v̄_w)²/Σw), computed on v times a
/// power of two (exact) so that values near 1e±300 neither overflow nor
/// underflow when squared.
fn weighted_sd(v: &[f64], w: &[f64]) -> f64 {
    let big = v.iter().fold(0.0f64, |m, x| m.max(x.abs()));
    let c = if big > 0.0 && big.is_finite() { 2f64.powi(-(big.log2().floor() as i32).clamp(-1020, 1020)) } else { 1.0 };
    let sw: f64 = w.iter().sum();
    let mean = v.iter().zip(w).map(|(a, b)| a * c * b).sum::<f64>() / sw;
    (v.iter().zip(w).map(|(a, b)| b * (a * c - mean) * (a * c - mean)).sum::<f64>() / sw).sqrt() / c
}
