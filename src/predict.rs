//! Predictions for new cases, with a confidence interval for the mean and
//! a prediction interval for a single new case, and flags where the case
//! lies outside what the data cover.
//!
//! With x₀ the new case's design row, C = (XᵀWX)⁻¹, h₀ = x₀ᵀCx₀ and t the
//! Student t quantile on the residual degrees of freedom: mean interval
//! ŷ ± tσ̂√h₀; prediction interval ŷ ± tσ̂√(1 + h₀) (for a new case of
//! weight 1). When the response was transformed (log, sqrt, Box–Cox,
//! Yeo–Johnson of a column), the estimate of the mean on the original scale
//! is Duan's smearing estimate (Duan 1983, JASA 78): the average over the
//! fitted rows of g⁻¹(ŷ + eᵢ); the mean interval's ends are smeared the
//! same way, and the prediction interval's ends are back-transformed
//! directly (a monotone transform of a quantile is the quantile).

use crate::inference::t_quantile;
use crate::model::Fitted;
use crate::table::{ColumnData, Table};
use crate::terms::design::{term_columns, DesignError};
use crate::terms::{ModelSpec, Term};
use serde::Serialize;

/// One new case's prediction.
#[derive(Clone, Debug, Serialize)]
pub struct Prediction {
    /// The row's number in the new file.
    pub row: usize,
    /// Why the row has no prediction, in plain words.
    pub problem: Option<String>,
    #[serde(serialize_with = "crate::schema::opt_num")]
    pub estimate: Option<f64>,
    #[serde(serialize_with = "crate::schema::opt_num")]
    pub ci_low: Option<f64>,
    #[serde(serialize_with = "crate::schema::opt_num")]
    pub ci_high: Option<f64>,
    #[serde(serialize_with = "crate::schema::opt_num")]
    pub pi_low: Option<f64>,
    #[serde(serialize_with = "crate::schema::opt_num")]
    pub pi_high: Option<f64>,
    #[serde(serialize_with = "crate::schema::opt_num")]
    pub leverage: Option<f64>,
    /// The same on the response's original scale, when it was transformed.
    pub original: Option<Interval>,
    /// True when the case lies outside the data's range or beyond the
    /// largest leverage of the fitted rows.
    pub extrapolation: bool,
    pub extrapolation_reasons: Vec<String>,
}

/// An estimate with its two intervals.
#[derive(Clone, Copy, Debug, Serialize)]
pub struct Interval {
    #[serde(serialize_with = "crate::schema::num")]
    pub estimate: f64,
    #[serde(serialize_with = "crate::schema::num")]
    pub ci_low: f64,
    #[serde(serialize_with = "crate::schema::num")]
    pub ci_high: f64,
    #[serde(serialize_with = "crate::schema::num")]
    pub pi_low: f64,
    #[serde(serialize_with = "crate::schema::num")]
    pub pi_high: f64,
}

/// Everything `predict` reports.
#[derive(Clone, Debug, Serialize)]
pub struct PredictReport {
    pub response: String,
    pub level: f64,
    /// How the original scale is reached, when the response was transformed.
    pub back_transform: Option<String>,
    /// Duan's smearing factor for a log response (the mean of exp(eᵢ)).
    #[serde(serialize_with = "crate::schema::opt_num")]
    pub smearing: Option<f64>,
    #[serde(serialize_with = "crate::schema::num")]
    pub max_training_leverage: f64,
    pub predictions: Vec<Prediction>,
    pub notes: Vec<String>,
    pub cautions: Vec<String>,
}

/// A back-transform: its description and the function.
type Inverse = (String, Box<dyn Fn(f64) -> f64>);

/// The inverse of the response transform, when there is one.
fn inverse(response: &Term) -> Option<Inverse> {
    match response {
        Term::Log(inner) if matches!(**inner, Term::Column(_)) => Some(("exp, with Duan's smearing".into(), Box::new(libm::exp))),
        Term::Sqrt(inner) if matches!(**inner, Term::Column(_)) => Some(("square, with Duan's smearing".into(), Box::new(|v: f64| v.max(0.0) * v.max(0.0)))),
        Term::BoxCox(inner, l) if matches!(**inner, Term::Column(_)) => {
            let l = *l;
            Some((
                format!("inverse Box–Cox (λ = {l}), with Duan's smearing"),
                Box::new(move |v: f64| if l == 0.0 { libm::exp(v) } else { libm::pow((1.0 + l * v).max(0.0), 1.0 / l) }),
            ))
        }
        Term::YeoJohnson(inner, l) if matches!(**inner, Term::Column(_)) => {
            let l = *l;
            Some((
                format!("inverse Yeo–Johnson (λ = {l}), with Duan's smearing"),
                Box::new(move |v: f64| {
                    if v >= 0.0 {
                        if l == 0.0 { libm::expm1(v) } else { libm::expm1(libm::log1p(l * v) / l) }
                    } else if l == 2.0 {
                        -libm::expm1(-v)
                    } else {
                        -libm::expm1(libm::log1p((2.0 - l) * -v) / (2.0 - l))
                    }
                }),
            ))
        }
        _ => None,
    }
}

/// Numeric columns the terms read (not inside a category).
fn numeric_columns(t: &Term, out: &mut Vec<String>) {
    match t {
        Term::Column(c) => {
            if !out.contains(c) {
                out.push(c.clone())
            }
        }
        Term::Cat { .. } => {}
        Term::Log(x) | Term::Sqrt(x) | Term::Power(x, _) | Term::BoxCox(x, _) | Term::YeoJohnson(x, _) => numeric_columns(x, out),
        Term::Product(a, b) => {
            numeric_columns(a, out);
            numeric_columns(b, out);
        }
    }
}

fn values(table: &Table, name: &str) -> Option<Vec<f64>> {
    match &table.column(name)?.data {
        ColumnData::Numeric(v) | ColumnData::Date(v) => Some(v.to_vec()),
        ColumnData::Text(c) => Some(c.iter().map(|s| s.as_deref().and_then(crate::table::parse_number).unwrap_or(f64::NAN)).collect()),
    }
}

/// The text of a cell that should be a number and is not.
fn not_a_number(table: &Table, name: &str, i: usize) -> Option<String> {
    let col = table.column(name)?;
    match &col.data {
        ColumnData::Text(c) => c[i].as_ref().filter(|s| crate::table::parse_number(s).is_none()).cloned(),
        _ => col.invalid.iter().find(|(r, _)| *r == i).map(|(_, t)| t.clone()),
    }
}

/// The residuals on the response's own scale (unweighted).
fn raw_residuals(fitted: &Fitted) -> Vec<f64> {
    let sol = &fitted.solution;
    let w = fitted.design.weights.as_ref();
    (0..sol.rows).map(|i| sol.residuals[i].to_f64() / w.map_or(1.0, |w| w[i].sqrt())).collect()
}

/// Duan's smearing factor for a log response: the mean of exp(eᵢ).
pub fn log_smearing(fitted: &Fitted) -> f64 {
    let r = raw_residuals(fitted);
    r.iter().map(|&e| libm::exp(e)).sum::<f64>() / r.len() as f64
}

/// Predicts the rows of `new` from a model fitted to `training`.
pub fn predict(fitted: &Fitted, spec: &ModelSpec, training: &Table, new: &Table, level: f64) -> Result<PredictReport, DesignError> {
    let d = &fitted.design;
    let sol = &fitted.solution;
    let rep = &fitted.report;
    let p = sol.cols;
    // Every column the terms read must exist in the new table.
    let mut used: Vec<&str> = Vec::new();
    for t in &spec.terms {
        for c in t.columns() {
            if !used.contains(&c) {
                used.push(c);
            }
        }
    }
    for c in &used {
        if new.column(c).is_none() {
            return Err(DesignError::UnknownColumn { name: c.to_string(), suggestions: Vec::new() });
        }
    }
    let mut numeric = Vec::new();
    for t in &spec.terms {
        numeric_columns(t, &mut numeric);
    }
    let ranges: Vec<(String, f64, f64)> = numeric
        .iter()
        .filter_map(|c| {
            let v = values(training, c)?;
            let used_rows: Vec<f64> = d.rows.iter().map(|&i| v[i]).collect();
            let lo = used_rows.iter().copied().fold(f64::INFINITY, f64::min);
            let hi = used_rows.iter().copied().fold(f64::NEG_INFINITY, f64::max);
            Some((c.clone(), lo, hi))
        })
        .collect();
    let max_lev = sol.leverage().iter().copied().fold(0.0, f64::max);
    let sigma = rep.residual_std_error;
    let q = t_quantile(level, rep.df_residual as f64);
    let back = inverse(&spec.response);
    let resid = raw_residuals(fitted);
    let smear = |g: &dyn Fn(f64) -> f64, v: f64| resid.iter().map(|e| g(v + e)).sum::<f64>() / resid.len() as f64;
    let smearing = match &spec.response {
        Term::Log(inner) if matches!(**inner, Term::Column(_)) => Some(log_smearing(fitted)),
        _ => None,
    };
    let mut predictions = Vec::with_capacity(new.n_rows());
    for i in 0..new.n_rows() {
        let row = new.source_rows[i];
        let mut pr = Prediction {
            row,
            problem: None,
            estimate: None,
            ci_low: None,
            ci_high: None,
            pi_low: None,
            pi_high: None,
            leverage: None,
            original: None,
            extrapolation: false,
            extrapolation_reasons: Vec::new(),
        };
        if let Some(c) = used.iter().find(|c| new.column(c).is_some_and(|col| col.data.is_missing(i))) {
            pr.problem = Some(format!("Row {row} has no value in \"{c}\", so it cannot be predicted."));
            predictions.push(pr);
            continue;
        }
        if let Some((c, text)) = numeric.iter().find_map(|c| not_a_number(new, c, i).map(|t| (c, t))) {
            pr.problem = Some(format!("Row {row} holds \"{text}\" in \"{c}\", which is not a number, so it cannot be predicted."));
            predictions.push(pr);
            continue;
        }
        let cols = match term_columns(new, spec, &d.levels, &[i]) {
            Ok(c) => c,
            Err(e) => {
                pr.problem = Some(e.to_string());
                predictions.push(pr);
                continue;
            }
        };
        let x: Vec<f64> = cols.iter().map(|c| c.values.get(0).to_f64()).collect();
        if x.len() != p || x.iter().any(|v| !v.is_finite()) {
            pr.problem = Some(format!("Row {row} could not be coded like the fitted rows."));
            predictions.push(pr);
            continue;
        }
        let acc: Vec<usize> = (0..p).filter(|j| !sol.aliased.contains(j)).collect();
        let est: f64 = acc.iter().map(|&j| x[j] * sol.coef[j]).sum();
        // h₀ = x₀ᵀ(XᵀX)⁻¹x₀ on the kernel's scaled columns (the same number,
        // without overflow or underflow when columns are near 1e±300).
        let (unit, scales) = (sol.unit_xtx_inv(), sol.scales());
        let mut h = 0.0;
        for &a in &acc {
            for &b in &acc {
                h += (x[a] * scales[a]) * unit[a * p + b] * (x[b] * scales[b]);
            }
        }
        let h = h.max(0.0);
        let (se_m, se_p) = (sigma * h.sqrt(), sigma * (1.0 + h).sqrt());
        pr.estimate = Some(est);
        pr.ci_low = Some(est - q * se_m);
        pr.ci_high = Some(est + q * se_m);
        pr.pi_low = Some(est - q * se_p);
        pr.pi_high = Some(est + q * se_p);
        pr.leverage = Some(h);
        for (c, lo, hi) in &ranges {
            let v = values(new, c).map_or(f64::NAN, |v| v[i]);
            if v < *lo {
                pr.extrapolation_reasons.push(format!("{c} = {v} is below the smallest value in the data ({lo})"));
            } else if v > *hi {
                pr.extrapolation_reasons.push(format!("{c} = {v} is above the largest value in the data ({hi})"));
            }
        }
        if h > max_lev {
            pr.extrapolation_reasons.push(format!(
                "its combination of values is further from the data than any fitted row (leverage {} against at most {})",
                crate::text::short(h, 3),
                crate::text::short(max_lev, 3)
            ));
        }
        pr.extrapolation = !pr.extrapolation_reasons.is_empty();
        if let Some((_, g)) = &back {
            let (lo_m, hi_m) = (est - q * se_m, est + q * se_m);
            let (lo_p, hi_p) = (est - q * se_p, est + q * se_p);
            pr.original = Some(Interval {
                estimate: smear(g.as_ref(), est),
                ci_low: smear(g.as_ref(), lo_m),
                ci_high: smear(g.as_ref(), hi_m),
                pi_low: g(lo_p),
                pi_high: g(hi_p),
            });
        }
        predictions.push(pr);
    }
    let mut notes = Vec::new();
    if d.weights.is_some() {
        notes.push("The model was fitted with weights; the prediction intervals are for a new case of weight 1.".into());
    }
    let flagged = predictions.iter().filter(|p| p.extrapolation).count();
    if flagged > 0 {
        notes.push(if predictions.len() == 1 {
            "This case lies outside what the data cover; its prediction is an extrapolation and may be far off.".to_string()
        } else if flagged == 1 {
            format!("1 of the {} rows lies outside what the data cover; its prediction is an extrapolation and may be far off.", predictions.len())
        } else {
            format!(
                "{flagged} of the {} rows lie outside what the data cover; their predictions are extrapolations and may be far off.",
                predictions.len()
            )
        });
    }
    Ok(PredictReport {
        response: rep.response.clone(),
        level,
        back_transform: back.map(|(n, _)| n),
        smearing,
        max_training_leverage: max_lev,
        predictions,
        notes,
        cautions: rep.cautions.clone(),
    })
}
