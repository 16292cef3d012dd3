//! Checking a model before trusting it: per-row influence, collinearity,
//! tests of the assumptions, a smoother for the plots, and findings in
//! plain words. Everything works from a [`Fitted`] model; nothing here
//! refits more than a few auxiliary regressions.

pub mod collinearity;
pub mod findings;
pub mod influence;
pub mod lowess;
pub mod normality;
pub mod residual_tests;

use crate::model::Fitted;
use crate::schema::FitReport;
use crate::terms::ModelSpec;
use serde::Serialize;

/// Everything `check` reports.
#[derive(Clone, Debug, Serialize)]
pub struct CheckReport {
    pub fit: FitReport,
    pub rows: Vec<influence::RowDiagnostics>,
    /// Sum of squared leave-one-out prediction errors.
    #[serde(serialize_with = "crate::schema::num")]
    pub press: f64,
    pub collinearity: collinearity::Collinearity,
    pub normality: residual_tests::Normality,
    pub breusch_pagan: Option<residual_tests::BreuschPagan>,
    pub durbin_watson: Option<residual_tests::DurbinWatson>,
    pub reset: Option<residual_tests::FTest>,
    pub curvature: Vec<residual_tests::Curvature>,
    pub findings: Vec<findings::Finding>,
}

/// Runs every check on a fitted model; `sheet` names the rows in findings.
pub fn check(fitted: &Fitted, spec: &ModelSpec, sheet: Option<&str>) -> CheckReport {
    let rows = influence::row_diagnostics(fitted);
    let reset = residual_tests::reset(fitted, &rows);
    let mut report = CheckReport {
        fit: fitted.report.clone(),
        press: influence::press(fitted),
        collinearity: collinearity::collinearity(fitted),
        normality: residual_tests::normality(fitted),
        breusch_pagan: residual_tests::breusch_pagan(fitted),
        durbin_watson: residual_tests::durbin_watson(fitted),
        reset,
        curvature: residual_tests::curvature(fitted, spec),
        rows,
        findings: Vec::new(),
    };
    report.findings = findings::findings(&report, sheet);
    report
}
