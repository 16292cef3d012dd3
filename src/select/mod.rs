//! Choosing the terms honestly: exact best subsets over terms (groups and
//! hierarchy respected) judged by adjusted R², AIC, BIC, Mallows' Cp and
//! cross-validated error; stepwise by AIC or BIC; backward elimination by
//! p-value as the baseline; and how stable the choice is under bootstrap
//! resampling.

pub mod cv;
pub mod problem;
pub mod stepwise;
pub mod subsets;

use crate::model::{fit, FitError, FitOptions};
use crate::schema::FitReport;
use crate::table::Table;
use crate::terms::{ModelSpec, Term};
use problem::{Criteria, Problem};
use serde::Serialize;
use stepwise::{Direction, InfoCriterion, Step};

/// What decides the winner.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum Criterion {
    AdjR2,
    Aic,
    Bic,
    Cp,
    Cv,
    PValue,
}

impl Criterion {
    pub fn parse(s: &str) -> Option<Criterion> {
        Some(match s {
            "adj-r2" => Criterion::AdjR2,
            "aic" => Criterion::Aic,
            "bic" => Criterion::Bic,
            "cp" => Criterion::Cp,
            "cv" => Criterion::Cv,
            "p-value" => Criterion::PValue,
            _ => return None,
        })
    }

    pub fn name(self) -> &'static str {
        match self {
            Criterion::AdjR2 => "adjusted R²",
            Criterion::Aic => "AIC",
            Criterion::Bic => "BIC",
            Criterion::Cp => "Mallows' Cp",
            Criterion::Cv => "cross-validated RMSE",
            Criterion::PValue => "backward elimination by p-value",
        }
    }
}

/// How the candidate sets are searched.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Search {
    /// Exact best subsets (falls back to stepwise past its limits).
    Exhaustive,
    /// Stepwise by AIC or BIC.
    Stepwise(Direction),
}

/// Options of a selection.
#[derive(Clone, Debug)]
pub struct SelectOptions {
    pub by: Criterion,
    pub search: Search,
    /// Significance level of the p-value route. Default 0.05 (common
    /// practice, no source).
    pub alpha: f64,
    pub folds: usize,
    pub cv_repeats: usize,
    pub seed: u64,
    /// Bootstrap resamples for the stability check; `None` skips it.
    pub stability: Option<usize>,
    /// Largest number of free terms searched exhaustively.
    pub max_exhaustive_terms: usize,
    /// Node budget of the exhaustive search.
    pub max_nodes: u64,
}

impl Default for SelectOptions {
    fn default() -> Self {
        SelectOptions {
            by: Criterion::Bic,
            search: Search::Exhaustive,
            alpha: 0.05,
            folds: 5,
            cv_repeats: 1,
            seed: 1,
            stability: None,
            max_exhaustive_terms: 40,
            max_nodes: 200_000_000,
        }
    }
}

/// A set of terms with its figures.
#[derive(Clone, Debug, Serialize)]
pub struct Candidate {
    pub terms: Vec<String>,
    #[serde(flatten)]
    pub criteria: Criteria,
    #[serde(serialize_with = "crate::schema::num")]
    pub cv_rmse: f64,
    #[serde(serialize_with = "crate::schema::num")]
    pub cv_mae: f64,
    /// Σ(eᵢ/(1 − hᵢ))², the leave-one-out squared error from one fit.
    #[serde(serialize_with = "crate::schema::num")]
    pub press: f64,
    /// √(PRESS/n).
    #[serde(serialize_with = "crate::schema::num")]
    pub loo_rmse: f64,
    /// Share of bootstrap resamples whose winner was exactly this set.
    #[serde(serialize_with = "crate::schema::opt_num")]
    pub stability: Option<f64>,
    /// The criteria under which this set wins.
    pub wins: Vec<Criterion>,
}

/// The best set of one size.
#[derive(Clone, Debug, Serialize)]
pub struct SizeBest {
    pub size: usize,
    pub terms: Vec<String>,
    pub k: usize,
    #[serde(serialize_with = "crate::schema::num")]
    pub rss: f64,
}

/// The winner under one criterion.
#[derive(Clone, Debug, Serialize)]
pub struct Winner {
    pub terms: Vec<String>,
    #[serde(serialize_with = "crate::schema::num")]
    pub value: f64,
}

/// How often each term is chosen across resamples.
#[derive(Clone, Debug, Serialize)]
pub struct Stability {
    /// Resamples the search was repeated on.
    pub resamples: usize,
    /// Resamples drawn but left out because in them some candidate had a
    /// single value or was an exact combination of others (a rare category
    /// not drawn, say): the search needs every candidate to add a column.
    pub skipped: usize,
    pub seed: u64,
    pub terms: Vec<TermShare>,
    /// Share of resamples that chose exactly the winning set.
    #[serde(serialize_with = "crate::schema::num")]
    pub winner_share: f64,
}

#[derive(Clone, Debug, Serialize)]
pub struct TermShare {
    pub term: String,
    #[serde(serialize_with = "crate::schema::num")]
    pub share: f64,
}

/// The recommended model and why.
#[derive(Clone, Debug, Serialize)]
pub struct Recommendation {
    pub terms: Vec<String>,
    pub reason: String,
}

/// Everything `select` reports.
#[derive(Clone, Debug, Serialize)]
pub struct SelectReport {
    pub response: String,
    pub candidates: Vec<String>,
    pub forced: Vec<String>,
    pub n: usize,
    pub by: Criterion,
    pub search: String,
    /// Models whose RSS was computed.
    pub models_examined: u64,
    /// True when the exhaustive search covered every subset.
    pub exhaustive_complete: bool,
    pub best: Best,
    pub recommended: Recommendation,
    pub by_size: Vec<SizeBest>,
    pub by_criterion: ByCriterion,
    pub comparison: Vec<Candidate>,
    /// The steps of the stepwise route, when it ran.
    pub path: Vec<Step>,
    /// Backward elimination by p-value, always run as the baseline.
    pub p_value_route: Route,
    pub stability: Option<Stability>,
    pub notes: Vec<String>,
    pub cautions: Vec<String>,
}

/// A route's result.
#[derive(Clone, Debug, Serialize)]
pub struct Route {
    pub terms: Vec<String>,
    pub path: Vec<Step>,
    pub alpha: f64,
}

/// The chosen model refitted in full.
#[derive(Clone, Debug, Serialize)]
pub struct Best {
    pub terms: Vec<String>,
    pub fit: FitReport,
}

#[derive(Clone, Debug, Serialize)]
pub struct ByCriterion {
    pub adj_r2: Winner,
    pub aic: Winner,
    pub bic: Winner,
    pub cp: Winner,
    pub cv: Winner,
    pub p_value: Winner,
}

/// Why a selection could not run.
#[derive(Clone, Debug, PartialEq)]
pub enum SelectError {
    Fit(FitError),
    /// Fewer rows than the full model has coefficients.
    TooFewRows { rows: usize, coefficients: usize },
    /// The search was stopped by the caller.
    Cancelled,
}

impl std::fmt::Display for SelectError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            SelectError::Fit(e) => e.fmt(f),
            SelectError::TooFewRows { rows, coefficients } => write!(
                f,
                "The full set of candidates has {coefficients} coefficients but there {} {rows} complete {}; \
                 offer fewer candidates or use more rows.",
                if *rows == 1 { "is only" } else { "are only" },
                if *rows == 1 { "row" } else { "rows" }
            ),
            SelectError::Cancelled => write!(f, "The search was stopped before it finished."),
        }
    }
}

impl std::error::Error for SelectError {}

impl From<FitError> for SelectError {
    fn from(e: FitError) -> Self {
        SelectError::Fit(e)
    }
}

/// Cautions specific to selection, shown with every result.
pub const SELECTION_CAUTIONS: [&str; 2] = [
    "The p-values and intervals of a model chosen from these data are too optimistic: the same data chose the terms and tested them.",
    "The best subset on this sample may not be the best on the next one; the stability figures show how firm the choice is.",
];

fn texts(p: &Problem, set: &[usize]) -> Vec<String> {
    let mut s = set.to_vec();
    s.sort_unstable();
    s.iter().map(|&t| p.candidates[t].text.clone()).collect()
}

/// What one run of the chosen strategy picks (used again on resamples).
fn choose(p: &Problem, o: &SelectOptions, sigma2_full: f64) -> (Vec<usize>, u64, bool) {
    if o.by == Criterion::PValue {
        return (stepwise::backward_by_p(p, o.alpha).0, 0, true);
    }
    let free = p.free().len();
    let exhaustive = matches!(o.search, Search::Exhaustive) && free <= o.max_exhaustive_terms;
    if exhaustive {
        let order = importance_order(p);
        let r = subsets::best_subsets(p, &order, subsets::SubsetOptions { max_nodes: o.max_nodes, progress: None });
        if r.complete {
            return (pick_by(p, &r, o, sigma2_full), r.examined, true);
        }
    }
    let ic = if o.by == Criterion::Aic { InfoCriterion::Aic } else { InfoCriterion::Bic };
    let dir = match o.search {
        Search::Stepwise(d) => d,
        Search::Exhaustive => Direction::Both,
    };
    (stepwise::stepwise(p, dir, ic).0, 0, false)
}

/// Free terms, most important first: by how much RSS rises when each is
/// dropped from the full model (drops that remove the most fit first make
/// the bound bite early).
fn importance_order(p: &Problem) -> Vec<usize> {
    let all: Vec<usize> = (0..p.candidates.len()).collect();
    let (full, _) = p.rss(&all);
    let mut scored: Vec<(f64, usize)> = p
        .free()
        .into_iter()
        .map(|t| {
            let s: Vec<usize> = all.iter().copied().filter(|&u| u != t).collect();
            (p.rss(&s).0 - full, t)
        })
        .collect();
    scored.sort_by(|a, b| b.0.total_cmp(&a.0));
    scored.into_iter().map(|(_, t)| t).collect()
}

/// The winner among the best set of each coefficient count.
fn pick_by(p: &Problem, r: &subsets::SubsetResult, o: &SelectOptions, sigma2_full: f64) -> Vec<usize> {
    let sets: Vec<&(Vec<usize>, f64)> = r.by_k.iter().flatten().collect();
    let score = |set: &Vec<usize>, rss: f64| -> f64 {
        let k = p.columns_of(set).len();
        let c = p.criteria(rss, k, sigma2_full);
        match o.by {
            Criterion::AdjR2 => -c.adj_r_squared,
            Criterion::Aic => c.aic,
            Criterion::Bic => c.bic,
            Criterion::Cp => c.cp,
            Criterion::Cv => cv::repeated_cv(p, set, o.folds, o.seed, o.cv_repeats).rmse,
            Criterion::PValue => unreachable!("handled by the p-value route"),
        }
    };
    sets.iter()
        .map(|(s, rss)| (score(s, *rss), s))
        .min_by(|a, b| a.0.total_cmp(&b.0))
        .map(|(_, s)| s.to_vec())
        .unwrap_or_else(|| p.forced())
}

/// What to choose from: the response, the candidate terms, the terms
/// always in, and the model's shape.
#[derive(Clone, Debug)]
pub struct SelectRequest {
    pub response: Term,
    pub candidates: Vec<Term>,
    pub forced: Vec<Term>,
    pub intercept: bool,
    pub weights: Option<String>,
    /// Source row numbers the user has left out.
    pub exclude: Vec<usize>,
}

/// The bootstrap's tallies: the summary, and how often each set won.
struct Bootstrap {
    summary: Stability,
    sets: Vec<(Vec<usize>, usize)>,
    done: usize,
}

impl Bootstrap {
    fn share_of(&self, set: &[usize]) -> f64 {
        self.sets.iter().find(|(x, _)| x == set).map_or(0.0, |x| x.1 as f64 / self.done.max(1) as f64)
    }
}

/// Runs a selection; `progress` is called during the exhaustive search
/// with the share covered, and stops it by returning false.
pub fn select(table: &Table, req: &SelectRequest, o: &SelectOptions, progress: Option<&mut dyn FnMut(f64) -> bool>) -> Result<SelectReport, SelectError> {
    let watched = progress.is_some();
    let (response, intercept, weights) = (&req.response, req.intercept, req.weights.clone());
    let p = Problem::new(table, response, &req.candidates, &req.forced, intercept, weights.clone(), &req.exclude)?;
    let all: Vec<usize> = (0..p.candidates.len()).collect();
    let (rss_full, k_full) = p.rss(&all);
    let cols_full = p.columns_of(&all).len();
    if p.n <= cols_full {
        return Err(SelectError::TooFewRows { rows: p.n, coefficients: cols_full });
    }
    let sigma2_full = rss_full / (p.n - k_full) as f64;
    let mut notes = Vec::new();
    let free = p.free();

    // The exhaustive search, or its fallback.
    let mut by_k: Vec<(Vec<usize>, f64)> = Vec::new();
    let mut by_size = Vec::new();
    let mut examined = 0u64;
    let mut complete = false;
    let mut path = Vec::new();
    let exhaustive = matches!(o.search, Search::Exhaustive) && free.len() <= o.max_exhaustive_terms;
    if exhaustive {
        let order = importance_order(&p);
        let r = subsets::best_subsets(&p, &order, subsets::SubsetOptions { max_nodes: o.max_nodes, progress });
        examined = r.examined;
        complete = r.complete;
        if !complete {
            if watched && r.examined < o.max_nodes {
                return Err(SelectError::Cancelled);
            }
            notes.push(format!(
                "The exhaustive search stopped after {} models without covering every subset; the results below come from stepwise selection instead.",
                r.examined
            ));
        } else {
            by_k = r.by_k.into_iter().flatten().collect();
            for (size, b) in r.by_size.into_iter().enumerate() {
                if let Some((set, rss)) = b {
                    by_size.push(SizeBest { size, terms: texts(&p, &set), k: p.columns_of(&set).len(), rss });
                }
            }
        }
    } else if matches!(o.search, Search::Exhaustive) {
        notes.push(format!(
            "{} free terms are more than the exhaustive search takes ({}); stepwise selection was used instead.",
            free.len(),
            o.max_exhaustive_terms
        ));
    }
    let ic = if o.by == Criterion::Aic { InfoCriterion::Aic } else { InfoCriterion::Bic };
    let mut stepwise_set = None;
    if !complete {
        let dir = match o.search {
            Search::Stepwise(d) => d,
            Search::Exhaustive => Direction::Both,
        };
        let (set, steps) = stepwise::stepwise(&p, dir, ic);
        path = steps;
        stepwise_set = Some(set.clone());
        // The stepwise route's models stand in for the per-size bests.
        let mut sets: Vec<Vec<usize>> = vec![p.forced(), all.clone(), set];
        for s in &path {
            let ids: Vec<usize> = s.terms.iter().filter_map(|t| p.candidates.iter().position(|c| &c.text == t)).collect();
            sets.push(ids);
        }
        sets.sort();
        sets.dedup();
        for s in sets {
            let (rss, _) = p.rss(&s);
            by_k.push((s, rss));
        }
    }

    // Winners under each criterion among the candidate sets.
    let crit_of = |set: &[usize], rss: f64| p.criteria(rss, p.columns_of(set).len(), sigma2_full);
    let mut cv_cache: Vec<(Vec<usize>, cv::CvError)> = Vec::new();
    let mut cv_of = |set: &[usize]| -> cv::CvError {
        if let Some((_, e)) = cv_cache.iter().find(|(s, _)| s == set) {
            return *e;
        }
        let e = cv::repeated_cv(&p, set, o.folds, o.seed, o.cv_repeats);
        cv_cache.push((set.to_vec(), e));
        e
    };
    let arg = |f: &dyn Fn(&Criteria) -> f64| -> (Vec<usize>, f64) {
        by_k.iter()
            .map(|(s, rss)| (s.clone(), f(&crit_of(s, *rss))))
            .min_by(|a, b| a.1.total_cmp(&b.1))
            .expect("at least one candidate set")
    };
    let (adj_set, adj_v) = arg(&|c| -c.adj_r_squared);
    let (aic_set, aic_v) = arg(&|c| c.aic);
    let (bic_set, bic_v) = arg(&|c| c.bic);
    let (cp_set, cp_v) = arg(&|c| c.cp);
    let (cv_set, cv_v) = by_k
        .iter()
        .map(|(s, _)| (s.clone(), cv_of(s).rmse))
        .min_by(|a, b| a.1.total_cmp(&b.1))
        .expect("at least one candidate set");
    let (p_set, p_path) = stepwise::backward_by_p(&p, o.alpha);

    let winner = match (o.by, &stepwise_set) {
        (Criterion::PValue, _) => p_set.clone(),
        (_, Some(s)) if o.by == Criterion::Aic || o.by == Criterion::Bic => s.clone(),
        (Criterion::AdjR2, _) => adj_set.clone(),
        (Criterion::Aic, _) => aic_set.clone(),
        (Criterion::Bic, _) => bic_set.clone(),
        (Criterion::Cp, _) => cp_set.clone(),
        (Criterion::Cv, _) => cv_set.clone(),
    };

    // Stability: rerun the same strategy on bootstrap resamples.
    let stability = o.stability.map(|b| {
        let mut rng = cv::SplitMix64::new(o.seed ^ 0x005E_ED0F_B007);
        let mut term_counts = vec![0usize; p.candidates.len()];
        let mut set_counts: Vec<(Vec<usize>, usize)> = Vec::new();
        let mut done = 0usize;
        let mut skipped = 0usize;
        for _ in 0..b {
            let rows: Vec<usize> = (0..p.n).map(|_| rng.below(p.n as u64) as usize).collect();
            let q = p.resample(&rows);
            let (rss_q, k_q) = q.rss(&all);
            if q.n <= k_q || k_q < q.columns_of(&all).len() {
                skipped += 1;
                continue;
            }
            let s2 = rss_q / (q.n - k_q) as f64;
            let (set, _, _) = choose(&q, o, s2);
            for &t in &set {
                term_counts[t] += 1;
            }
            match set_counts.iter_mut().find(|(s, _)| *s == set) {
                Some((_, c)) => *c += 1,
                None => set_counts.push((set, 1)),
            }
            done += 1;
        }
        let share = |c: usize| if done > 0 { c as f64 / done as f64 } else { f64::NAN };
        let summary = Stability {
            resamples: done,
            skipped,
            seed: o.seed,
            terms: free.iter().map(|&t| TermShare { term: p.candidates[t].text.clone(), share: share(term_counts[t]) }).collect(),
            winner_share: share(set_counts.iter().find(|(s, _)| *s == winner).map_or(0, |x| x.1)),
        };
        Bootstrap { summary, sets: set_counts, done }
    });

    // The comparison: every criterion's winner, the baseline and the best of each size.
    let mut rows: Vec<Vec<usize>> = vec![winner.clone(), adj_set.clone(), aic_set.clone(), bic_set.clone(), cp_set.clone(), cv_set.clone(), p_set.clone()];
    for (s, _) in &by_k {
        rows.push(s.clone());
    }
    rows.sort_by_key(|s| (p.columns_of(s).len(), s.clone()));
    rows.dedup();
    let comparison: Vec<Candidate> = rows
        .iter()
        .map(|s| {
            let (rss, _) = p.rss(s);
            let e = cv_of(s);
            let (press, loo_rmse) = cv::press(&p, s);
            let mut wins = Vec::new();
            for (c, w) in [
                (Criterion::AdjR2, &adj_set),
                (Criterion::Aic, &aic_set),
                (Criterion::Bic, &bic_set),
                (Criterion::Cp, &cp_set),
                (Criterion::Cv, &cv_set),
                (Criterion::PValue, &p_set),
            ] {
                if w == s {
                    wins.push(c);
                }
            }
            Candidate {
                terms: texts(&p, s),
                criteria: crit_of(s, rss),
                cv_rmse: e.rmse,
                cv_mae: e.mae,
                press,
                loo_rmse,
                stability: stability.as_ref().map(|b| b.share_of(s)),
                wins,
            }
        })
        .collect();

    // The winner refitted with the full machinery.
    let spec = ModelSpec {
        response: response.clone(),
        terms: winner.iter().map(|&t| p.candidates[t].term.clone()).collect(),
        intercept,
        weights,
        exclude: req.exclude.clone(),
    };
    let best_fit = fit(table, &spec, &FitOptions::default())?;
    let mut fit_report = best_fit.report;
    fit_report.cautions.extend(SELECTION_CAUTIONS.iter().map(|s| s.to_string()));
    let cvs: Vec<f64> = comparison.iter().map(|c| c.cv_rmse).collect();
    let min_cv = cvs.iter().copied().fold(f64::INFINITY, f64::min);
    let my_cv = cv_of(&winner).rmse;
    let reason = recommendation(o, &p, &winner, &p_set, complete, examined, my_cv, min_cv, stability.as_ref().map(|b| b.summary.winner_share));

    Ok(SelectReport {
        response: response.to_string(),
        candidates: p.free().iter().map(|&t| p.candidates[t].text.clone()).collect(),
        forced: p.forced().iter().map(|&t| p.candidates[t].text.clone()).collect(),
        n: p.n,
        by: o.by,
        search: if complete {
            "exhaustive (branch and bound)".into()
        } else {
            match o.search {
                Search::Stepwise(d) => format!("stepwise ({})", serde_json::to_string(&d).unwrap_or_default().trim_matches('"')),
                Search::Exhaustive => "stepwise (both ways), in place of the exhaustive search".into(),
            }
        },
        models_examined: examined,
        exhaustive_complete: complete,
        best: Best { terms: texts(&p, &winner), fit: fit_report },
        recommended: Recommendation { terms: texts(&p, &winner), reason },
        by_size,
        by_criterion: ByCriterion {
            adj_r2: Winner { terms: texts(&p, &adj_set), value: -adj_v },
            aic: Winner { terms: texts(&p, &aic_set), value: aic_v },
            bic: Winner { terms: texts(&p, &bic_set), value: bic_v },
            cp: Winner { terms: texts(&p, &cp_set), value: cp_v },
            cv: Winner { terms: texts(&p, &cv_set), value: cv_v },
            p_value: Winner { terms: texts(&p, &p_set), value: o.alpha },
        },
        comparison,
        path,
        p_value_route: Route { terms: texts(&p, &p_set), path: p_path, alpha: o.alpha },
        stability: stability.map(|b| b.summary),
        notes,
        cautions: crate::schema::CAUTIONS.iter().chain(SELECTION_CAUTIONS.iter()).map(|s| s.to_string()).collect(),
    })
}

#[allow(clippy::too_many_arguments)]
fn recommendation(
    o: &SelectOptions,
    p: &Problem,
    winner: &[usize],
    p_set: &[usize],
    complete: bool,
    examined: u64,
    my_cv: f64,
    min_cv: f64,
    winner_share: Option<f64>,
) -> String {
    let names = texts(p, winner);
    let what = if names.is_empty() { "the intercept alone".to_string() } else { names.join(", ") };
    let mut s = match o.by {
        Criterion::PValue => format!(
            "{what}: what remains when terms are dropped one at a time while their p-value is above {}. This is the strict route; a term just above the line can still help the forecast.",
            o.alpha
        ),
        c if complete => format!("{what}: the best {} of the {examined} models examined, which covered every allowed subset.", c.name()),
        c => format!("{what}: chosen by stepwise {}; the exhaustive search did not run, so a better subset may exist.", c.name()),
    };
    if min_cv.is_finite() && my_cv.is_finite() {
        if my_cv <= min_cv * 1.0000001 {
            s.push_str(&format!(" It also has the lowest cross-validated error ({}).", crate::text::short(my_cv, 4)));
        } else {
            s.push_str(&format!(
                " Its cross-validated error is {} against the lowest {} among the candidates.",
                crate::text::short(my_cv, 4),
                crate::text::short(min_cv, 4)
            ));
        }
    }
    if o.by != Criterion::PValue && winner != p_set {
        s.push_str(" Pruning by p-value would keep a different set; see the p-value route.");
    }
    if let Some(w) = winner_share {
        s.push_str(&format!(
            " The same set won in {}% of the bootstrap resamples{}.",
            (w * 100.0).round(),
            if w < 0.5 { ", so other sets are nearly as well supported" } else { "" }
        ));
    }
    s
}
