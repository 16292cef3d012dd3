//! From a table and a model specification to the numbers least squares
//! needs: the design columns, the response and the weights, on the complete
//! rows only, with a record of every row left out and why.
//!
//! Derived columns (powers, products, square roots) are computed in
//! double-double, so that x¹⁰ carries the digits an `f64` would round away;
//! logarithms are computed in `f64` by `libm` (within an ulp, and the same
//! bits natively and in wasm, whose standard libraries differ).

use super::parse::Term;
use crate::lstsq::dd::DD;
use crate::lstsq::DdColumn;
use crate::table::{parse_number, ColumnData, Table};
use crate::values::Values;
use serde::Serialize;
use std::cell::RefCell;
use std::fmt;

/// What to fit: a response, its terms, and the options that shape the design.
#[derive(Clone, Debug, PartialEq)]
pub struct ModelSpec {
    pub response: Term,
    pub terms: Vec<Term>,
    pub intercept: bool,
    /// A column of observation weights, for weighted least squares.
    pub weights: Option<String>,
    /// Source row numbers (as in the user's file) to leave out.
    pub exclude: Vec<usize>,
}

/// One column of the design matrix.
#[derive(Clone, Debug)]
pub struct DesignColumn {
    /// What the coefficient is called: `(intercept)`, `x^2`, `zone=3`, `a*b`.
    pub label: String,
    /// Index of the term it came from; `None` for the intercept.
    pub term: Option<usize>,
    pub values: DdColumn,
}

/// Rows left out of the fit for one reason.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct DroppedRows {
    /// In plain words: "missing value in floor_area", "weight is zero".
    pub reason: String,
    /// The column concerned.
    pub column: String,
    pub count: usize,
    /// Source row numbers of the first few of them.
    pub first_rows: Vec<usize>,
}

/// The levels a category term was coded with, so that new rows can be
/// coded the same way.
#[derive(Clone, Debug, PartialEq)]
pub struct CategoryLevels {
    pub column: String,
    pub reference: Option<String>,
    /// Level labels in sorted order; `levels[ref_index]` is the reference.
    pub levels: Vec<String>,
    pub ref_index: usize,
}

/// The design matrix and what was done to get it.
#[derive(Clone, Debug)]
pub struct Design {
    /// How each category was coded.
    pub levels: Vec<CategoryLevels>,
    pub response_label: String,
    pub response: DdColumn,
    pub columns: Vec<DesignColumn>,
    /// Observation weights of the rows used (all positive), if any.
    pub weights: Option<Vec<f64>>,
    /// Indices into the table of the rows used.
    pub rows: Vec<usize>,
    pub dropped: Vec<DroppedRows>,
    pub warnings: Vec<String>,
}

/// Why a design could not be built.
#[derive(Clone, Debug, PartialEq)]
pub enum DesignError {
    /// A term names a column the table does not have.
    UnknownColumn { name: String, suggestions: Vec<String> },
    /// A column used as a number holds a cell that is not a number.
    NotNumeric { column: String, row: usize, value: String },
    /// Every row has a missing value somewhere in the columns used.
    NoCompleteRows { missing: Vec<(String, usize)> },
    /// log() or boxcox() of a term with values at or below zero.
    NotPositive { function: &'static str, term: String, rows: usize, first_row: usize },
    /// The square root of a term with negative values.
    SqrtOfNegative { term: String, rows: usize, first_row: usize },
    /// A weight below zero.
    NegativeWeight { column: String, row: usize, value: f64 },
    /// `cat(c, ref=L)` names a level that is not among the rows used.
    UnknownLevel { column: String, level: String, levels: Vec<String> },
    /// The response must be a number, not a category.
    CategoricalResponse { term: String },
    /// A term's values overflow (beyond about 1e308).
    Overflow { term: String, first_row: usize },
    /// A new row holds a category level the model was not fitted with.
    UnseenLevel { column: String, level: String, row: usize, levels: Vec<String> },
}

impl fmt::Display for DesignError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            DesignError::UnknownColumn { name, suggestions } => {
                write!(f, "There is no column called \"{name}\".")?;
                match suggestions.len() {
                    0 => Ok(()),
                    1 => write!(f, " Did you mean \"{}\"?", suggestions[0]),
                    _ => write!(
                        f,
                        " Did you mean one of: {}?",
                        suggestions.iter().map(|s| format!("\"{s}\"")).collect::<Vec<_>>().join(", ")
                    ),
                }
            }
            DesignError::NotNumeric { column, row, value } => write!(
                f,
                "Column \"{column}\" is used as a number, but row {row} holds \"{value}\", which is not a number. \
                 Fix the cell, or use cat({}) if the column is a category.",
                super::parse::quote_name(column)
            ),
            DesignError::NoCompleteRows { missing } => {
                write!(f, "No row has a value in every column the model uses.")?;
                let parts: Vec<String> = missing.iter().map(|(c, k)| format!("\"{c}\" is missing in {k} rows")).collect();
                if !parts.is_empty() {
                    write!(f, " {}.", parts.join("; "))?;
                }
                Ok(())
            }
            DesignError::NotPositive { function, term, rows, first_row } => write!(
                f,
                "{function}() needs values above zero, but {term} is zero or negative in {rows} {} (the first is row {first_row}).",
                plural(*rows, "row", "rows")
            ),
            DesignError::SqrtOfNegative { term, rows, first_row } => write!(
                f,
                "sqrt() needs values of zero or more, but {term} is negative in {rows} {} (the first is row {first_row}).",
                plural(*rows, "row", "rows")
            ),
            DesignError::NegativeWeight { column, row, value } => {
                write!(f, "Weights cannot be negative, but \"{column}\" is {value} in row {row}.")
            }
            DesignError::UnknownLevel { column, level, levels } => write!(
                f,
                "\"{level}\" is not a value of \"{column}\" in the rows used; its values are {}.",
                levels.join(", ")
            ),
            DesignError::CategoricalResponse { term } => write!(
                f,
                "The response {term} is a category; plumbline fits a numeric response. Choose a numeric column."
            ),
            DesignError::UnseenLevel { column, level, row, levels } => write!(
                f,
                "Row {row} has \"{level}\" in \"{column}\", a value the model never saw (it knows {}); it cannot be predicted.",
                levels.join(", ")
            ),
            DesignError::Overflow { term, first_row } => write!(
                f,
                "{term} is too large to compute (beyond about 1e308) in row {first_row}; rescale the column first."
            ),
        }
    }
}

impl std::error::Error for DesignError {}

fn plural<'a>(n: usize, one: &'a str, many: &'a str) -> &'a str {
    if n == 1 {
        one
    } else {
        many
    }
}

/// How a column is used: as a number, or as a category.
#[derive(Clone, Copy, PartialEq, Eq, Debug)]
enum Use {
    Number,
    Category,
}

fn uses_of(term: &Term, out: &mut Vec<(String, Use)>) {
    match term {
        Term::Column(c) => out.push((c.clone(), Use::Number)),
        Term::Cat { column, .. } => out.push((column.clone(), Use::Category)),
        Term::Log(t) | Term::Sqrt(t) | Term::Power(t, _) | Term::BoxCox(t, _) | Term::YeoJohnson(t, _) => {
            uses_of(t, out)
        }
        Term::Product(a, b) => {
            uses_of(a, out);
            uses_of(b, out);
        }
    }
}

/// Builds the design matrix on the complete rows of `table`.
pub fn build_design(table: &Table, spec: &ModelSpec) -> Result<Design, DesignError> {
    if spec.response.has_category() {
        return Err(DesignError::CategoricalResponse { term: spec.response.to_string() });
    }
    // Every column the model reads, in order: response, terms, weights.
    let mut uses = Vec::new();
    uses_of(&spec.response, &mut uses);
    for t in &spec.terms {
        uses_of(t, &mut uses);
    }
    if let Some(w) = &spec.weights {
        uses.push((w.clone(), Use::Number));
    }
    for (name, _) in &uses {
        if table.column(name).is_none() {
            return Err(DesignError::UnknownColumn { name: name.clone(), suggestions: nearest_names(table, name) });
        }
    }
    for (name, u) in &uses {
        if *u == Use::Number {
            check_numeric(table, name)?;
        }
    }

    // Complete cases, each dropped row charged to the first column it misses.
    let mut seen: Vec<&str> = Vec::new();
    for (name, _) in &uses {
        if !seen.contains(&name.as_str()) {
            seen.push(name);
        }
    }
    let n_all = table.n_rows();
    let mut keep = vec![true; n_all];
    let mut dropped: Vec<DroppedRows> = Vec::new();
    let mut warnings = Vec::new();
    if !spec.exclude.is_empty() {
        let mut d = DroppedRows { reason: "left out by you".into(), column: String::new(), count: 0, first_rows: vec![] };
        for (i, k) in keep.iter_mut().enumerate() {
            if spec.exclude.contains(&table.source_rows[i]) {
                *k = false;
                d.count += 1;
                if d.first_rows.len() < 10 {
                    d.first_rows.push(table.source_rows[i]);
                }
            }
        }
        let unknown: Vec<String> = spec.exclude.iter().filter(|r| !table.source_rows.contains(r)).map(|r| r.to_string()).collect();
        if !unknown.is_empty() {
            warnings.push(format!("Row {} to leave out {} not among the data rows.", unknown.join(", "), if unknown.len() == 1 { "is" } else { "are" }));
        }
        if d.count > 0 {
            dropped.push(d);
        }
    }
    for &name in &seen {
        let data = &table.column(name).expect("checked above").data;
        let mut d = DroppedRows { reason: format!("missing value in {name}"), column: name.into(), count: 0, first_rows: vec![] };
        for (i, k) in keep.iter_mut().enumerate() {
            if *k && data.is_missing(i) {
                *k = false;
                d.count += 1;
                if d.first_rows.len() < 10 {
                    d.first_rows.push(table.source_rows[i]);
                }
            }
        }
        if d.count > 0 {
            dropped.push(d);
        }
    }
    let mut weights = None;
    if let Some(wname) = &spec.weights {
        let w = numeric_values(table, wname);
        let mut d = DroppedRows { reason: "weight is zero".into(), column: wname.clone(), count: 0, first_rows: vec![] };
        for (i, k) in keep.iter_mut().enumerate() {
            if !*k {
                continue;
            }
            if w[i] < 0.0 {
                return Err(DesignError::NegativeWeight { column: wname.clone(), row: table.source_rows[i], value: w[i] });
            }
            if !w[i].is_finite() {
                return Err(DesignError::Overflow { term: wname.clone(), first_row: table.source_rows[i] });
            }
            if w[i] == 0.0 {
                *k = false;
                d.count += 1;
                if d.first_rows.len() < 10 {
                    d.first_rows.push(table.source_rows[i]);
                }
            }
        }
        if d.count > 0 {
            dropped.push(d);
        }
        weights = Some((0..n_all).filter(|&i| keep[i]).map(|i| w[i]).collect::<Vec<f64>>());
    }
    let rows: Vec<usize> = (0..n_all).filter(|&i| keep[i]).collect();
    if rows.is_empty() {
        let missing = seen
            .iter()
            .map(|&c| {
                let data = &table.column(c).unwrap().data;
                (c.to_string(), (0..n_all).filter(|&i| data.is_missing(i)).count())
            })
            .filter(|(_, k)| *k > 0)
            .collect();
        return Err(DesignError::NoCompleteRows { missing });
    }

    let ctx = EvalContext { table, rows: &rows, fixed: None, recorded: RefCell::new(Vec::new()) };
    for (name, u) in &uses {
        let is_date = matches!(table.column(name).map(|c| &c.data), Some(ColumnData::Date(_)));
        let note = format!("Dates in \"{name}\" are used as a number: days since 1970-01-01.");
        if *u == Use::Number && is_date && !warnings.contains(&note) {
            warnings.push(note);
        }
    }
    let response_label = spec.response.to_string();
    let response = match ctx.plain_column(&spec.response) {
        Some(c) => c,
        None => match ctx.eval(&spec.response)? {
            Value::Number(v) => {
                check_finite(&ctx, &response_label, &v)?;
                DdColumn::from_dd(&v)
            }
            Value::Columns(_) => return Err(DesignError::CategoricalResponse { term: response_label }),
        },
    };
    check_finite_column(&ctx, &response_label, &response)?;

    let mut columns = Vec::new();
    if spec.intercept {
        columns.push(DesignColumn {
            label: "(intercept)".into(),
            term: None,
            values: DdColumn::from_f64(vec![1.0; rows.len()]),
        });
    }
    for (ti, term) in spec.terms.iter().enumerate() {
        let label = term.to_string();
        if let Some(values) = ctx.plain_column(term) {
            check_finite_column(&ctx, &label, &values)?;
            columns.push(DesignColumn { label, term: Some(ti), values });
            continue;
        }
        let cols = match ctx.eval(term)? {
            Value::Number(v) => vec![(label.clone(), v)],
            Value::Columns(cols) => {
                if cols.is_empty() {
                    warnings.push(format!(
                        "{label} has a single value in the rows used, so it adds no column to the model."
                    ));
                }
                cols
            }
        };
        for (l, v) in cols {
            check_finite(&ctx, &l, &v)?;
            columns.push(DesignColumn { label: l, term: Some(ti), values: DdColumn::from_dd(&v) });
        }
    }
    Ok(Design {
        levels: ctx.recorded.into_inner(),
        response_label,
        response,
        columns,
        weights,
        rows,
        dropped,
        warnings,
    })
}

/// As [`check_finite`], for a column of exact `f64` values.
fn check_finite_column(ctx: &EvalContext, label: &str, v: &DdColumn) -> Result<(), DesignError> {
    match v.hi.iter().position(|x| !x.is_finite()) {
        None => Ok(()),
        Some(i) => Err(DesignError::Overflow { term: label.to_string(), first_row: ctx.source_row(i) }),
    }
}

fn check_finite(ctx: &EvalContext, label: &str, v: &[DD]) -> Result<(), DesignError> {
    match v.iter().position(|x| !x.is_finite()) {
        None => Ok(()),
        Some(i) => Err(DesignError::Overflow { term: label.to_string(), first_row: ctx.source_row(i) }),
    }
}

/// Refuses a column used as a number if any non-missing cell is not a number.
fn check_numeric(table: &Table, name: &str) -> Result<(), DesignError> {
    let col = table.column(name).expect("checked by the caller");
    if let Some((i, value)) = col.invalid.first() {
        return Err(DesignError::NotNumeric { column: name.into(), row: table.source_rows[*i], value: value.clone() });
    }
    if let ColumnData::Text(cells) = &col.data {
        for (i, c) in cells.iter().enumerate() {
            if let Some(s) = c {
                if parse_number(s).is_none() {
                    return Err(DesignError::NotNumeric {
                        column: name.into(),
                        row: table.source_rows[i],
                        value: s.clone(),
                    });
                }
            }
        }
    }
    Ok(())
}

/// A numeric column's values (NaN where missing); text cells are parsed,
/// dates are days since 1970-01-01.
fn numeric_values(table: &Table, name: &str) -> Values {
    match &table.column(name).expect("checked by the caller").data {
        ColumnData::Numeric(v) | ColumnData::Date(v) => v.clone(),
        ColumnData::Text(cells) => {
            cells.iter().map(|c| c.as_deref().and_then(parse_number).unwrap_or(f64::NAN)).collect()
        }
    }
}

/// Up to three column names close to `name` (case-insensitive edit distance).
fn nearest_names(table: &Table, name: &str) -> Vec<String> {
    let target = name.to_lowercase();
    let limit = (target.chars().count() / 3).max(2);
    let mut scored: Vec<(usize, &str)> = table
        .columns
        .iter()
        .map(|c| {
            let cand = c.name.to_lowercase();
            let d = if cand.contains(&target) || target.contains(&cand) { 1 } else { edit_distance(&target, &cand) };
            (d, c.name.as_str())
        })
        .filter(|(d, _)| *d <= limit)
        .collect();
    scored.sort();
    scored.into_iter().take(3).map(|(_, n)| n.to_string()).collect()
}

/// Levenshtein distance.
fn edit_distance(a: &str, b: &str) -> usize {
    let a: Vec<char> = a.chars().collect();
    let b: Vec<char> = b.chars().collect();
    let mut prev: Vec<usize> = (0..=b.len()).collect();
    for i in 1..=a.len() {
        let mut cur = vec![i; b.len() + 1];
        for j in 1..=b.len() {
            let sub = prev[j - 1] + usize::from(a[i - 1] != b[j - 1]);
            cur[j] = sub.min(prev[j] + 1).min(cur[j - 1] + 1);
        }
        prev = cur;
    }
    prev[b.len()]
}

/// A term's value on the rows used: one numeric column, or labelled columns.
enum Value {
    Number(Vec<DD>),
    Columns(Vec<(String, Vec<DD>)>),
}

struct EvalContext<'a> {
    table: &'a Table,
    rows: &'a [usize],
    /// Levels to code categories with (new rows); `None` takes them from the rows.
    fixed: Option<&'a [CategoryLevels]>,
    recorded: RefCell<Vec<CategoryLevels>>,
}

/// The term columns of `spec` on the given rows of a (new) table, with the
/// categories coded by `levels`. A level not among them is refused.
pub fn term_columns(table: &Table, spec: &ModelSpec, levels: &[CategoryLevels], rows: &[usize]) -> Result<Vec<DesignColumn>, DesignError> {
    let ctx = EvalContext { table, rows, fixed: Some(levels), recorded: RefCell::new(Vec::new()) };
    let mut columns = Vec::new();
    if spec.intercept {
        columns.push(DesignColumn { label: "(intercept)".into(), term: None, values: DdColumn::from_f64(vec![1.0; rows.len()]) });
    }
    for (ti, term) in spec.terms.iter().enumerate() {
        let cols = match ctx.eval(term)? {
            Value::Number(v) => vec![(term.to_string(), v)],
            Value::Columns(c) => c,
        };
        for (l, v) in cols {
            columns.push(DesignColumn { label: l, term: Some(ti), values: DdColumn::from_dd(&v) });
        }
    }
    Ok(columns)
}

impl EvalContext<'_> {
    fn source_row(&self, i: usize) -> usize {
        self.table.source_rows[self.rows[i]]
    }

    /// A term that is a numeric or date column as it stands: its values on
    /// the rows used, sharing the table's storage when every row is used
    /// (no copy of the data), else a copy of those rows. `None` for any
    /// other term, which [`Self::eval`] computes.
    fn plain_column(&self, term: &Term) -> Option<DdColumn> {
        let Term::Column(c) = term else { return None };
        match &self.table.column(c)?.data {
            ColumnData::Numeric(v) | ColumnData::Date(v) => Some(if self.rows.len() == v.len() {
                DdColumn::shared(v)
            } else {
                DdColumn::from_f64(self.rows.iter().map(|&i| v[i]).collect())
            }),
            ColumnData::Text(_) => None,
        }
    }

    fn eval(&self, term: &Term) -> Result<Value, DesignError> {
        Ok(match term {
            Term::Column(c) => {
                let v = numeric_values(self.table, c);
                Value::Number(self.rows.iter().map(|&i| DD::from_f64(v[i])).collect())
            }
            Term::Log(t) => {
                let v = self.positive(t, "log")?;
                Value::Number(v.iter().map(|x| DD::from_f64(libm::log(x.to_f64()))).collect())
            }
            Term::BoxCox(t, l) => {
                let v = self.positive(t, "boxcox")?;
                Value::Number(v.iter().map(|x| DD::from_f64(crate::profile::transform::boxcox(x.to_f64(), *l))).collect())
            }
            Term::YeoJohnson(t, l) => {
                let v = self.number(t)?;
                Value::Number(v.iter().map(|x| DD::from_f64(crate::profile::transform::yeojohnson(x.to_f64(), *l))).collect())
            }
            Term::Sqrt(t) => {
                let v = self.number(t)?;
                let bad: Vec<usize> = (0..v.len()).filter(|&i| v[i].hi < 0.0).collect();
                if let Some(&first) = bad.first() {
                    return Err(DesignError::SqrtOfNegative {
                        term: t.to_string(),
                        rows: bad.len(),
                        first_row: self.source_row(first),
                    });
                }
                Value::Number(v.iter().map(|x| x.sqrt()).collect())
            }
            Term::Power(t, k) => Value::Number(self.number(t)?.iter().map(|x| x.powi(*k)).collect()),
            Term::Cat { column, reference } => Value::Columns(self.dummies(column, reference.as_deref())?),
            Term::Product(a, b) => {
                let left = self.labelled(a)?;
                let right = self.labelled(b)?;
                let mut out = Vec::new();
                for (la, va) in &left {
                    for (lb, vb) in &right {
                        let v: Vec<DD> = va.iter().zip(vb).map(|(&x, &y)| x * y).collect();
                        out.push((format!("{la}*{lb}"), v));
                    }
                }
                if !a.has_category() && !b.has_category() {
                    Value::Number(out.pop().expect("one column").1)
                } else {
                    Value::Columns(out)
                }
            }
        })
    }

    /// The values of `t`, refused unless all are above zero.
    fn positive(&self, t: &Term, function: &'static str) -> Result<Vec<DD>, DesignError> {
        let v = self.number(t)?;
        let bad: Vec<usize> = (0..v.len()).filter(|&i| v[i].hi <= 0.0 || v[i].hi.is_nan()).collect();
        match bad.first() {
            Some(&first) => Err(DesignError::NotPositive {
                function,
                term: t.to_string(),
                rows: bad.len(),
                first_row: self.source_row(first),
            }),
            None => Ok(v),
        }
    }

    fn number(&self, t: &Term) -> Result<Vec<DD>, DesignError> {
        match self.eval(t)? {
            Value::Number(v) => Ok(v),
            Value::Columns(_) => unreachable!("the parser refuses functions and powers of categories"),
        }
    }

    fn labelled(&self, t: &Term) -> Result<Vec<(String, Vec<DD>)>, DesignError> {
        Ok(match self.eval(t)? {
            Value::Number(v) => vec![(t.to_string(), v)],
            Value::Columns(c) => c,
        })
    }

    /// Treatment-coded 0/1 columns, one per level except the reference.
    fn dummies(&self, column: &str, reference: Option<&str>) -> Result<Vec<(String, Vec<DD>)>, DesignError> {
        let col = self.table.column(column).expect("checked by the caller");
        // (sort key, label) of each used row.
        let keys: Vec<Level> = match &col.data {
            ColumnData::Numeric(v) => self.rows.iter().map(|&i| Level::Number(v[i])).collect(),
            ColumnData::Date(v) => self.rows.iter().map(|&i| Level::Date(v[i])).collect(),
            ColumnData::Text(cells) => {
                let texts: Vec<&str> = self.rows.iter().map(|&i| cells[i].as_deref().unwrap_or("")).collect();
                if texts.iter().all(|s| parse_number(s).is_some()) {
                    texts.iter().map(|s| Level::Number(parse_number(s).unwrap())).collect()
                } else {
                    texts.iter().map(|s| Level::Text(s.to_string())).collect()
                }
            }
        };
        if let Some(fixed) = self.fixed {
            let coded = fixed
                .iter()
                .find(|c| c.column == column && c.reference.as_deref() == reference)
                .ok_or_else(|| DesignError::UnknownColumn { name: column.into(), suggestions: Vec::new() })?;
            let mut out: Vec<(String, Vec<DD>)> = coded
                .levels
                .iter()
                .enumerate()
                .filter(|(j, _)| *j != coded.ref_index)
                .map(|(_, l)| (format!("{column}={l}"), Vec::with_capacity(keys.len())))
                .collect();
            for (i, k) in keys.iter().enumerate() {
                let label = k.label();
                let Some(j) = coded.levels.iter().position(|l| *l == label) else {
                    return Err(DesignError::UnseenLevel { column: column.into(), level: label, row: self.source_row(i), levels: coded.levels.clone() });
                };
                for (slot, (jj, _)) in coded.levels.iter().enumerate().filter(|(jj, _)| *jj != coded.ref_index).enumerate() {
                    out[slot].1.push(if jj == j { DD::ONE } else { DD::ZERO });
                }
            }
            return Ok(out);
        }
        let mut levels: Vec<Level> = Vec::new();
        for k in &keys {
            if !levels.contains(k) {
                levels.push(k.clone());
            }
        }
        levels.sort_by(|a, b| a.partial_cmp(b).expect("levels are finite numbers or text"));
        let labels: Vec<String> = levels.iter().map(Level::label).collect();
        let ref_index = match reference {
            None => 0,
            Some(r) => {
                let wanted = match (&levels[0], parse_number(r)) {
                    (Level::Number(_), Some(v)) => Level::Number(v),
                    _ => Level::Text(r.to_string()),
                };
                levels.iter().position(|l| *l == wanted).ok_or_else(|| DesignError::UnknownLevel {
                    column: column.into(),
                    level: r.into(),
                    levels: labels.clone(),
                })?
            }
        };
        let coded = CategoryLevels { column: column.into(), reference: reference.map(String::from), levels: labels.clone(), ref_index };
        if !self.recorded.borrow().contains(&coded) {
            self.recorded.borrow_mut().push(coded);
        }
        Ok(levels
            .iter()
            .enumerate()
            .filter(|(j, _)| *j != ref_index)
            .map(|(j, lev)| {
                let v = keys.iter().map(|k| if k == lev { DD::ONE } else { DD::ZERO }).collect();
                (format!("{column}={}", labels[j]), v)
            })
            .collect())
    }
}

/// A level of a category: numbers sort as numbers, text as text.
#[derive(Clone, Debug, PartialEq, PartialOrd)]
enum Level {
    Number(f64),
    Date(f64),
    Text(String),
}

impl Level {
    fn label(&self) -> String {
        match self {
            Level::Number(v) => format!("{v}"),
            Level::Date(d) => crate::read::cells::format_date(*d),
            Level::Text(s) => s.clone(),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::read::csv::read_csv;
    use crate::terms::parse::{parse_term, parse_terms};

    fn spec(response: &str, terms: &str) -> ModelSpec {
        ModelSpec {
            response: parse_term(response).unwrap(),
            terms: parse_terms(terms).unwrap(),
            intercept: true,
            weights: None,
            exclude: Vec::new(),
        }
    }

    fn design(csv: &str, response: &str, terms: &str) -> Result<Design, DesignError> {
        build_design(&read_csv(csv.as_bytes()).unwrap(), &spec(response, terms))
    }

    const DATA: &str = "y,x,zone,kind\n1,2,1,b\n2,3,2,a\n3,,3,c\n4,5,2,a\n5,6,1,b\n";

    #[test]
    fn labels_follow_the_term_order_and_sorted_levels() {
        let d = design(DATA, "y", "x, cat(zone), cat(kind, ref=b), cat(zone)*x, x^2").unwrap();
        let labels: Vec<&str> = d.columns.iter().map(|c| c.label.as_str()).collect();
        // Row 4 (x missing) is dropped, so zone 3 and kind c are absent.
        assert_eq!(labels, ["(intercept)", "x", "zone=2", "kind=a", "zone=2*x", "x^2"]);
        assert_eq!(d.rows, [0, 1, 3, 4]);
        assert_eq!(d.dropped, vec![DroppedRows { reason: "missing value in x".into(), column: "x".into(), count: 1, first_rows: vec![4] }]);
        assert_eq!(*d.columns[4].values.hi, [0.0, 3.0, 5.0, 0.0]);
    }

    /// Plain columns used on every row share the table's storage (no copy
    /// of the data); with a row left out they are copies of the rows used,
    /// with the same values as the evaluated path gives.
    #[test]
    fn plain_columns_share_the_table_storage_when_every_row_is_used() {
        let table = read_csv(b"y,x,z\n1,2,5\n2,3,\n4,5,1\n3,7,2\n").unwrap();
        let numeric = |name: &str| match &table.column(name).unwrap().data {
            ColumnData::Numeric(v) => v.clone(),
            _ => unreachable!(),
        };
        let d = build_design(&table, &spec("y", "x, log(x)")).unwrap();
        assert!(d.response.hi.shares_storage_with(&numeric("y")));
        assert!(d.columns[1].values.hi.shares_storage_with(&numeric("x")));
        assert!(!d.columns[2].values.hi.shares_storage_with(&numeric("x")));
        let d = build_design(&table, &spec("y", "x, z")).unwrap();
        assert_eq!(d.rows, vec![0, 2, 3]);
        assert!(!d.columns[1].values.hi.shares_storage_with(&numeric("x")));
        assert_eq!(*d.columns[1].values.hi, [2.0, 5.0, 7.0]);
        assert_eq!(*d.columns[2].values.hi, [5.0, 1.0, 2.0]);
        assert_eq!(*d.response.hi, [1.0, 4.0, 3.0]);
    }

    #[test]
    fn powers_keep_digits_beyond_f64() {
        let d = design("y,x\n1,-6.860120914\n2,1.1\n", "y", "x^10").unwrap();
        let exact = DD::from_f64(-6.860120914).powi(10);
        assert_eq!(d.columns[1].values.get(0), exact);
        assert!(d.columns[1].values.lo.is_some(), "x^10 needs a low part");
    }

    #[test]
    fn plain_errors() {
        let e = design(DATA, "y", "zome").unwrap_err();
        assert_eq!(e, DesignError::UnknownColumn { name: "zome".into(), suggestions: vec!["zone".into()] });
        assert_eq!(e.to_string(), "There is no column called \"zome\". Did you mean \"zone\"?");
        let e = design(DATA, "y", "kind").unwrap_err();
        assert_eq!(e, DesignError::NotNumeric { column: "kind".into(), row: 2, value: "b".into() });
        let e = design("y,x\n1,2\n2,0\n3,-1\n", "y", "log(x)").unwrap_err();
        assert_eq!(e, DesignError::NotPositive { function: "log", term: "x".into(), rows: 2, first_row: 3 });
        assert!(e.to_string().contains("in 2 rows"), "{e}");
        let e = design("y,x\n1,\n,2\n", "y", "x").unwrap_err();
        assert_eq!(e, DesignError::NoCompleteRows { missing: vec![("y".into(), 1), ("x".into(), 1)] });
        let e = design(DATA, "y", "cat(zone, ref=7)").unwrap_err();
        assert!(matches!(e, DesignError::UnknownLevel { .. }), "{e}");
        let e = design(DATA, "cat(zone)", "x").unwrap_err();
        assert!(matches!(e, DesignError::CategoricalResponse { .. }), "{e}");
        let e = design("y,x\n1,1e200\n2,3\n", "y", "x^2").unwrap_err();
        assert_eq!(e, DesignError::Overflow { term: "x^2".into(), first_row: 2 });
    }

    #[test]
    fn rows_left_out_by_the_user_are_reported() {
        let t = read_csv(DATA.as_bytes()).unwrap();
        let mut s = spec("y", "zone");
        s.exclude = vec![3, 99];
        let d = build_design(&t, &s).unwrap();
        assert_eq!(d.rows, [0, 2, 3, 4]);
        assert_eq!(d.dropped[0], DroppedRows { reason: "left out by you".into(), column: String::new(), count: 1, first_rows: vec![3] });
        assert_eq!(d.warnings, ["Row 99 to leave out is not among the data rows."]);
    }

    #[test]
    fn zero_weights_drop_rows_and_negative_weights_are_refused() {
        let t = read_csv(b"y,x,w\n1,1,1\n2,2,0\n3,4,2\n4,3,1\n").unwrap();
        let mut s = spec("y", "x");
        s.weights = Some("w".into());
        let d = build_design(&t, &s).unwrap();
        assert_eq!(d.rows, [0, 2, 3]);
        assert_eq!(d.weights.as_deref(), Some(&[1.0, 2.0, 1.0][..]));
        assert_eq!(d.dropped[0].reason, "weight is zero");
        let t = read_csv(b"y,x,w\n1,1,1\n2,2,-1\n").unwrap();
        assert_eq!(
            build_design(&t, &s).unwrap_err(),
            DesignError::NegativeWeight { column: "w".into(), row: 3, value: -1.0 }
        );
    }
}
