//! Fitting a model: table + specification → design → least squares →
//! inference. This is the one entry point the CLI and the page call.

use crate::inference::{infer, InferenceOptions};
use crate::lstsq::dd::DD;
use crate::lstsq::{solve_lstsq, DdColumn, LstsqOptions, LstsqSolution};
use crate::schema::FitReport;
use crate::table::Table;
use crate::terms::design::{build_design, Design, DesignError, ModelSpec};
use std::fmt;

/// Options of a fit.
#[derive(Clone, Copy, Debug)]
pub struct FitOptions {
    /// Confidence level of the intervals, in (0, 1). Default 0.95.
    pub level: f64,
    /// Also report HC3 heteroscedasticity-robust standard errors.
    pub hc3: bool,
    pub lstsq: LstsqOptions,
}

impl Default for FitOptions {
    fn default() -> Self {
        FitOptions { level: 0.95, hc3: false, lstsq: LstsqOptions::default() }
    }
}

/// A fitted model: the report, plus the design and the solution that
/// per-row diagnostics and predictions build on.
#[derive(Clone, Debug)]
pub struct Fitted {
    pub report: FitReport,
    pub design: Design,
    pub solution: LstsqSolution,
}

/// Why a model could not be fitted.
#[derive(Clone, Debug, PartialEq)]
pub enum FitError {
    /// The design could not be built from the table.
    Design(DesignError),
    /// No more complete rows than coefficients to estimate.
    TooFewRows { rows: usize, parameters: usize },
    /// No intercept and no terms: nothing to estimate.
    NothingToFit,
    /// The confidence level is not strictly between 0 and 1.
    BadLevel(f64),
    /// The response has one value in every row used (or is zero in every
    /// row, without an intercept): there is nothing to explain.
    ConstantResponse { response: String, value: f64 },
    /// A coefficient or its standard error lies beyond the range of `f64`
    /// (the response and a column differ in size by more than about 1e308).
    OutOfRange { term: String },
    /// (Selection) candidates that are exact combinations of the intercept,
    /// the forced terms or earlier candidates, or that add no column.
    DependentCandidates { terms: Vec<String> },
    /// (Selection) the response is so large or small (near 1e±300) that the
    /// sums of squares the search compares cannot be held in `f64`.
    ResponseOutOfRange { response: String },
}

impl fmt::Display for FitError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            FitError::Design(e) => e.fmt(f),
            FitError::TooFewRows { rows, parameters } => write!(
                f,
                "The model has {parameters} {} to estimate but only {rows} complete {}; \
                 it needs at least {} rows (more rows than coefficients) to estimate the error. \
                 Use fewer terms or more rows.",
                if *parameters == 1 { "coefficient" } else { "coefficients" },
                if *rows == 1 { "row" } else { "rows" },
                parameters + 1
            ),
            FitError::NothingToFit => {
                write!(f, "There is nothing to estimate: the model has no terms and no intercept.")
            }
            FitError::BadLevel(l) => {
                write!(f, "The confidence level must be between 0 and 1 (for example 0.95), not {l}.")
            }
            FitError::ConstantResponse { response, value } => write!(
                f,
                "The response {response} is {} in every row used, so there is nothing for the terms to explain: \
                 standard errors, t statistics and R² would all be undefined. Check that {response} is the column you \
                 meant to model.",
                plain_number(*value)
            ),
            FitError::OutOfRange { term } => write!(
                f,
                "The coefficient of {term} is too large or too small for double precision (beyond about 1e±308), \
                 because the response and {term} differ in size by more than that. Rescale one of them (for example \
                 divide the larger by 1e300) and fit again."
            ),
            FitError::DependentCandidates { terms } => write!(
                f,
                "{} {} no information of {} own: {} the same in every row used, a copy or an exact combination of the \
                 intercept or of other candidates. The search compares sums of squares that such terms make \
                 unreliable; remove {} from the candidates (a fit with every term reports which are aliased).",
                terms.join(", "),
                if terms.len() == 1 { "adds" } else { "add" },
                if terms.len() == 1 { "its" } else { "their" },
                if terms.len() == 1 { "it is" } else { "each is" },
                if terms.len() == 1 { "it" } else { "them" },
            ),
            FitError::ResponseOutOfRange { response } => write!(
                f,
                "The response {response} has values so large or so small (near 1e±300) that the sums of squares the \
                 search compares lie beyond double precision. Rescale it (for example multiply or divide by 1e300) \
                 and run the selection again; a single fit of it works as it is."
            ),
        }
    }
}

impl std::error::Error for FitError {}

impl From<DesignError> for FitError {
    fn from(e: DesignError) -> Self {
        FitError::Design(e)
    }
}

/// Fits `spec` to `table` by (weighted) least squares.
pub fn fit(table: &Table, spec: &ModelSpec, options: &FitOptions) -> Result<Fitted, FitError> {
    if !(options.level > 0.0 && options.level < 1.0) {
        return Err(FitError::BadLevel(options.level));
    }
    if spec.terms.is_empty() && !spec.intercept {
        return Err(FitError::NothingToFit);
    }
    let design = build_design(table, spec)?;
    let n = design.rows.len();
    // Without weights the kernel shares the design's columns (which share
    // the table's where they are plain columns): no copy of the data.
    let (x, y) = weighted_system(&design);
    // √w times a value near 1e300 can pass the largest f64 (without
    // weights the columns are the design's, already checked finite).
    let weighted = design.weights.is_some();
    for (label, col) in std::iter::once((&design.response_label, &y)).chain(design.columns.iter().map(|c| &c.label).zip(&x)).filter(|_| weighted) {
        if let Some(i) = (0..col.len()).find(|&i| !col.get(i).is_finite()) {
            let w = spec.weights.as_deref().unwrap_or("the weight");
            return Err(FitError::Design(DesignError::Overflow {
                term: format!("{label} × √{}", crate::terms::parse::quote_name(w)),
                first_row: table.source_rows[design.rows[i]],
            }));
        }
    }
    let solution = solve_lstsq(&x, &y, &options.lstsq);
    drop((x, y));
    if n <= solution.rank {
        // With no more rows than columns the rank found is at most n, so
        // the coefficient count is that of the design.
        return Err(FitError::TooFewRows { rows: n, parameters: design.columns.len().max(solution.rank) });
    }
    check_response(&design, spec.intercept)?;
    if design.columns.is_empty() || solution.rank == 0 {
        return Err(FitError::NothingToFit);
    }
    let mut report = infer(
        spec,
        &design,
        &solution,
        &table.source_rows,
        InferenceOptions { level: options.level, hc3: options.hc3 },
    );
    let out_of_range = |v: f64| !v.is_finite();
    if let Some(c) = report.coefficients.iter().find(|c| {
        !c.aliased && [c.estimate, c.std_error, c.ci_low, c.ci_high].into_iter().any(out_of_range)
    }) {
        return Err(FitError::OutOfRange { term: c.term.clone() });
    }
    report.warnings.splice(0..0, table.warnings.iter().cloned());
    Ok(Fitted { report, design, solution })
}

/// A number as a reader would write it: plain, or with an exponent when
/// very large or small.
fn plain_number(v: f64) -> String {
    if v == 0.0 || (1e-4..1e15).contains(&v.abs()) {
        format!("{v}")
    } else {
        format!("{v:e}")
    }
}

/// Refuses a response that is the same in every row used (or zero in every
/// row without an intercept): its fit is exact and every standard error,
/// t statistic and R² would be 0/0.
pub(crate) fn check_response(design: &Design, intercept: bool) -> Result<(), FitError> {
    let y = &design.response;
    let Some(first) = (0..y.len()).map(|i| y.get(i)).next() else { return Ok(()) };
    let constant = (0..y.len()).all(|i| y.get(i) == first);
    if constant && (intercept || first.to_f64() == 0.0) {
        return Err(FitError::ConstantResponse { response: design.response_label.clone(), value: first.to_f64() });
    }
    Ok(())
}

/// The rows of X and y multiplied by √w (in double-double) for weighted
/// least squares; without weights, the design's own columns (shared, not
/// copied).
pub fn weighted_system(design: &Design) -> (Vec<DdColumn>, DdColumn) {
    let Some(w) = &design.weights else {
        return (design.columns.iter().map(|c| c.values.clone()).collect(), design.response.clone());
    };
    let root: Vec<DD> = w.iter().map(|&v| DD::from_f64(v).sqrt()).collect();
    let scale = |c: &DdColumn| -> DdColumn {
        let v: Vec<DD> = (0..c.len()).map(|i| c.get(i) * root[i]).collect();
        DdColumn::from_dd(&v)
    };
    (design.columns.iter().map(|c| scale(&c.values)).collect(), scale(&design.response))
}
