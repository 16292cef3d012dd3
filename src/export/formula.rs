//! A spreadsheet formula that reproduces a fitted model's prediction from
//! cell references, for pasting next to the user's data.
//!
//! Only functions of the OpenDocument formula standard (OpenFormula,
//! ISO/IEC 26300 part 2) are used: `LN`, `EXP`, `SQRT`, `POWER`, `IF` and
//! `EXACT`; common spreadsheets accept them under the same names. The
//! standard separates arguments with `;`, which is what a spreadsheet set to
//! a decimal comma also expects; `,` is offered for spreadsheets that want
//! it. Coefficients are written with every digit of the double (the
//! shortest text that reads back to the same number).
//!
//! How each term becomes an expression, with `A2` the input's cell:
//! - a number column: `A2`; a date column: `(A2-25569)`, because the model
//!   counts days from 1970-01-01 and spreadsheets from 1899-12-30;
//! - `log(x)`: `LN(x)`, `sqrt(x)`: `SQRT(x)`, `x^k`: `POWER(x;k)`;
//! - `boxcox(x, λ)`: `(POWER(x;λ)-1)/λ`, or `LN(x)` at λ = 0;
//! - `yeojohnson(x, λ)`: `IF(x>=0;(POWER(x+1;λ)-1)/λ;-(POWER(1-x;2-λ)-1)/(2-λ))`,
//!   with the logarithms at λ = 0 and λ = 2;
//! - `cat(c)`: one `IF(A2=level;1;0)` per estimated level (`EXACT` for
//!   text levels, so that case matters as it does in the model);
//! - `a*b`: the product of the two expressions.
//!
//! With a `log(y)` response the formula gives the prediction on the scale
//! of y: `EXP(…)` times Duan's smearing factor, as `predict` does. With any
//! other transformed response it gives the prediction of the transformed
//! response, and says so, because the smeared back-transform is a mean over
//! every residual and has no closed form.

use crate::model::Fitted;
use crate::table::{ColumnData, Table};
use crate::terms::{ModelSpec, Term};
use serde::Serialize;
use std::collections::BTreeMap;
use std::fmt;

/// Where the inputs are and how the spreadsheet writes formulas.
#[derive(Clone, Debug)]
pub struct FormulaOptions {
    /// Model column name → spreadsheet column letters (`"B"`, `"AA"`).
    pub cells: BTreeMap<String, String>,
    /// The spreadsheet row of the first case (1 or more).
    pub first_row: usize,
    /// The argument separator: `;` (the standard's) or `,`.
    pub separator: char,
    /// Write numbers with a decimal comma (the separator is then `;`).
    pub decimal_comma: bool,
}

impl Default for FormulaOptions {
    fn default() -> Self {
        FormulaOptions { cells: BTreeMap::new(), first_row: 2, separator: ';', decimal_comma: false }
    }
}

/// The formula and what the user should know about it.
#[derive(Clone, Debug, Serialize)]
pub struct Formula {
    /// The formula for the first row, starting with `=`; fill it down.
    pub formula: String,
    /// `response` when it gives the response itself, `transformed` when it
    /// gives the transformed response the model was fitted to.
    pub scale: &'static str,
    /// The input columns, each with the cell of the first row.
    pub inputs: Vec<(String, String)>,
    pub notes: Vec<String>,
}

/// Why a formula could not be written.
#[derive(Clone, Debug, PartialEq)]
pub enum FormulaError {
    /// An input column was given no spreadsheet column.
    NoCell { column: String },
    /// The spreadsheet column is not letters A to XFD.
    BadCell { column: String, text: String },
    /// The first row is 0.
    BadRow,
    /// The separator is neither `;` nor `,`.
    BadSeparator(char),
    /// The design could not be matched to the terms (a bug).
    Internal(String),
}

impl fmt::Display for FormulaError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            FormulaError::NoCell { column } => write!(f, "Say which spreadsheet column holds \"{column}\"; the formula reads it."),
            FormulaError::BadCell { column, text } => write!(
                f,
                "\"{text}\" (given for \"{column}\") is not a spreadsheet column; use letters such as B or AC."
            ),
            FormulaError::BadRow => write!(f, "The first row of the data must be 1 or more."),
            FormulaError::BadSeparator(c) => write!(f, "The argument separator must be ; or , (not {c})."),
            FormulaError::Internal(m) => write!(f, "The formula could not be written, which is a bug: {m}"),
        }
    }
}

impl std::error::Error for FormulaError {}

/// Spreadsheet column letters, upper-cased, if they name a column (A to XFD).
fn column_letters(text: &str) -> Option<String> {
    let t = text.trim().trim_start_matches('$').to_ascii_uppercase();
    if t.is_empty() || t.len() > 3 || !t.bytes().all(|b| b.is_ascii_uppercase()) {
        return None;
    }
    let index = t.bytes().fold(0u32, |acc, b| acc * 26 + u32::from(b - b'A' + 1));
    (index <= 16384).then_some(t)
}

/// Writes numbers and separators for one spreadsheet's conventions.
struct Writer<'a> {
    sep: char,
    comma: bool,
    cells: BTreeMap<&'a str, String>,
    table: &'a Table,
}

impl Writer<'_> {
    /// Every digit of `v`: the shortest decimal that reads back to it.
    fn num(&self, v: f64) -> String {
        let a = v.abs();
        let s = if a == 0.0 || (1e-5..1e15).contains(&a) { format!("{v}") } else { format!("{v:E}") };
        if self.comma {
            s.replace('.', ",")
        } else {
            s
        }
    }

    fn cell(&self, column: &str) -> Result<String, FormulaError> {
        self.cells.get(column).cloned().ok_or_else(|| FormulaError::NoCell { column: column.to_string() })
    }

    fn is_date(&self, column: &str) -> bool {
        matches!(self.table.column(column).map(|c| &c.data), Some(ColumnData::Date(_)))
    }

    /// The expression of a numeric term.
    fn number(&self, t: &Term) -> Result<String, FormulaError> {
        let s = self.sep;
        Ok(match t {
            Term::Column(c) => {
                let cell = self.cell(c)?;
                if self.is_date(c) {
                    format!("({cell}-25569)")
                } else {
                    cell
                }
            }
            Term::Log(x) => format!("LN({})", self.number(x)?),
            Term::Sqrt(x) => format!("SQRT({})", self.number(x)?),
            Term::Power(x, k) => format!("POWER({}{s}{k})", self.number(x)?),
            Term::BoxCox(x, l) => {
                let x = self.number(x)?;
                if *l == 0.0 {
                    format!("LN({x})")
                } else {
                    let l = self.num(*l);
                    format!("(POWER({x}{s}{l})-1)/{l}")
                }
            }
            Term::YeoJohnson(x, l) => {
                let x = self.number(x)?;
                let pos = if *l == 0.0 {
                    format!("LN({x}+1)")
                } else {
                    let ls = self.num(*l);
                    format!("(POWER({x}+1{s}{ls})-1)/{ls}")
                };
                let neg = if *l == 2.0 {
                    format!("-LN(1-{x})")
                } else {
                    let m = self.num(2.0 - l);
                    format!("-(POWER(1-{x}{s}{m})-1)/{m}")
                };
                format!("IF({x}>=0{s}{pos}{s}{neg})")
            }
            Term::Product(a, b) => format!("{}*{}", self.factor(a)?, self.factor(b)?),
            Term::Cat { .. } => return Err(FormulaError::Internal("a category inside a function".into())),
        })
    }

    /// A numeric term as a factor of a product.
    fn factor(&self, t: &Term) -> Result<String, FormulaError> {
        Ok(bracket(&self.number(t)?))
    }

    /// The expression of a category level's indicator.
    fn indicator(&self, column: &str, level: &str) -> Result<String, FormulaError> {
        let cell = self.cell(column)?;
        let s = self.sep;
        let test = match self.table.column(column).map(|c| &c.data) {
            Some(ColumnData::Date(_)) => {
                let days = crate::read::cells::parse_date(level, crate::read::cells::DayOrder::DayFirst)
                    .ok_or_else(|| FormulaError::Internal(format!("the date level {level}")))?;
                let minutes = ((days + 25569.0) * 1440.0).round();
                format!("ROUND({cell}*1440{s}0)={}", self.num(minutes))
            }
            _ => match crate::table::parse_number(level) {
                Some(v) => format!("{cell}={}", self.num(v)),
                None => format!("EXACT({cell}{s}\"{}\")", level.replace('"', "\"\"")),
            },
        };
        Ok(format!("IF({test}{s}1{s}0)"))
    }

    /// The design columns of a term: (label, expression), in the design's order.
    fn columns(&self, t: &Term, fitted: &Fitted) -> Result<Vec<(String, String)>, FormulaError> {
        match t {
            Term::Cat { column, reference } => {
                let coded = fitted
                    .design
                    .levels
                    .iter()
                    .find(|c| &c.column == column && c.reference == *reference)
                    .ok_or_else(|| FormulaError::Internal(format!("no levels for {column}")))?;
                let mut out = Vec::new();
                for (j, l) in coded.levels.iter().enumerate() {
                    if j != coded.ref_index {
                        out.push((format!("{column}={l}"), self.indicator(column, l)?));
                    }
                }
                Ok(out)
            }
            Term::Product(a, b) if a.has_category() || b.has_category() => {
                let left = self.columns(a, fitted)?;
                let right = self.columns(b, fitted)?;
                let mut out = Vec::new();
                for (la, ea) in &left {
                    for (lb, eb) in &right {
                        out.push((format!("{la}*{lb}"), format!("{}*{}", bracket(ea), bracket(eb))));
                    }
                }
                Ok(out)
            }
            _ => Ok(vec![(t.to_string(), self.number(t)?)]),
        }
    }
}

/// Brackets an expression that is a sum or difference at its top level.
fn bracket(e: &str) -> String {
    let mut depth = 0i32;
    let mut prev = ' ';
    for (i, ch) in e.char_indices() {
        let exponent = prev == 'E' && i >= 2 && e.as_bytes()[i - 2].is_ascii_digit();
        prev = ch;
        match ch {
            '(' => depth += 1,
            ')' => depth -= 1,
            '+' | '-' | '/' if depth == 0 && i > 0 && !exponent => return format!("({e})"),
            _ => {}
        }
    }
    if e.starts_with('-') {
        format!("({e})")
    } else {
        e.to_string()
    }
}

/// The formula of a fitted model; `table` is the data it was fitted to
/// (it tells date columns from number columns).
pub fn formula(fitted: &Fitted, spec: &ModelSpec, table: &Table, o: &FormulaOptions) -> Result<Formula, FormulaError> {
    if o.first_row == 0 {
        return Err(FormulaError::BadRow);
    }
    let sep = if o.decimal_comma { ';' } else { o.separator };
    if sep != ';' && sep != ',' {
        return Err(FormulaError::BadSeparator(sep));
    }
    let mut cells = BTreeMap::new();
    let mut inputs = Vec::new();
    for t in &spec.terms {
        for c in t.columns() {
            if cells.contains_key(c) {
                continue;
            }
            let given = o.cells.get(c).ok_or_else(|| FormulaError::NoCell { column: c.to_string() })?;
            let letters = column_letters(given).ok_or_else(|| FormulaError::BadCell { column: c.to_string(), text: given.clone() })?;
            let cell = format!("{letters}{}", o.first_row);
            inputs.push((c.to_string(), cell.clone()));
            cells.insert(c, cell);
        }
    }
    let w = Writer { sep, comma: o.decimal_comma, cells, table };
    let d = &fitted.design;
    let mut exprs: Vec<(String, String)> = Vec::new();
    if spec.intercept {
        exprs.push(("(intercept)".into(), String::new()));
    }
    for t in &spec.terms {
        exprs.extend(w.columns(t, fitted)?);
    }
    if exprs.len() != d.columns.len() {
        return Err(FormulaError::Internal(format!("{} expressions for {} columns", exprs.len(), d.columns.len())));
    }
    let mut linear = String::new();
    for (j, ((label, expr), col)) in exprs.iter().zip(&d.columns).enumerate() {
        if *label != col.label {
            return Err(FormulaError::Internal(format!("column {label} against {}", col.label)));
        }
        if fitted.solution.aliased.contains(&j) {
            continue;
        }
        let b = fitted.solution.coef[j];
        let mag = w.num(b.abs());
        let sign = if b.is_sign_negative() { "-" } else { "+" };
        let piece = if expr.is_empty() { mag } else { format!("{mag}*{}", bracket(expr)) };
        if linear.is_empty() {
            linear = if sign == "-" { format!("-{piece}") } else { piece };
        } else {
            linear.push_str(sign);
            linear.push_str(&piece);
        }
    }
    if linear.is_empty() {
        linear = "0".into();
    }
    let mut notes = Vec::new();
    let response = &spec.response;
    let (formula, scale) = match response {
        Term::Column(_) => (format!("={linear}"), "response"),
        Term::Log(inner) if matches!(**inner, Term::Column(_)) => {
            let smear = crate::predict::log_smearing(fitted);
            notes.push(format!(
                "The model is for log({}); the formula gives {} itself: EXP of the linear part times Duan's smearing factor {}.",
                inner,
                inner,
                w.num(smear)
            ));
            (format!("=EXP({linear})*{}", w.num(smear)), "response")
        }
        _ => {
            notes.push(format!(
                "The model is for {response}; the formula gives that transformed value. The back-transformed prediction averages over every residual (Duan's smearing) and has no short formula: take it from the predictions instead."
            ));
            (format!("={linear}"), "transformed")
        }
    };
    notes.push(format!(
        "Written for row {}; fill it down and the references follow each row. It gives the estimate only; the intervals come with the predictions.",
        o.first_row
    ));
    if !fitted.solution.aliased.is_empty() {
        notes.push("Columns that were not estimated (aliased) are left out, as in the fit.".into());
    }
    if spec.terms.iter().any(Term::has_category) {
        notes.push("A row whose category holds a value the model never saw gets the reference level's prediction here; the predictions refuse it instead.".into());
    }
    Ok(Formula { formula, scale, inputs, notes })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn column_letters_are_checked() {
        assert_eq!(column_letters("b").as_deref(), Some("B"));
        assert_eq!(column_letters("$AC").as_deref(), Some("AC"));
        assert_eq!(column_letters("XFD").as_deref(), Some("XFD"));
        assert_eq!(column_letters("XFE"), None);
        assert_eq!(column_letters("B2"), None);
        assert_eq!(column_letters(""), None);
    }

    #[test]
    fn sums_are_bracketed() {
        assert_eq!(bracket("A2"), "A2");
        assert_eq!(bracket("(A2-25569)"), "(A2-25569)");
        assert_eq!(bracket("(POWER(A2;0.5)-1)/0.5"), "((POWER(A2;0.5)-1)/0.5)");
        assert_eq!(bracket("1E-7"), "1E-7");
    }
}
