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
}

impl fmt::Display for FitError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            FitError::Design(e) => e.fmt(f),
            FitError::TooFewRows { rows, parameters } => write!(
                f,
                "The model has {parameters} coefficients to estimate but only {rows} complete {}; \
                 it needs at least {} rows (more rows than coefficients) to estimate the error. \
                 Use fewer terms or more rows.",
                if *rows == 1 { "row" } else { "rows" },
                parameters + 1
            ),
            FitError::NothingToFit => {
                write!(f, "There is nothing to estimate: the model has no terms and no intercept.")
            }
            FitError::BadLevel(l) => {
                write!(f, "The confidence level must be between 0 and 1 (for example 0.95), not {l}.")
            }
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
    let (x, y) = weighted_system(&design);
    let solution = solve_lstsq(&x, &y, &options.lstsq);
    if n <= solution.rank {
        return Err(FitError::TooFewRows { rows: n, parameters: solution.rank });
    }
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
    report.warnings.splice(0..0, table.warnings.iter().cloned());
    Ok(Fitted { report, design, solution })
}

/// The rows of X and y multiplied by √w (in double-double) for weighted
/// least squares; unchanged without weights.
fn weighted_system(design: &Design) -> (Vec<DdColumn>, DdColumn) {
    let x: Vec<DdColumn> = design.columns.iter().map(|c| c.values.clone()).collect();
    let Some(w) = &design.weights else {
        return (x, design.response.clone());
    };
    let root: Vec<DD> = w.iter().map(|&v| DD::from_f64(v).sqrt()).collect();
    let scale = |c: &DdColumn| -> DdColumn {
        let v: Vec<DD> = (0..c.len()).map(|i| c.get(i) * root[i]).collect();
        DdColumn::from_dd(&v)
    };
    (x.iter().map(scale).collect(), scale(&design.response))
}
