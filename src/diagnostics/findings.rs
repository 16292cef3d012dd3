//! Findings in plain words, ranked by how much they matter.
//!
//! Thresholds. Tests use the 5% level (common practice, no source). The
//! rest are rules of thumb, all common practice with no source:
//! Cook's distance above 1 (the row alone moves the fit) or above 4/n;
//! |studentized residual| above 3; leverage above 3p/n; VIF above 10
//! (GVIF^(1/(2·df)) above √10 for a term with several columns) is serious
//! and above 5 worth a look; a condition number of the scaled design above
//! 30 (Belsley, Kuh and Welsch 1980 suggest 30 as where trouble starts).

use super::CheckReport;
use serde::Serialize;

/// One finding.
#[derive(Clone, Debug, Serialize)]
pub struct Finding {
    /// 3 act on it, 2 look at it, 1 worth knowing, 0 nothing found.
    pub severity: u8,
    /// What was found and what to do, in plain words.
    pub text: String,
    /// The rule that raised it.
    pub rule: String,
}

fn p(v: f64) -> String {
    if v < 0.001 {
        "< 0.001".into()
    } else {
        format!("= {}", crate::text::short(v, 2))
    }
}

/// Names a row as the user's file does.
pub fn row_name(sheet: Option<&str>, row: usize) -> String {
    match sheet {
        Some(s) => format!("row {row} of sheet \"{s}\""),
        None => format!("line {row} of the file"),
    }
}

fn capitalised(s: &str) -> String {
    let mut c = s.chars();
    c.next().map_or(String::new(), |f| f.to_uppercase().chain(c).collect())
}

/// The findings of a check, most important first.
pub fn findings(c: &CheckReport, sheet: Option<&str>) -> Vec<Finding> {
    let mut out = Vec::new();
    let n = c.rows.len() as f64;
    let k = c.fit.rank as f64;
    if !c.fit.aliased.is_empty() {
        out.push(Finding {
            severity: 3,
            text: format!(
                "{} could not be estimated: {} a combination of other columns. Remove {} or the column it repeats.",
                c.fit.aliased.join(", "),
                if c.fit.aliased.len() == 1 { "it is" } else { "they are" },
                if c.fit.aliased.len() == 1 { "it" } else { "them" }
            ),
            rule: "aliased columns".into(),
        });
    }
    // Influence.
    let mut by_cook: Vec<&super::influence::RowDiagnostics> = c.rows.iter().filter(|r| r.cooks_distance.is_finite()).collect();
    by_cook.sort_by(|a, b| b.cooks_distance.total_cmp(&a.cooks_distance));
    let big: Vec<_> = by_cook.iter().filter(|r| r.cooks_distance > 1.0).collect();
    for r in big.iter().take(5) {
        out.push(Finding {
            severity: 3,
            text: format!(
                "{} has Cook's distance {}: this one row moves the whole fit. Check it for a typing or unit error before trusting the coefficients.",
                capitalised(&row_name(sheet, r.row)),
                crate::text::short(r.cooks_distance, 2)
            ),
            rule: "Cook's distance > 1 (common practice, no source)".into(),
        });
    }
    let cut = 4.0 / n;
    let notable: Vec<_> = by_cook.iter().filter(|r| r.cooks_distance > cut && r.cooks_distance <= 1.0).collect();
    if !notable.is_empty() {
        let names: Vec<String> = notable.iter().take(3).map(|r| format!("{} ({})", row_name(sheet, r.row), crate::text::short(r.cooks_distance, 2))).collect();
        out.push(Finding {
            severity: 1,
            text: format!(
                "{} {} Cook's distance above 4/n = {}: {}{}. Worth a look, not necessarily wrong.",
                notable.len(),
                if notable.len() == 1 { "row has" } else { "rows have" },
                crate::text::short(cut, 2),
                names.join(", "),
                if notable.len() > 3 { ", ..." } else { "" }
            ),
            rule: "Cook's distance > 4/n (common practice, no source)".into(),
        });
    }
    let mut outliers: Vec<_> = c.rows.iter().filter(|r| r.studentized.abs() > 3.0).collect();
    outliers.sort_by(|a, b| b.studentized.abs().total_cmp(&a.studentized.abs()));
    if !outliers.is_empty() {
        let names: Vec<String> = outliers.iter().take(3).map(|r| format!("{} ({})", row_name(sheet, r.row), crate::text::short(r.studentized, 2))).collect();
        out.push(Finding {
            severity: 2,
            text: format!(
                "The model fits {} badly: studentized residual beyond ±3 for {}{}.",
                if outliers.len() == 1 { "one row" } else { "some rows" },
                names.join(", "),
                if outliers.len() > 3 { ", ..." } else { "" }
            ),
            rule: "|studentized residual| > 3 (common practice, no source)".into(),
        });
    }
    let lev_cut = 3.0 * k / n;
    let mut far: Vec<_> = c.rows.iter().filter(|r| r.leverage > lev_cut && r.cooks_distance <= 1.0).collect();
    far.sort_by(|a, b| b.leverage.total_cmp(&a.leverage));
    if !far.is_empty() && lev_cut < 1.0 {
        let names: Vec<String> = far.iter().take(3).map(|r| format!("{} ({})", row_name(sheet, r.row), crate::text::short(r.leverage, 2))).collect();
        out.push(Finding {
            severity: 1,
            text: format!(
                "{} far from the rest in the predictors (leverage above 3p/n = {}): {}{}. Predictions there rest on few rows.",
                if far.len() == 1 { "One row lies" } else { "Some rows lie" },
                crate::text::short(lev_cut, 2),
                names.join(", "),
                if far.len() > 3 { ", ..." } else { "" }
            ),
            rule: "leverage > 3p/n (common practice, no source)".into(),
        });
    }
    // Spread.
    if let Some(bp) = &c.breusch_pagan {
        if bp.p_value < 0.05 {
            let grows = spread_grows_with_fit(c);
            let what = if grows { "grows with the fitted value" } else { "changes with the predictors" };
            let log_hint = if grows && c.fit.response.starts_with("log(") {
                "use HC3 standard errors".to_string()
            } else if grows {
                format!("consider the log of the response, log({}), if it is positive, or HC3 standard errors", c.fit.response)
            } else {
                "consider HC3 standard errors or weights".into()
            };
            out.push(Finding {
                severity: 3,
                text: format!(
                    "The spread of the residuals {what} (Breusch–Pagan p {}): standard errors and intervals assume it does not; {log_hint}.",
                    p(bp.p_value)
                ),
                rule: "Breusch–Pagan (Koenker) p < 0.05".into(),
            });
        }
    }
    if let Some(sw) = &c.normality.shapiro_wilk {
        if sw.p_value < 0.05 {
            out.push(Finding {
                severity: 2,
                text: format!(
                    "The residuals do not look normally distributed (Shapiro–Wilk p {}). Prediction intervals rely on it most; with many rows the coefficient tests are less affected. Look at the Q–Q plot.",
                    p(sw.p_value)
                ),
                rule: "Shapiro–Wilk p < 0.05".into(),
            });
        }
    }
    if let Some(dw) = &c.durbin_watson {
        if dw.p_value < 0.05 {
            let kind = if dw.statistic < dw.mean_under_independence { "are more alike" } else { "alternate in sign more" };
            out.push(Finding {
                severity: 2,
                text: format!(
                    "Residuals of neighbouring rows {kind} than chance allows (Durbin–Watson {}, p {}). If the rows are in time or place order, the standard errors are not to be trusted.",
                    crate::text::short(dw.statistic, 3),
                    p(dw.p_value)
                ),
                rule: "Durbin–Watson p < 0.05".into(),
            });
        }
    }
    for cv in &c.curvature {
        if cv.p_value < 0.05 {
            out.push(Finding {
                severity: 2,
                text: format!(
                    "The effect of {} looks curved: adding its square helps (p {}). Consider {}^2 or a transform, and look at its component-plus-residual plot.",
                    cv.term,
                    p(cv.p_value),
                    if cv.term.contains('(') { format!("({})", cv.term) } else { cv.term.clone() }
                ),
                rule: "t test of the added square, p < 0.05".into(),
            });
        }
    }
    if let Some(r) = &c.reset {
        if r.p_value < 0.05 && !c.curvature.iter().any(|cv| cv.p_value < 0.05) {
            out.push(Finding {
                severity: 2,
                text: format!(
                    "The model may be missing a curve or an interaction (RESET p {}): powers of the fitted values still explain something.",
                    p(r.p_value)
                ),
                rule: "RESET with ŷ², ŷ³, p < 0.05".into(),
            });
        }
    }
    for t in &c.collinearity.terms {
        let equiv = t.gvif_adjusted * t.gvif_adjusted; // VIF-comparable
        if equiv > 10.0 || equiv > 5.0 {
            let serious = equiv > 10.0;
            out.push(Finding {
                severity: if serious { 3 } else { 1 },
                text: format!(
                    "{} overlaps strongly with other terms ({} {}): its coefficient is unstable, and its standard error is {} times what it would be without the overlap.",
                    t.term,
                    if t.df == 1 { "VIF" } else { "GVIF^(1/(2·df)) squared" },
                    crate::text::short(equiv, 3),
                    crate::text::short(equiv.sqrt(), 2)
                ),
                rule: format!("VIF > {} (common practice, no source)", if serious { 10 } else { 5 }),
            });
        }
    }
    if c.collinearity.condition_number > 30.0 && !c.collinearity.terms.iter().any(|t| t.gvif_adjusted.powi(2) > 5.0) {
        out.push(Finding {
            severity: 1,
            text: format!(
                "The columns are close to dependent as a whole (condition number {} of the scaled design): small changes in the data can move the coefficients.",
                crate::text::short(c.collinearity.condition_number, 3)
            ),
            rule: "condition number > 30 (Belsley, Kuh and Welsch 1980; common practice)".into(),
        });
    }
    let tss_lost = c.fit.tss < f64::MIN_POSITIVE && c.fit.r_squared.is_finite();
    if !c.fit.rss.is_finite() || !c.fit.tss.is_finite() || !c.press.is_finite() || tss_lost {
        out.push(Finding {
            severity: 1,
            text: format!(
                "{} has values near 1e±300, so its sums of squares (RSS, the total and explained sums and PRESS) are beyond \
                 double precision and show as infinite or zero. The other figures were computed on exactly rescaled values.",
                c.fit.response
            ),
            rule: "range of double precision (about 1e±308)".into(),
        });
    }
    out.sort_by_key(|f| std::cmp::Reverse(f.severity));
    if out.is_empty() {
        out.push(Finding { severity: 0, text: "None of the checks raised a concern.".into(), rule: "all checks".into() });
    }
    out
}

/// True when |residual| rises with the fitted value (rank correlation > 0).
fn spread_grows_with_fit(c: &CheckReport) -> bool {
    let n = c.rows.len();
    let rank = |v: Vec<f64>| -> Vec<f64> {
        let mut idx: Vec<usize> = (0..n).collect();
        idx.sort_by(|&a, &b| v[a].total_cmp(&v[b]));
        let mut r = vec![0.0; n];
        for (k, &i) in idx.iter().enumerate() {
            r[i] = k as f64;
        }
        r
    };
    let a = rank(c.rows.iter().map(|r| r.fitted).collect());
    let b = rank(c.rows.iter().map(|r| r.residual.abs()).collect());
    let m = (n as f64 - 1.0) / 2.0;
    a.iter().zip(&b).map(|(x, y)| (x - m) * (y - m)).sum::<f64>() > 0.0
}
