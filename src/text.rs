//! Plain-text rendering of a fit, in plumbline's own layout: what was
//! modelled and on which rows, a readable coefficient table, how well it
//! fits, how it was computed, notes, cautions, and then every number again
//! at full precision (17 significant digits) for scripts and checks.

use crate::diagnostics::CheckReport;
use crate::schema::{FitReport, ProfileReport};
use std::fmt::Write;

/// A number rounded to `digits` significant digits for reading.
pub fn short(x: f64, digits: usize) -> String {
    if x.is_nan() {
        return "n/a".into();
    }
    if x.is_infinite() {
        return if x > 0.0 { "inf".into() } else { "-inf".into() };
    }
    if x == 0.0 {
        return "0".into();
    }
    let mag = x.abs().log10().floor() as i32;
    if (-4..6).contains(&mag) {
        let decimals = (digits as i32 - 1 - mag).max(0) as usize;
        format!("{x:.decimals$}")
    } else {
        format!("{:.*e}", digits.saturating_sub(1), x)
    }
}

/// A number with 17 significant digits, so that it reads back exactly.
pub fn full(x: f64) -> String {
    if x.is_finite() {
        format!("{x:.16e}")
    } else {
        short(x, 1)
    }
}

fn p_value(p: f64) -> String {
    if p.is_finite() && p < 1e-16 {
        "< 1e-16".into()
    } else {
        short(p, 3)
    }
}

/// Renders a fit report as text.
pub fn render_fit(r: &FitReport) -> String {
    let mut s = String::new();
    let pct = format!("{}", (r.level * 1e6).round() / 1e4);
    let _ = writeln!(s, "Model of {}", r.response);
    let terms = if r.terms.is_empty() { "none".to_string() } else { r.terms.join(", ") };
    let _ = writeln!(s, "  terms: {terms}");
    let _ = writeln!(s, "  intercept: {}", if r.intercept { "yes" } else { "no" });
    if let Some(w) = &r.weights {
        let _ = writeln!(s, "  weighted by: {w}");
    }
    let _ = write!(s, "  rows: {} used, {} left out", r.n, r.n_dropped);
    if !r.dropped.is_empty() {
        let parts: Vec<String> = r.dropped.iter().map(|d| format!("{}: {}", d.reason, d.count)).collect();
        let _ = write!(s, " ({})", parts.join("; "));
    }
    s.push_str("\n\n");

    let _ = writeln!(s, "Coefficients, with {pct}% confidence intervals");
    let header = ["term", "estimate", "std. error", "t", "p-value", "low", "high"];
    let mut rows: Vec<[String; 7]> = vec![header.map(String::from)];
    for c in &r.coefficients {
        if c.aliased {
            rows.push([c.term.clone(), "aliased".into(), "".into(), "".into(), "".into(), "".into(), "".into()]);
        } else {
            rows.push([
                c.term.clone(),
                short(c.estimate, 6),
                short(c.std_error, 4),
                short(c.t, 4),
                p_value(c.p_value),
                short(c.ci_low, 6),
                short(c.ci_high, 6),
            ]);
        }
    }
    let widths: Vec<usize> = (0..7).map(|j| rows.iter().map(|row| row[j].chars().count()).max().unwrap_or(0)).collect();
    for row in &rows {
        let mut line = format!("  {:<w$}", row[0], w = widths[0]);
        for j in 1..7 {
            let _ = write!(line, "  {:>w$}", row[j], w = widths[j]);
        }
        let _ = writeln!(s, "{}", line.trim_end());
    }
    if let Some(h) = &r.hc3 {
        let _ = writeln!(s, "\nWith HC3 (heteroscedasticity-robust) standard errors");
        for c in h {
            let _ = writeln!(
                s,
                "  {:<w$}  std. error {}  t {}  p-value {}  interval {} to {}",
                c.term,
                short(c.std_error, 4),
                short(c.t, 4),
                p_value(c.p_value),
                short(c.ci_low, 6),
                short(c.ci_high, 6),
                w = widths[0]
            );
        }
    }

    let _ = writeln!(s, "\nHow well it fits");
    let _ = writeln!(s, "  R² ({}): {}   adjusted R²: {}", r.r_squared_kind, short(r.r_squared, 6), short(r.adj_r_squared, 6));
    let _ = writeln!(s, "  residual standard error: {} on {} degrees of freedom", short(r.residual_std_error, 4), r.df_residual);
    if r.f_statistic.is_nan() {
        let _ = writeln!(s, "  F test: not defined for this model");
    } else {
        let _ = writeln!(
            s,
            "  F: {} on {} and {} degrees of freedom, p-value {}",
            short(r.f_statistic, 4),
            r.df_model,
            r.df_residual,
            p_value(r.f_p_value)
        );
    }
    let _ = writeln!(
        s,
        "  log-likelihood: {}   AIC: {}   BIC: {}",
        short(r.log_likelihood, 6),
        short(r.aic, 6),
        short(r.bic, 6)
    );

    let _ = writeln!(s, "\nHow it was computed");
    let _ = writeln!(s, "  arithmetic: {}", r.solver_path.describe());
    let _ = writeln!(
        s,
        "  condition number (scaled columns): {}; rank {} of {} columns (tolerance {})",
        short(r.condition_number, 3),
        r.rank,
        r.n_columns,
        short(r.rank_tolerance, 2)
    );

    if !r.warnings.is_empty() {
        let _ = writeln!(s, "\nNotes");
        for w in &r.warnings {
            let _ = writeln!(s, "  - {w}");
        }
    }
    let _ = writeln!(s, "\nBefore you rely on this");
    for c in &r.cautions {
        let _ = writeln!(s, "  - {c}");
    }

    let _ = writeln!(s, "\nEvery number at full precision");
    for c in &r.coefficients {
        if c.aliased {
            let _ = writeln!(s, "  {}: aliased, not estimated", c.term);
            continue;
        }
        let _ = writeln!(
            s,
            "  {}: estimate {}  std. error {}  t {}  p-value {}  low {}  high {}",
            c.term,
            full(c.estimate),
            full(c.std_error),
            full(c.t),
            full(c.p_value),
            full(c.ci_low),
            full(c.ci_high)
        );
    }
    for (name, v) in [
        ("R²", r.r_squared),
        ("adjusted R²", r.adj_r_squared),
        ("residual standard error", r.residual_std_error),
        ("residual sum of squares", r.rss),
        ("total sum of squares", r.tss),
        ("F", r.f_statistic),
        ("F p-value", r.f_p_value),
        ("log-likelihood", r.log_likelihood),
        ("AIC", r.aic),
        ("BIC", r.bic),
    ] {
        let _ = writeln!(s, "  {name}: {}", full(v));
    }
    s
}

/// Lays out rows of cells in aligned columns: the first left-aligned,
/// the rest right-aligned.
fn table_lines(rows: &[Vec<String>], indent: &str) -> String {
    let cols = rows.iter().map(Vec::len).max().unwrap_or(0);
    let widths: Vec<usize> = (0..cols).map(|j| rows.iter().filter_map(|r| r.get(j)).map(|c| c.chars().count()).max().unwrap_or(0)).collect();
    let mut s = String::new();
    for r in rows {
        let mut line = String::from(indent);
        for (j, cell) in r.iter().enumerate() {
            if j == 0 {
                let _ = write!(line, "{:<w$}", cell, w = widths[0]);
            } else {
                let _ = write!(line, "  {:>w$}", cell, w = widths[j]);
            }
        }
        let _ = writeln!(s, "{}", line.trim_end());
    }
    s
}

/// Renders the checks of a model as text.
pub fn render_check(c: &CheckReport, sheet: Option<&str>) -> String {
    let mut s = String::new();
    let f = &c.fit;
    let _ = writeln!(s, "Checks of the model of {}", f.response);
    let _ = writeln!(s, "  terms: {}", if f.terms.is_empty() { "none".into() } else { f.terms.join(", ") });
    let _ = writeln!(s, "  rows: {} used, {} left out; R² {}, adjusted R² {}", f.n, f.n_dropped, short(f.r_squared, 4), short(f.adj_r_squared, 4));

    for w in &f.warnings {
        let _ = writeln!(s, "  note: {w}");
    }

    let _ = writeln!(s, "\nWhat the checks found, most important first");
    for x in &c.findings {
        let tag = match x.severity {
            3 => "act",
            2 => "look",
            1 => "note",
            _ => "ok",
        };
        let _ = writeln!(s, "  [{tag}] {}", x.text);
    }

    let _ = writeln!(s, "\nTests on the residuals");
    let mut rows: Vec<Vec<String>> = vec![vec!["test".into(), "statistic".into(), "p-value".into()]];
    let n = &c.normality;
    if let Some(t) = &n.shapiro_wilk {
        rows.push(vec!["Shapiro–Wilk (normal shape)".into(), format!("W {}", short(t.statistic, 4)), p_value(t.p_value)]);
    }
    if let Some(t) = &n.anderson_darling {
        rows.push(vec!["Anderson–Darling (normal shape)".into(), format!("A*² {}", short(t.adjusted, 4)), p_value(t.p_value)]);
    }
    if let Some(t) = &n.jarque_bera {
        rows.push(vec!["Jarque–Bera (normal shape)".into(), format!("JB {}", short(t.statistic, 4)), p_value(t.p_value)]);
    }
    if let Some(t) = &c.breusch_pagan {
        rows.push(vec!["Breusch–Pagan (constant spread)".into(), format!("LM {} on {} df", short(t.statistic, 4), t.df), p_value(t.p_value)]);
    }
    if let Some(t) = &c.durbin_watson {
        rows.push(vec!["Durbin–Watson (rows in order)".into(), format!("d {}", short(t.statistic, 4)), p_value(t.p_value)]);
    }
    if let Some(t) = &c.reset {
        rows.push(vec!["RESET (missing curvature)".into(), format!("F {} on {} and {} df", short(t.statistic, 4), t.df1, t.df2), p_value(t.p_value)]);
    }
    for cv in &c.curvature {
        rows.push(vec![format!("square of {} added", cv.term), format!("t {}", short(cv.t, 4)), p_value(cv.p_value)]);
    }
    s.push_str(&table_lines(&rows, "  "));

    let _ = writeln!(s, "\nOverlap between terms");
    let mut rows: Vec<Vec<String>> = vec![vec!["term".into(), "columns".into(), "VIF".into(), "GVIF^(1/(2·df))".into()]];
    for t in &c.collinearity.terms {
        rows.push(vec![t.term.clone(), t.df.to_string(), t.vif.map_or(String::new(), |v| short(v, 3)), short(t.gvif_adjusted, 3)]);
    }
    s.push_str(&table_lines(&rows, "  "));
    let _ = writeln!(
        s,
        "  condition number of the scaled design: {} (predictors alone: {})",
        short(c.collinearity.condition_number, 3),
        short(c.collinearity.condition_number_predictors, 3)
    );

    let _ = writeln!(s, "\nThe most influential rows (by Cook's distance)");
    let mut idx: Vec<usize> = (0..c.rows.len()).collect();
    idx.sort_by(|&a, &b| c.rows[b].cooks_distance.total_cmp(&c.rows[a].cooks_distance));
    let mut rows: Vec<Vec<String>> = vec![["row", "fitted", "residual", "studentized", "leverage", "Cook's D", "DFFITS"].iter().map(|x| x.to_string()).collect()];
    for &i in idx.iter().take(8) {
        let r = &c.rows[i];
        rows.push(vec![
            crate::diagnostics::findings::row_name(sheet, r.row),
            short(r.fitted, 4),
            short(r.residual, 4),
            short(r.studentized, 3),
            short(r.leverage, 3),
            short(r.cooks_distance, 3),
            short(r.dffits, 3),
        ]);
    }
    s.push_str(&table_lines(&rows, "  "));
    let _ = writeln!(s, "  PRESS (leave-one-out squared error): {}", short(c.press, 6));
    let _ = writeln!(s, "\nBefore you rely on this");
    for x in &f.cautions {
        let _ = writeln!(s, "  - {x}");
    }
    s
}

/// Renders predictions as text.
pub fn render_predict(r: &crate::predict::PredictReport) -> String {
    let mut s = String::new();
    let pct = format!("{}", (r.level * 1e6).round() / 1e4);
    let _ = writeln!(s, "Predictions of {} with {pct}% intervals", r.response);
    if let Some(b) = &r.back_transform {
        let _ = writeln!(s, "  on the original scale by {b}");
    }
    let mut rows: Vec<Vec<String>> = vec![["row", "estimate", "mean low", "mean high", "case low", "case high"].iter().map(|x| x.to_string()).collect()];
    let mut remarks = Vec::new();
    for p in &r.predictions {
        if let Some(problem) = &p.problem {
            remarks.push(format!("row {}: {problem}", p.row));
        } else if p.extrapolation {
            remarks.push(format!("row {}: an extrapolation: {}.", p.row, p.extrapolation_reasons.join("; ")));
        }
        let (e, a, b, c, d) = match (&p.original, p.estimate) {
            (Some(o), _) => (o.estimate, o.ci_low, o.ci_high, o.pi_low, o.pi_high),
            (None, Some(e)) => (e, p.ci_low.unwrap_or(f64::NAN), p.ci_high.unwrap_or(f64::NAN), p.pi_low.unwrap_or(f64::NAN), p.pi_high.unwrap_or(f64::NAN)),
            (None, None) => {
                rows.push(vec![p.row.to_string(), "no prediction".into(), "".into(), "".into(), "".into(), "".into()]);
                continue;
            }
        };
        rows.push(vec![
            p.row.to_string(),
            short(e, 5),
            short(a, 5),
            short(b, 5),
            short(c, 5),
            if p.extrapolation { format!("{}*", short(d, 5)) } else { short(d, 5) },
        ]);
    }
    s.push_str(&table_lines(&rows, "  "));
    for m in &remarks {
        let _ = writeln!(s, "  {m}");
    }
    let _ = writeln!(s, "  (mean: where the average of such cases lies; case: where one new case lies; * an extrapolation)");
    for n in &r.notes {
        let _ = writeln!(s, "  - {n}");
    }
    let _ = writeln!(s, "\nBefore you rely on this");
    for c in &r.cautions {
        let _ = writeln!(s, "  - {c}");
    }
    s
}

/// Renders a selection as text.
pub fn render_select(r: &crate::select::SelectReport) -> String {
    let mut s = String::new();
    let _ = writeln!(s, "Choosing the terms of a model of {}", r.response);
    let _ = writeln!(s, "  candidates: {}", if r.candidates.is_empty() { "none".into() } else { r.candidates.join(", ") });
    if !r.forced.is_empty() {
        let _ = writeln!(s, "  always in: {}", r.forced.join(", "));
    }
    let _ = writeln!(s, "  rows: {}; search: {}; models examined: {}", r.n, r.search, r.models_examined);
    for n in &r.notes {
        let _ = writeln!(s, "  - {n}");
    }
    let _ = writeln!(s, "\nRecommended");
    let _ = writeln!(s, "  {}", r.recommended.reason);

    let _ = writeln!(s, "\nCandidates side by side");
    let mut rows: Vec<Vec<String>> = vec![["terms", "k", "RSS", "R²", "adj. R²", "AIC", "BIC", "Cp", "CV RMSE", "LOO RMSE", "stability", "best by"].iter().map(|x| x.to_string()).collect()];
    for c in &r.comparison {
        let terms = if c.terms.is_empty() { "(intercept only)".to_string() } else { c.terms.join(", ") };
        let wins: Vec<&str> = c.wins.iter().map(|w| match w {
            crate::select::Criterion::AdjR2 => "adj. R²",
            crate::select::Criterion::Aic => "AIC",
            crate::select::Criterion::Bic => "BIC",
            crate::select::Criterion::Cp => "Cp",
            crate::select::Criterion::Cv => "CV",
            crate::select::Criterion::PValue => "p-value route",
        }).collect();
        rows.push(vec![
            terms,
            c.criteria.k.to_string(),
            short(c.criteria.rss, 5),
            short(c.criteria.r_squared, 4),
            short(c.criteria.adj_r_squared, 4),
            short(c.criteria.aic, 6),
            short(c.criteria.bic, 6),
            short(c.criteria.cp, 4),
            short(c.cv_rmse, 4),
            short(c.loo_rmse, 4),
            c.stability.map_or(String::new(), |v| format!("{}%", (v * 100.0).round())),
            wins.join(", "),
        ]);
    }
    s.push_str(&table_lines(&rows, "  "));

    if !r.by_size.is_empty() {
        let _ = writeln!(s, "\nBest of each size (lowest RSS)");
        for b in &r.by_size {
            let _ = writeln!(s, "  {} terms: {} (RSS {})", b.size, if b.terms.is_empty() { "none".into() } else { b.terms.join(", ") }, short(b.rss, 6));
        }
    }
    if !r.path.is_empty() {
        let _ = writeln!(s, "\nStepwise route");
        for st in &r.path {
            let _ = writeln!(s, "  {} {}: criterion {}", st.action, st.term, short(st.value, 6));
        }
    }
    let _ = writeln!(s, "\nThe p-value route (drop the weakest term while its p-value is above {})", r.p_value_route.alpha);
    if r.p_value_route.path.is_empty() {
        let _ = writeln!(s, "  nothing dropped");
    }
    for st in &r.p_value_route.path {
        let _ = writeln!(s, "  drop {} (p-value {})", st.term, short(st.value, 3));
    }
    let _ = writeln!(s, "  keeps: {}", if r.p_value_route.terms.is_empty() { "none".into() } else { r.p_value_route.terms.join(", ") });
    if let Some(st) = &r.stability {
        let _ = writeln!(s, "\nHow often each term is chosen ({} bootstrap resamples, seed {})", st.resamples, st.seed);
        if st.skipped > 0 {
            let _ = writeln!(
                s,
                "({} more left out: in them a candidate had a single value or was a combination of others.)",
                st.skipped
            );
        }
        for t in &st.terms {
            let _ = writeln!(s, "  {:>4}%  {}", (t.share * 100.0).round(), t.term);
        }
        let _ = writeln!(s, "  the recommended set itself: {}%", (st.winner_share * 100.0).round());
    }
    let _ = writeln!(s, "\nBefore you rely on this");
    for c in &r.cautions {
        let _ = writeln!(s, "  - {c}");
    }
    s
}

/// Renders a column profile as text.
pub fn render_profile(r: &ProfileReport) -> String {
    let mut s = String::new();
    let l = &r.load;
    let source = match (&l.sheet, &l.delimiter) {
        (Some(sheet), _) => format!("sheet \"{sheet}\" of {} ({})", plural(l.sheets.len(), "sheet"), l.sheets.join(", ")),
        (None, Some(d)) => format!(
            "text, {} encoding, cells separated by {}, decimal {}",
            l.encoding.unwrap_or("unknown"),
            if d == "tab" { "tabs".to_string() } else { format!("'{d}'") },
            l.decimal
        ),
        (None, None) => "text".into(),
    };
    let _ = writeln!(s, "Columns of {source}");
    let _ = writeln!(s, "  {} rows, {} columns; header on row {}", l.rows, l.columns, l.header_row);
    for n in l.notes.iter().chain(&l.warnings) {
        let _ = writeln!(s, "  - {n}");
    }
    s.push('\n');
    let mut rows: Vec<[String; 6]> = vec![["column", "kind", "missing", "distinct", "skewness", "suggestion"].map(String::from)];
    for c in &r.columns {
        let kind = serde_json::to_string(&c.kind).unwrap_or_default().trim_matches('"').replace('_', " ");
        rows.push([
            c.name.clone(),
            if c.kind_set_by_user { format!("{kind} (set)") } else { kind },
            c.missing.to_string(),
            c.distinct.to_string(),
            c.skewness.map_or(String::new(), |g| short(g, 3)),
            c.suggested_transform.as_ref().map_or(String::new(), |t| t.term.clone()),
        ]);
    }
    let widths: Vec<usize> = (0..6).map(|j| rows.iter().map(|row| row[j].chars().count()).max().unwrap_or(0)).collect();
    for row in &rows {
        let mut line = String::from(" ");
        for (j, cell) in row.iter().enumerate() {
            let _ = if (2..5).contains(&j) { write!(line, " {:>w$}", cell, w = widths[j]) } else { write!(line, " {:<w$}", cell, w = widths[j]) };
        }
        let _ = writeln!(s, "{}", line.trim_end());
    }
    let _ = writeln!(s, "\nWhy");
    for c in &r.columns {
        let _ = writeln!(s, "  {}: {}", c.name, c.reason);
    }
    s
}

fn plural(n: usize, one: &str) -> String {
    if n == 1 {
        format!("1 {one}")
    } else {
        format!("{n} {one}s")
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn short_numbers_read_well() {
        assert_eq!(short(1234.5678, 4), "1235");
        assert_eq!(short(0.012345, 3), "0.0123");
        assert_eq!(short(-2.5e-7, 3), "-2.50e-7");
        assert_eq!(short(0.0, 3), "0");
        assert_eq!(short(f64::NAN, 3), "n/a");
        assert_eq!(full(0.1), "1.0000000000000001e-1");
    }
}
