//! Tab-separated text of the coefficients, the candidates and the
//! predictions, for pasting into a spreadsheet with the columns kept.
//!
//! The input is a result as JSON (the one schema the CLI prints and the
//! page receives), so the page can copy exactly what it shows. Numbers go
//! out with every digit (JSON keeps the shortest round-trip text); a missing
//! number is an empty cell. Tabs and line breaks inside text become spaces.

use serde_json::Value;

/// What to copy.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Table {
    Coefficients,
    Candidates,
    Predictions,
}

impl Table {
    pub fn parse(s: &str) -> Option<Table> {
        match s {
            "coefficients" => Some(Table::Coefficients),
            "candidates" => Some(Table::Candidates),
            "predictions" => Some(Table::Predictions),
            _ => None,
        }
    }
}

/// One cell's text.
pub fn cell(v: Option<&Value>) -> String {
    match v {
        None | Some(Value::Null) => String::new(),
        Some(Value::Number(n)) => n.to_string(),
        Some(Value::Bool(b)) => if *b { "yes" } else { "no" }.to_string(),
        Some(Value::String(s)) => s.replace(['\t', '\n', '\r'], " "),
        Some(Value::Array(a)) => a.iter().map(|x| cell(Some(x))).collect::<Vec<_>>().join(" + "),
        Some(Value::Object(_)) => String::new(),
    }
}

const COEFFICIENTS: [(&str, &str); 9] = [
    ("term", "term"),
    ("estimate", "estimate"),
    ("std_error", "standard error"),
    ("t", "t"),
    ("p_value", "p-value"),
    ("ci_low", "interval low"),
    ("ci_high", "interval high"),
    ("standardized", "standardized"),
    ("aliased", "aliased"),
];

const CANDIDATES: [(&str, &str); 14] = [
    ("terms", "terms"),
    ("k", "coefficients"),
    ("rss", "RSS"),
    ("r_squared", "R²"),
    ("adj_r_squared", "adjusted R²"),
    ("aic", "AIC"),
    ("bic", "BIC"),
    ("cp", "Mallows' Cp"),
    ("cv_rmse", "CV RMSE"),
    ("cv_mae", "CV MAE"),
    ("press", "PRESS"),
    ("loo_rmse", "leave-one-out RMSE"),
    ("stability", "stability"),
    ("wins", "chosen by"),
];

const PREDICTIONS: [(&str, &str); 15] = [
    ("row", "row"),
    ("estimate", "estimate"),
    ("ci_low", "mean low"),
    ("ci_high", "mean high"),
    ("pi_low", "case low"),
    ("pi_high", "case high"),
    ("original.estimate", "original scale estimate"),
    ("original.ci_low", "original mean low"),
    ("original.ci_high", "original mean high"),
    ("original.pi_low", "original case low"),
    ("original.pi_high", "original case high"),
    ("leverage", "leverage"),
    ("extrapolation", "extrapolation"),
    ("extrapolation_reasons", "why extrapolation"),
    ("problem", "problem"),
];

/// Per-row diagnostics of a check (the workbook's Rows sheet).
pub const ROWS: [(&str, &str); 8] = [
    ("row", "row"),
    ("fitted", "fitted"),
    ("residual", "residual"),
    ("standardized", "standardized residual"),
    ("studentized", "studentized residual"),
    ("leverage", "leverage"),
    ("cooks_distance", "Cook's distance"),
    ("dffits", "DFFITS"),
];

impl Table {
    /// The result's list this table comes from, and its (key, heading) columns.
    pub fn layout(self) -> (&'static str, &'static [(&'static str, &'static str)]) {
        match self {
            Table::Coefficients => ("coefficients", &COEFFICIENTS),
            Table::Candidates => ("comparison", &CANDIDATES),
            Table::Predictions => ("predictions", &PREDICTIONS),
        }
    }
}

/// The headings and the values (dotted keys reach into objects) of the
/// items of `result[list]`; `None` when the result has no such list.
pub fn values(result: &Value, list: &str, columns: &'static [(&'static str, &'static str)]) -> Option<(Vec<&'static str>, Vec<Vec<Value>>)> {
    let items = result.get(list)?.as_array()?;
    let header = columns.iter().map(|(_, h)| *h).collect();
    let rows = items
        .iter()
        .map(|item| {
            columns
                .iter()
                .map(|(k, _)| match k.split('.').try_fold(item, |v, p| v.get(p)) {
                    // A candidate with no terms is the intercept-only model.
                    Some(Value::Array(a)) if a.is_empty() && *k == "terms" => Value::String("(intercept only)".into()),
                    v => v.cloned().unwrap_or(Value::Null),
                })
                .collect()
        })
        .collect();
    Some((header, rows))
}

/// The header and rows of one table of a result, as text cells.
pub fn rows(what: Table, result: &Value) -> Result<(Vec<&'static str>, Vec<Vec<String>>), String> {
    let (list, columns) = what.layout();
    let (header, rows) = values(result, list, columns).ok_or_else(|| format!("This result has no {} to copy.", if list == "comparison" { "candidates" } else { list }))?;
    Ok((header, rows.iter().map(|r| r.iter().map(|v| cell(Some(v))).collect()).collect()))
}

/// The table as tab-separated text, one line per row, with a header line.
pub fn tsv(what: Table, result: &Value) -> Result<String, String> {
    let (header, body) = rows(what, result)?;
    let mut out = header.join("\t");
    out.push('\n');
    for r in body {
        out.push_str(&r.join("\t"));
        out.push('\n');
    }
    Ok(out)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn numbers_keep_every_digit_and_missing_is_empty() {
        let v: Value = serde_json::json!({"coefficients": [
            {"term": "x\ty", "estimate": 0.1 + 0.2, "std_error": null, "t": 1.0, "p_value": 1e-300,
             "ci_low": -2.5, "ci_high": 3, "standardized": null, "aliased": false}
        ]});
        let t = tsv(Table::Coefficients, &v).unwrap();
        let line = t.lines().nth(1).unwrap();
        assert_eq!(line, "x y\t0.30000000000000004\t\t1.0\t1e-300\t-2.5\t3\t\tno");
        assert_eq!(t.lines().next().unwrap().split('\t').count(), 9);
    }

    #[test]
    fn a_result_without_the_table_is_refused() {
        let e = tsv(Table::Predictions, &serde_json::json!({"coefficients": []})).unwrap_err();
        assert!(e.contains("no predictions"), "{e}");
    }
}
