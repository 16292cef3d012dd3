//! The report: one self-contained HTML file (styles inline, figures as PNG
//! data URLs, no script), laid out to print well, so the browser can make a
//! PDF of it. It records the decision trail: the file and its SHA-256, the
//! rows used and left out and why, the codings and transforms, the
//! candidates compared, the model, what the checks found, the figures, the
//! cautions and the date.

use super::Bundle;
use crate::text::short;
use serde_json::Value;
use std::fmt::Write;

/// HTML-escapes text.
fn esc(s: &str) -> String {
    let mut o = String::with_capacity(s.len());
    for ch in s.chars() {
        match ch {
            '&' => o.push_str("&amp;"),
            '<' => o.push_str("&lt;"),
            '>' => o.push_str("&gt;"),
            '"' => o.push_str("&quot;"),
            '\'' => o.push_str("&#39;"),
            c => o.push(c),
        }
    }
    o
}

/// A value for display: numbers to `digits` significant digits, with the
/// full value in the cell's tooltip.
fn show(v: Option<&Value>, digits: usize) -> String {
    match v {
        Some(Value::Number(n)) => {
            let x = n.as_f64().unwrap_or(f64::NAN);
            if n.is_u64() || n.is_i64() {
                n.to_string()
            } else {
                format!("<span title=\"{}\">{}</span>", n, esc(&short(x, digits)))
            }
        }
        Some(Value::String(s)) => esc(s),
        Some(Value::Bool(b)) => (if *b { "yes" } else { "no" }).into(),
        Some(Value::Array(a)) => a.iter().map(|x| show(Some(x), digits)).collect::<Vec<_>>().join(", "),
        _ => "—".into(),
    }
}

/// `short` without trailing zeros after the decimal point.
fn brief(x: f64, digits: usize) -> String {
    let s = short(x, digits);
    if s.contains('.') && !s.contains('e') {
        s.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        s
    }
}

fn num(v: Option<&Value>) -> Option<f64> {
    v.and_then(Value::as_f64)
}

const STYLE: &str = "
body{font:15px/1.45 system-ui,-apple-system,'Segoe UI',sans-serif;color:#1a1a1a;max-width:60rem;margin:2rem auto;padding:0 1rem}
h1{font-size:1.6rem;margin-bottom:.2rem}h2{font-size:1.2rem;border-bottom:1px solid #bbb;padding-bottom:.2rem;margin-top:2rem}
table{border-collapse:collapse;margin:.5rem 0;font-variant-numeric:tabular-nums}th,td{padding:.2rem .6rem;border-bottom:1px solid #ddd;text-align:right}
th:first-child,td:first-child{text-align:left}th{background:#f2f2f2}
.eq{font-family:ui-monospace,monospace;background:#f7f7f7;padding:.6rem;border-left:3px solid #0072B2;overflow-wrap:anywhere}
.caution{border:2px solid #D55E00;padding:.6rem 1rem;background:#fff8f3}
.muted{color:#555}figure{display:inline-block;margin:.5rem;width:46%;break-inside:avoid}figure img{width:100%}
code{font-family:ui-monospace,monospace;overflow-wrap:anywhere}
@media print{body{margin:0;max-width:none}h2{break-after:avoid}table,figure,.caution{break-inside:avoid}}
";

/// A two-column table of labelled values, without a heading row.
fn facts(out: &mut String, rows: &[(String, String)]) {
    out.push_str("<table><tbody>");
    for (k, v) in rows {
        let _ = write!(out, "<tr><th scope=\"row\">{}</th><td>{v}</td></tr>", esc(k));
    }
    out.push_str("</tbody></table>");
}

fn table(out: &mut String, header: &[&str], rows: &[Vec<String>]) {
    out.push_str("<table><thead><tr>");
    for h in header {
        let _ = write!(out, "<th scope=\"col\">{}</th>", esc(h));
    }
    out.push_str("</tr></thead><tbody>");
    for r in rows {
        out.push_str("<tr>");
        for c in r {
            let _ = write!(out, "<td>{c}</td>");
        }
        out.push_str("</tr>");
    }
    out.push_str("</tbody></table>");
}

/// The model in plain algebra, with coefficients to 4 significant digits.
pub fn equation(fit: &Value) -> String {
    let response = fit.get("response").and_then(Value::as_str).unwrap_or("y");
    let mut s = format!("{response} = ");
    let mut first = true;
    for c in fit.get("coefficients").and_then(Value::as_array).into_iter().flatten() {
        if c.get("aliased").and_then(Value::as_bool) == Some(true) {
            continue;
        }
        let Some(b) = num(c.get("estimate")) else { continue };
        let term = c.get("term").and_then(Value::as_str).unwrap_or("?");
        let mag = brief(b.abs(), 4);
        let piece = if term == "(intercept)" {
            mag
        } else if term.contains('=') {
            format!("{mag} × [{}]", term.replace('=', " is "))
        } else {
            format!("{mag} × {term}")
        };
        let neg = b < 0.0;
        if first {
            s.push_str(if neg { "−" } else { "" });
        } else {
            s.push_str(if neg { " − " } else { " + " });
        }
        s.push_str(&piece);
        first = false;
    }
    if first {
        s.push('0');
    }
    s + " + error"
}

/// The report's HTML.
pub fn report_html(b: &Bundle) -> Result<String, String> {
    b.check_complete()?;
    let f = &b.fit;
    let mut o = String::new();
    let response = f.get("response").and_then(Value::as_str).unwrap_or("the response");
    let _ = write!(
        o,
        "<!DOCTYPE html><html lang=\"en\"><head><meta charset=\"utf-8\"><meta name=\"viewport\" content=\"width=device-width\">\
         <meta http-equiv=\"Content-Security-Policy\" content=\"default-src 'none'; img-src data:; style-src 'unsafe-inline'\">\
         <title>Model of {r}</title><style>{STYLE}</style></head><body>\
         <h1>Model of {r}</h1><p class=\"muted\">Made {d} by plumbline {v}, on the user's own machine.</p>",
        r = esc(response),
        d = esc(&b.date),
        v = env!("CARGO_PKG_VERSION")
    );

    o.push_str("<h2>The data</h2>");
    let src = &b.source;
    let mut rows = vec![("file".to_string(), esc(&src.file_name)), ("SHA-256".to_string(), format!("<code>{}</code>", esc(&src.sha256)))];
    if let Some(s) = &src.sheet {
        rows.push(("sheet".into(), esc(s)));
    }
    if let Some(h) = src.header_row {
        rows.push(("header row".into(), h.to_string()));
    }
    facts(&mut o, &rows);

    o.push_str("<h2>Rows used and left out</h2>");
    let n = f.get("n").and_then(Value::as_u64).unwrap_or(0);
    let dropped = f.get("n_dropped").and_then(Value::as_u64).unwrap_or(0);
    let _ = write!(o, "<p>{n} rows were used; {dropped} were left out.</p>");
    let drops: Vec<Vec<String>> = f
        .get("dropped")
        .and_then(Value::as_array)
        .into_iter()
        .flatten()
        .map(|d| vec![show(d.get("reason"), 4), show(d.get("count"), 4), show(d.get("first_rows"), 4)])
        .collect();
    if !drops.is_empty() {
        table(&mut o, &["why", "rows", "the first of them"], &drops);
    }

    if !b.choices.is_empty() {
        o.push_str("<h2>Codings and transforms</h2><ul>");
        for c in &b.choices {
            let _ = write!(o, "<li>{}</li>", esc(c));
        }
        o.push_str("</ul>");
    }

    if let Some(sel) = &b.select {
        o.push_str("<h2>Candidate models compared</h2>");
        let _ = write!(
            o,
            "<p>{} candidate terms; {} models examined (search: {}); the winner is picked by {}.</p>",
            sel.get("candidates").and_then(Value::as_array).map_or(0, Vec::len),
            show(sel.get("models_examined"), 4),
            show(sel.get("search"), 4),
            show(sel.get("by"), 4)
        );
        let rows: Vec<Vec<String>> = sel
            .get("comparison")
            .and_then(Value::as_array)
            .into_iter()
            .flatten()
            .map(|c| {
                let terms = c.get("terms").and_then(Value::as_array).map_or(0, Vec::len);
                let mut r = vec![if terms == 0 { "(intercept only)".into() } else { show(c.get("terms"), 4) }];
                for k in ["k", "adj_r_squared", "aic", "bic", "cp", "cv_rmse", "stability"] {
                    r.push(show(c.get(k), 4));
                }
                r.push(show(c.get("wins"), 4));
                r
            })
            .collect();
        table(&mut o, &["terms", "coefficients", "adjusted R²", "AIC", "BIC", "Mallows' Cp", "CV RMSE", "stability", "chosen by"], &rows);
        if let Some(rec) = sel.get("recommended") {
            let _ = write!(o, "<p><strong>Recommended:</strong> {}</p>", show(rec.get("reason"), 4));
        }
        if let Some(route) = sel.get("p_value_route") {
            let _ = write!(o, "<p class=\"muted\">Removing terms by p-value alone would have kept: {}.</p>", show(route.get("terms"), 4));
        }
    }

    o.push_str("<h2>The model</h2>");
    let _ = write!(o, "<p class=\"eq\">{}</p>", esc(&equation(f)));
    if let Some(formula) = &b.formula {
        let _ = write!(o, "<p>As a spreadsheet formula: <code>{}</code></p>", esc(formula));
    }
    let level = num(f.get("level")).unwrap_or(0.95);
    let pct = format!("{}%", brief(level * 100.0, 3));
    let coef: Vec<Vec<String>> = f
        .get("coefficients")
        .and_then(Value::as_array)
        .into_iter()
        .flatten()
        .map(|c| {
            let mut r = vec![show(c.get("term"), 4)];
            for k in ["estimate", "std_error", "t", "p_value", "ci_low", "ci_high"] {
                r.push(show(c.get(k), 4));
            }
            r
        })
        .collect();
    table(&mut o, &["term", "coefficient", "standard error", "t", "p-value", &format!("{pct} low"), &format!("{pct} high")], &coef);
    let mut stats = Vec::new();
    for (label, key) in [
        ("R²", "r_squared"),
        ("adjusted R²", "adj_r_squared"),
        ("residual standard error", "residual_std_error"),
        ("F statistic", "f_statistic"),
        ("p-value of F", "f_p_value"),
        ("AIC", "aic"),
        ("BIC", "bic"),
        ("residual degrees of freedom", "df_residual"),
        ("condition number", "condition_number"),
    ] {
        stats.push((label.to_string(), show(f.get(key), 4)));
    }
    facts(&mut o, &stats);
    let aliased: Vec<String> = f.get("aliased").and_then(Value::as_array).into_iter().flatten().map(|a| show(Some(a), 4)).collect();
    if !aliased.is_empty() {
        let _ = write!(o, "<p>Not estimated (a combination of the other columns): {}.</p>", aliased.join(", "));
    }
    for w in f.get("warnings").and_then(Value::as_array).into_iter().flatten() {
        let _ = write!(o, "<p>⚠ {}</p>", show(Some(w), 4));
    }

    if let Some(check) = &b.check {
        o.push_str("<h2>What the checks found</h2>");
        let findings: Vec<&Value> = check.get("findings").and_then(Value::as_array).into_iter().flatten().collect();
        if findings.is_empty() {
            o.push_str("<p>The checks found nothing to report.</p>");
        } else {
            o.push_str("<ol>");
            for fi in findings {
                let _ = write!(o, "<li>{} <span class=\"muted\">({})</span></li>", show(fi.get("text"), 4), show(fi.get("rule"), 4));
            }
            o.push_str("</ol>");
        }
        let mut tests = Vec::new();
        let norm = check.get("normality");
        let mut add = |name: &str, t: Option<&Value>| {
            if let Some(t) = t.filter(|t| !t.is_null()) {
                tests.push(vec![name.to_string(), show(t.get("statistic"), 4), show(t.get("p_value"), 4)]);
            }
        };
        add("Shapiro–Wilk (normal residuals)", norm.and_then(|n| n.get("shapiro_wilk")));
        add("Breusch–Pagan (constant spread)", check.get("breusch_pagan"));
        add("Durbin–Watson (rows independent, in file order)", check.get("durbin_watson"));
        add("RESET (no missing curvature)", check.get("reset"));
        if !tests.is_empty() {
            table(&mut o, &["test", "statistic", "p-value"], &tests);
        }
    }

    if let Some(pred) = &b.predict {
        o.push_str("<h2>Predictions</h2>");
        let rows: Vec<Vec<String>> = pred
            .get("predictions")
            .and_then(Value::as_array)
            .into_iter()
            .flatten()
            .map(|p| {
                let orig = p.get("original");
                let pick = |k: &str| orig.and_then(|o| o.get(k)).or_else(|| p.get(k));
                vec![
                    show(p.get("row"), 4),
                    show(pick("estimate"), 4),
                    show(pick("ci_low"), 4),
                    show(pick("ci_high"), 4),
                    show(pick("pi_low"), 4),
                    show(pick("pi_high"), 4),
                    if p.get("extrapolation").and_then(Value::as_bool) == Some(true) { "yes".into() } else { String::new() },
                    p.get("problem").filter(|v| !v.is_null()).map_or_else(String::new, |v| show(Some(v), 4)),
                ]
            })
            .collect();
        table(&mut o, &["row", "estimate", "mean low", "mean high", "case low", "case high", "extrapolation", "problem"], &rows);
        for note in pred.get("notes").and_then(Value::as_array).into_iter().flatten() {
            let _ = write!(o, "<p>{}</p>", show(Some(note), 4));
        }
    }

    if !b.plots.is_empty() {
        o.push_str("<h2>Figures</h2>");
        for p in &b.plots {
            if p.png_base64.bytes().all(|c| c.is_ascii_alphanumeric() || matches!(c, b'+' | b'/' | b'=')) {
                let _ = write!(
                    o,
                    "<figure><img alt=\"{t}\" src=\"data:image/png;base64,{}\"><figcaption>{t}</figcaption></figure>",
                    p.png_base64,
                    t = esc(&p.title)
                );
            }
        }
    }

    o.push_str("<h2>Before you rely on this model</h2><div class=\"caution\"><ul>");
    for c in f.get("cautions").and_then(Value::as_array).into_iter().flatten() {
        let _ = write!(o, "<li>{}</li>", show(Some(c), 4));
    }
    let _ = writeln!(o, "</ul></div><p class=\"muted\">Report made {} by plumbline {}.</p></body></html>", esc(&b.date), env!("CARGO_PKG_VERSION"));
    Ok(o)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_equation_reads_as_algebra() {
        let fit = serde_json::json!({"response": "energy", "coefficients": [
            {"term": "(intercept)", "estimate": 12.5, "aliased": false},
            {"term": "area", "estimate": -0.031234, "aliased": false},
            {"term": "zone=3", "estimate": 2.0, "aliased": false},
            {"term": "dup", "estimate": null, "aliased": true}
        ]});
        assert_eq!(equation(&fit), "energy = 12.5 − 0.03123 × area + 2 × [zone is 3] + error");
    }

    #[test]
    fn text_is_escaped() {
        assert_eq!(esc("<a href=\"x\">&'"), "&lt;a href=&quot;x&quot;&gt;&amp;&#39;");
    }
}
