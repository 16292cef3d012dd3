//! Greedy routes: stepwise by an information criterion, and backward
//! elimination by p-value. Both respect groups (a term's columns move
//! together) and hierarchy (x² cannot enter before x, x cannot leave
//! while x² stays).

use super::problem::Problem;
use serde::Serialize;
use statrs::distribution::{ContinuousCDF, FisherSnedecor};

/// Which way stepwise moves.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Direction {
    Forward,
    Backward,
    Both,
}

/// The criterion stepwise minimises.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum InfoCriterion {
    Aic,
    Bic,
}

/// One step of a route.
#[derive(Clone, Debug, Serialize)]
pub struct Step {
    /// `add` or `drop`.
    pub action: &'static str,
    pub term: String,
    /// The criterion after the step (stepwise), or the term's p-value (backward by p).
    #[serde(serialize_with = "crate::schema::num")]
    pub value: f64,
    /// The terms in the model after the step.
    pub terms: Vec<String>,
}

fn can_drop(p: &Problem, set: &[usize], t: usize) -> bool {
    !p.candidates[t].forced && !set.iter().any(|&u| u != t && p.candidates[u].requires.contains(&t))
}

fn can_add(p: &Problem, set: &[usize], t: usize) -> bool {
    !set.contains(&t) && p.candidates[t].requires.iter().all(|r| set.contains(r))
}

fn names(p: &Problem, set: &[usize]) -> Vec<String> {
    let mut s = set.to_vec();
    s.sort_unstable();
    s.iter().map(|&t| p.candidates[t].text.clone()).collect()
}

fn criterion(p: &Problem, set: &[usize], c: InfoCriterion) -> f64 {
    let (rss, k) = p.rss(set);
    let crit = p.criteria(rss, k, 1.0);
    match c {
        InfoCriterion::Aic => crit.aic,
        InfoCriterion::Bic => crit.bic,
    }
}

/// Stepwise selection; returns the final set and the path.
pub fn stepwise(p: &Problem, direction: Direction, by: InfoCriterion) -> (Vec<usize>, Vec<Step>) {
    let mut set: Vec<usize> = match direction {
        Direction::Backward => (0..p.candidates.len()).collect(),
        _ => p.forced(),
    };
    let mut current = criterion(p, &set, by);
    let mut path = Vec::new();
    loop {
        let mut best: Option<(f64, &'static str, usize)> = None;
        if direction != Direction::Backward {
            for t in p.free() {
                if can_add(p, &set, t) {
                    let mut s = set.clone();
                    s.push(t);
                    let v = criterion(p, &s, by);
                    if v < current - 1e-10 && best.is_none_or(|b| v < b.0) {
                        best = Some((v, "add", t));
                    }
                }
            }
        }
        if direction != Direction::Forward {
            for &t in &set {
                if can_drop(p, &set, t) {
                    let s: Vec<usize> = set.iter().copied().filter(|&u| u != t).collect();
                    let v = criterion(p, &s, by);
                    if v < current - 1e-10 && best.is_none_or(|b| v < b.0) {
                        best = Some((v, "drop", t));
                    }
                }
            }
        }
        let Some((v, action, t)) = best else { break };
        if action == "add" {
            set.push(t);
        } else {
            set.retain(|&u| u != t);
        }
        current = v;
        path.push(Step { action, term: p.candidates[t].text.clone(), value: v, terms: names(p, &set) });
        if path.len() > 4 * p.candidates.len() + 4 {
            break; // cannot cycle with strict improvement, but stay bounded
        }
    }
    set.sort_unstable();
    (set, path)
}

/// Backward elimination by p-value at level `alpha`: from the full model,
/// repeatedly drop the removable term with the largest p-value of its joint
/// F test, while that p-value is above `alpha`.
pub fn backward_by_p(p: &Problem, alpha: f64) -> (Vec<usize>, Vec<Step>) {
    let mut set: Vec<usize> = (0..p.candidates.len()).collect();
    let mut path = Vec::new();
    loop {
        let (rss_full, k_full) = p.rss(&set);
        let df_res = p.n.saturating_sub(k_full);
        if df_res == 0 {
            break;
        }
        let mut worst: Option<(f64, usize)> = None;
        for &t in &set {
            if !can_drop(p, &set, t) {
                continue;
            }
            let s: Vec<usize> = set.iter().copied().filter(|&u| u != t).collect();
            let (rss, k) = p.rss(&s);
            let df = k_full.saturating_sub(k);
            let pv = if df == 0 {
                1.0
            } else {
                let f = ((rss - rss_full) / df as f64) / (rss_full / df_res as f64);
                FisherSnedecor::new(df as f64, df_res as f64).map_or(f64::NAN, |d| d.sf(f.max(0.0)))
            };
            if worst.is_none_or(|w| pv > w.0) {
                worst = Some((pv, t));
            }
        }
        match worst {
            Some((pv, t)) if pv > alpha => {
                set.retain(|&u| u != t);
                path.push(Step { action: "drop", term: p.candidates[t].text.clone(), value: pv, terms: names(p, &set) });
            }
            _ => break,
        }
    }
    set.sort_unstable();
    (set, path)
}
