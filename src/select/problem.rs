//! The selection problem: every candidate term's columns built once on the
//! rows complete for all of them, with each term's group of columns, what
//! it requires (hierarchy) and whether it is forced in.

use crate::lstsq::dd::DD;
use crate::lstsq::{solve_lstsq, DdColumn, LstsqOptions, LstsqSolution};
use crate::model::FitError;
use crate::table::Table;
use crate::terms::{build_design, ModelSpec, Term};

/// One candidate term.
#[derive(Clone, Debug)]
pub struct Candidate {
    pub term: Term,
    pub text: String,
    /// Indices of its columns in [`Problem::columns`].
    pub columns: Vec<usize>,
    pub forced: bool,
    /// Candidates that must be in the model whenever this one is.
    pub requires: Vec<usize>,
}

/// All candidates on common rows, ready for fast subset fits.
#[derive(Clone, Debug)]
pub struct Problem {
    pub n: usize,
    pub intercept: bool,
    /// The weighted columns (rows × √w), one per design column: the
    /// intercept (if any), then every candidate's columns.
    pub columns: Vec<DdColumn>,
    /// The weighted response.
    pub y: DdColumn,
    pub candidates: Vec<Candidate>,
    /// TSS of the weighted response (centred with an intercept).
    pub tss: f64,
    /// Σ ln wᵢ, for the likelihood.
    pub sum_log_w: f64,
    /// The unweighted response and the weights, for resampling.
    raw_y: Vec<f64>,
    weights: Vec<f64>,
}

/// The weighted total sum of squares (centred with an intercept) and Σ ln w.
fn totals(y: &[f64], w: &[f64], intercept: bool) -> (f64, f64) {
    let sw: f64 = w.iter().sum();
    let tss = if intercept {
        let m = y.iter().zip(w).map(|(a, b)| a * b).sum::<f64>() / sw;
        y.iter().zip(w).map(|(a, b)| b * (a - m) * (a - m)).sum()
    } else {
        y.iter().zip(w).map(|(a, b)| b * a * a).sum()
    };
    (tss, w.iter().map(|v| v.ln()).sum())
}

/// Whether `a` is made of `b`'s parts: x^2 contains x; a*b contains a and b.
fn contains_factor(a: &Term, b: &Term) -> bool {
    if a == b {
        return false;
    }
    match a {
        Term::Power(inner, _) => **inner == *b || contains_factor(inner, b),
        Term::Product(l, r) => **l == *b || **r == *b || contains_factor(l, b) || contains_factor(r, b),
        _ => false,
    }
}

impl Problem {
    /// Builds the problem; `forced` are terms always in the model.
    pub fn new(
        table: &Table,
        response: &Term,
        candidates: &[Term],
        forced: &[Term],
        intercept: bool,
        weights: Option<String>,
        exclude: &[usize],
    ) -> Result<Problem, FitError> {
        let mut all: Vec<Term> = forced.to_vec();
        for c in candidates {
            if !all.contains(c) {
                all.push(c.clone());
            }
        }
        let spec = ModelSpec { response: response.clone(), terms: all.clone(), intercept, weights, exclude: exclude.to_vec() };
        let design = build_design(table, &spec)?;
        let n = design.rows.len();
        if n > design.columns.len() {
            crate::model::check_response(&design, intercept)?;
        }
        let root: Vec<DD> = match &design.weights {
            Some(w) => w.iter().map(|&v| DD::from_f64(v).sqrt()).collect(),
            None => vec![DD::ONE; n],
        };
        let scale = |c: &DdColumn| DdColumn::from_dd(&(0..n).map(|i| c.get(i) * root[i]).collect::<Vec<_>>());
        // A column with values beyond 1e±150 is multiplied by a power of two
        // (exact) that brings them near 1, so that the search's sums of
        // squares stay in range; its coefficients scale inversely and every
        // figure the selection reports is unchanged.
        let columns: Vec<DdColumn> = design
            .columns
            .iter()
            .map(|c| {
                let v = scale(&c.values);
                let biggest = v.hi.iter().fold(0.0f64, |m, x| m.max(x.abs()));
                if biggest == 0.0 || (1e-150..=1e150).contains(&biggest) {
                    return v;
                }
                let f = 2f64.powi(-(biggest.log2().floor() as i32).clamp(-1020, 1020));
                DdColumn::from_dd(&(0..n).map(|i| v.get(i).scale(f)).collect::<Vec<_>>())
            })
            .collect();
        let y = scale(&design.response);
        // √w times a value near 1e300 can pass the largest f64.
        let labels = std::iter::once(&design.response_label).chain(design.columns.iter().map(|c| &c.label));
        for (label, col) in labels.zip(std::iter::once(&y).chain(&columns)) {
            if let Some(i) = (0..n).find(|&i| !col.get(i).is_finite()) {
                return Err(FitError::Design(crate::terms::DesignError::Overflow {
                    term: format!("{label} × √{}", crate::terms::parse::quote_name(spec.weights.as_deref().unwrap_or("w"))),
                    first_row: table.source_rows[design.rows[i]],
                }));
            }
        }
        // The search compares sums of squares of the response held in f64:
        // squares of values beyond 1e±150 are out of its range.
        let biggest = y.hi.iter().fold(0.0f64, |m, v| m.max(v.abs()));
        if !(1e-150..=1e150).contains(&biggest) {
            return Err(FitError::ResponseOutOfRange { response: design.response_label.clone() });
        }
        // Subset fits update one factorization of all the columns, which is
        // exact only when they are independent: refuse candidates that add
        // no column, or whose columns the full fit aliases (a constant with
        // the intercept, a copy, an exact combination).
        if n > design.columns.len() {
            let full = solve_lstsq(&columns, &y, &LstsqOptions::default());
            let dependent: Vec<String> = all
                .iter()
                .enumerate()
                .filter(|&(t, _)| {
                    let mine: Vec<usize> = (0..design.columns.len()).filter(|&j| design.columns[j].term == Some(t)).collect();
                    mine.is_empty() || mine.iter().any(|j| full.aliased.contains(j))
                })
                .map(|(_, term)| term.to_string())
                .collect();
            if !dependent.is_empty() {
                return Err(FitError::DependentCandidates { terms: dependent });
            }
        }
        let cands: Vec<Candidate> = all
            .iter()
            .enumerate()
            .map(|(t, term)| Candidate {
                term: term.clone(),
                text: term.to_string(),
                columns: (0..design.columns.len()).filter(|&j| design.columns[j].term == Some(t)).collect(),
                forced: t < forced.len() || forced.contains(term),
                requires: (0..all.len()).filter(|&u| contains_factor(term, &all[u])).collect(),
            })
            .collect();
        let w: Vec<f64> = design.weights.clone().unwrap_or_else(|| vec![1.0; n]);
        let yv: Vec<f64> = (0..n).map(|i| design.response.get(i).to_f64()).collect();
        let (tss, sum_log_w) = totals(&yv, &w, intercept);
        let mut p = Problem { n, intercept, columns, y, candidates: cands, tss, sum_log_w, raw_y: yv, weights: w };
        p.tss = p.null_rss(tss);
        Ok(p)
    }

    /// The same problem on the rows `rows` (repeats allowed), for the
    /// bootstrap.
    pub fn resample(&self, rows: &[usize]) -> Problem {
        let pick = |c: &DdColumn| DdColumn::from_dd(&rows.iter().map(|&i| c.get(i)).collect::<Vec<_>>());
        let raw_y: Vec<f64> = rows.iter().map(|&i| self.raw_y[i]).collect();
        let weights: Vec<f64> = rows.iter().map(|&i| self.weights[i]).collect();
        let (tss, sum_log_w) = totals(&raw_y, &weights, self.intercept);
        let mut p = Problem {
            n: rows.len(),
            intercept: self.intercept,
            columns: self.columns.iter().map(pick).collect(),
            y: pick(&self.y),
            candidates: self.candidates.clone(),
            tss,
            sum_log_w,
            raw_y,
            weights,
        };
        p.tss = p.null_rss(tss);
        p
    }

    /// The TSS computed as the RSS of the intercept-only model, so that R²
    /// of that model is exactly 0 (same arithmetic on both sides).
    fn null_rss(&self, fallback: f64) -> f64 {
        if self.intercept {
            self.solve(&[], None).rss.to_f64()
        } else {
            fallback
        }
    }

    /// Design columns of a set of candidates (plus the intercept), in order.
    pub fn columns_of(&self, terms: &[usize]) -> Vec<usize> {
        let mut cols: Vec<usize> = Vec::new();
        if self.intercept {
            cols.push(0);
        }
        let mut ts = terms.to_vec();
        ts.sort_unstable();
        for t in ts {
            cols.extend(&self.candidates[t].columns);
        }
        cols
    }

    /// True when every term's requirements are in the set.
    pub fn respects_hierarchy(&self, terms: &[usize]) -> bool {
        terms.iter().all(|&t| self.candidates[t].requires.iter().all(|r| terms.contains(r)))
    }

    /// The forced candidates.
    pub fn forced(&self) -> Vec<usize> {
        (0..self.candidates.len()).filter(|&t| self.candidates[t].forced).collect()
    }

    /// The candidates open to selection.
    pub fn free(&self) -> Vec<usize> {
        (0..self.candidates.len()).filter(|&t| !self.candidates[t].forced).collect()
    }

    /// An accurate least-squares fit of a set of candidates, on a subset of
    /// rows when `rows` is given.
    pub fn solve(&self, terms: &[usize], rows: Option<&[usize]>) -> LstsqSolution {
        let cols = self.columns_of(terms);
        let pick = |c: &DdColumn| match rows {
            None => c.clone(),
            Some(r) => DdColumn::from_dd(&r.iter().map(|&i| c.get(i)).collect::<Vec<_>>()),
        };
        let x: Vec<DdColumn> = cols.iter().map(|&j| pick(&self.columns[j])).collect();
        solve_lstsq(&x, &pick(&self.y), &LstsqOptions::default())
    }

    /// The weighted residual sum of squares and the rank of a set.
    pub fn rss(&self, terms: &[usize]) -> (f64, usize) {
        let s = self.solve(terms, None);
        (s.rss.to_f64(), s.rank)
    }
}

/// The criteria of a model with `k` estimated coefficients and RSS `rss`.
#[derive(Clone, Copy, Debug, PartialEq, serde::Serialize)]
pub struct Criteria {
    #[serde(serialize_with = "crate::schema::num")]
    pub rss: f64,
    pub k: usize,
    #[serde(serialize_with = "crate::schema::num")]
    pub r_squared: f64,
    #[serde(serialize_with = "crate::schema::num")]
    pub adj_r_squared: f64,
    #[serde(serialize_with = "crate::schema::num")]
    pub aic: f64,
    #[serde(serialize_with = "crate::schema::num")]
    pub bic: f64,
    #[serde(serialize_with = "crate::schema::num")]
    pub cp: f64,
}

impl Problem {
    /// Criteria with the same conventions as the fit (σ² counted in AIC and
    /// BIC); Cp = RSS/σ̂²_full − n + 2k (Mallows 1973, Technometrics 15).
    pub fn criteria(&self, rss: f64, k: usize, sigma2_full: f64) -> Criteria {
        let n = self.n as f64;
        let kf = k as f64;
        let r2 = 1.0 - rss / self.tss;
        let k0 = if self.intercept { 1.0 } else { 0.0 };
        let adj = 1.0 - (1.0 - r2) * (n - k0) / (n - kf);
        let ll = -n / 2.0 * ((2.0 * std::f64::consts::PI).ln() + (rss / n).ln() + 1.0) + self.sum_log_w / 2.0;
        Criteria {
            rss,
            k,
            r_squared: r2,
            adj_r_squared: adj,
            aic: -2.0 * ll + 2.0 * (kf + 1.0),
            bic: -2.0 * ll + n.ln() * (kf + 1.0),
            cp: rss / sigma2_full - n + 2.0 * kf,
        }
    }
}
