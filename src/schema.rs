//! The result schema: the serde structs that the CLI's `--json` prints and
//! the page receives, so that what is tested on the CLI is what the page
//! shows.
//!
//! Numbers are JSON numbers written as the shortest decimal that reads back
//! to the same `f64` (at most 17 significant digits, so no digit is lost).
//! JSON has no infinities or NaN: an infinite value is the string
//! `"Infinity"` or `"-Infinity"`, and a value that is not defined (a t
//! statistic of 0/0, say) is `null`.

use crate::lstsq::SolverPath;
use crate::terms::design::DroppedRows;
use serde::{Serialize, Serializer};

/// Serializes an `f64` as a number, `"Infinity"`, `"-Infinity"` or `null`.
pub fn num<S: Serializer>(v: &f64, s: S) -> Result<S::Ok, S::Error> {
    if v.is_finite() {
        s.serialize_f64(*v)
    } else if v.is_nan() {
        s.serialize_none()
    } else if *v > 0.0 {
        s.serialize_str("Infinity")
    } else {
        s.serialize_str("-Infinity")
    }
}

/// As [`num`], for an optional value (`None` is `null`).
pub fn opt_num<S: Serializer>(v: &Option<f64>, s: S) -> Result<S::Ok, S::Error> {
    match v {
        Some(x) => num(x, s),
        None => s.serialize_none(),
    }
}

/// The cautions shown wherever results are shown.
pub const CAUTIONS: [&str; 4] = [
    "An association in these data is not proof that one thing causes another.",
    "Predictions outside the range of the data used here are unreliable.",
    "If the terms were chosen by looking at these same data, the p-values and intervals are too optimistic.",
    "Check the model against the standards of your field, and have a qualified reviewer look at it, before you rely on it.",
];

/// One estimated coefficient.
#[derive(Clone, Debug, Serialize)]
pub struct Coefficient {
    /// The design column: `(intercept)`, `x`, `log(x)`, `x^2`, `zone=3`, `a*b`.
    pub term: String,
    /// The term it came from, as written: `cat(zone)` for `zone=3`.
    pub group: String,
    #[serde(serialize_with = "num")]
    pub estimate: f64,
    #[serde(serialize_with = "num")]
    pub std_error: f64,
    #[serde(serialize_with = "num")]
    pub t: f64,
    #[serde(serialize_with = "num")]
    pub p_value: f64,
    #[serde(serialize_with = "num")]
    pub ci_low: f64,
    #[serde(serialize_with = "num")]
    pub ci_high: f64,
    /// estimate × sd(column)/sd(response); `null` for the intercept.
    #[serde(serialize_with = "opt_num")]
    pub standardized: Option<f64>,
    /// True when the column is a combination of earlier ones and was not
    /// estimated; its numbers are then `null`.
    pub aliased: bool,
}

/// Inference for one coefficient under another covariance (HC3).
#[derive(Clone, Debug, Serialize)]
pub struct RobustCoefficient {
    pub term: String,
    #[serde(serialize_with = "num")]
    pub std_error: f64,
    #[serde(serialize_with = "num")]
    pub t: f64,
    #[serde(serialize_with = "num")]
    pub p_value: f64,
    #[serde(serialize_with = "num")]
    pub ci_low: f64,
    #[serde(serialize_with = "num")]
    pub ci_high: f64,
}

/// Everything a fit reports.
#[derive(Clone, Debug, Serialize)]
pub struct FitReport {
    /// The response as written, e.g. `log(energy)`.
    pub response: String,
    /// The terms as written, in canonical form.
    pub terms: Vec<String>,
    pub intercept: bool,
    /// The weights column, for weighted least squares.
    pub weights: Option<String>,
    /// Rows used.
    pub n: usize,
    /// Rows left out, and why.
    pub n_dropped: usize,
    pub dropped: Vec<DroppedRows>,
    /// Source row numbers of the rows used, in order.
    pub rows_used: Vec<usize>,
    pub df_model: usize,
    pub df_residual: usize,
    /// Confidence level of the intervals.
    pub level: f64,
    pub coefficients: Vec<Coefficient>,
    /// Heteroscedasticity-robust (HC3) inference, when asked for.
    pub hc3: Option<Vec<RobustCoefficient>>,
    #[serde(serialize_with = "num")]
    pub r_squared: f64,
    /// `centred` with an intercept (about the mean of the response),
    /// `uncentred` without one (about zero).
    pub r_squared_kind: &'static str,
    #[serde(serialize_with = "num")]
    pub adj_r_squared: f64,
    #[serde(serialize_with = "num")]
    pub residual_std_error: f64,
    /// Residual sum of squares (weighted when there are weights).
    #[serde(serialize_with = "num")]
    pub rss: f64,
    /// Total sum of squares, centred or uncentred as R².
    #[serde(serialize_with = "num")]
    pub tss: f64,
    /// The sum of squares the model explains, TSS − RSS (in double-double).
    #[serde(serialize_with = "num")]
    pub model_ss: f64,
    #[serde(serialize_with = "num")]
    pub f_statistic: f64,
    #[serde(serialize_with = "num")]
    pub f_p_value: f64,
    #[serde(serialize_with = "num")]
    pub log_likelihood: f64,
    #[serde(serialize_with = "num")]
    pub aic: f64,
    #[serde(serialize_with = "num")]
    pub bic: f64,
    /// Labels of the design columns that were not estimated.
    pub aliased: Vec<String>,
    /// Design columns, and the rank found among them.
    pub n_columns: usize,
    pub rank: usize,
    /// The relative tolerance under which a column counts as aliased.
    pub rank_tolerance: f64,
    /// 1-norm condition number of the column-scaled design.
    #[serde(serialize_with = "num")]
    pub condition_number: f64,
    /// Digits double precision could promise for this problem.
    #[serde(serialize_with = "num")]
    pub double_precision_digits: f64,
    pub solver_path: SolverPath,
    pub warnings: Vec<String>,
    pub cautions: Vec<String>,
}

/// How a file was read, for the profile and the page.
#[derive(Clone, Debug, Serialize)]
pub struct LoadSummary {
    pub format: crate::read::Format,
    pub sheets: Vec<String>,
    pub sheet: Option<String>,
    /// The 1-based row or line of the header.
    pub header_row: usize,
    pub delimiter: Option<String>,
    /// `point` or `comma`.
    pub decimal: &'static str,
    pub encoding: Option<&'static str>,
    pub rows: usize,
    pub columns: usize,
    pub notes: Vec<String>,
    pub warnings: Vec<String>,
}

impl LoadSummary {
    pub fn of(l: &crate::read::Loaded) -> LoadSummary {
        LoadSummary {
            format: l.format,
            sheets: l.sheets.clone(),
            sheet: l.table.sheet.clone(),
            header_row: l.header_row,
            delimiter: l.delimiter.map(|d| if d == '\t' { "tab".to_string() } else { d.to_string() }),
            decimal: match l.decimal {
                crate::read::cells::Decimal::Point => "point",
                crate::read::cells::Decimal::Comma => "comma",
            },
            encoding: l.encoding.map(|e| e.name()),
            rows: l.table.n_rows(),
            columns: l.table.columns.len(),
            notes: l.notes.clone(),
            warnings: l.table.warnings.clone(),
        }
    }
}

/// What `profile` reports: how the file was read, and each column.
#[derive(Clone, Debug, Serialize)]
pub struct ProfileReport {
    pub load: LoadSummary,
    pub rows: usize,
    pub columns: Vec<crate::profile::ColumnProfile>,
}
