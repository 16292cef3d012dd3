//! Variable selection. Against numpy: tests/data/reference/selection/ holds
//! brute-force enumerations of every allowed subset and cross-validation
//! with fixed folds, made by tests/reference/selection_reference.py. Against
//! our own brute force: the branch-and-bound search equals enumeration on
//! 200 seeded random problems with groups and hierarchy.

mod common;

use common::{data_dir, json_f64, read_json, Mismatches, Rng};
use plumbline::read::csv::read_csv;
use plumbline::select::problem::Problem;
use plumbline::select::subsets::{best_subsets, SubsetOptions};
use plumbline::select::{cv, select, Criterion, SelectOptions, SelectRequest};
use plumbline::table::{Column, ColumnData, Table};
use plumbline::terms::{parse_term, parse_terms};
use serde_json::Value;

fn problem(table: &Table, response: &str, candidates: &str, force: &str) -> Problem {
    Problem::new(table, &parse_term(response).unwrap(), &parse_terms(candidates).unwrap(), &parse_terms(force).unwrap(), true, None, &[]).unwrap()
}

fn request(response: &str, candidates: &str, force: &str) -> SelectRequest {
    SelectRequest {
        response: parse_term(response).unwrap(),
        candidates: parse_terms(candidates).unwrap(),
        forced: parse_terms(force).unwrap(),
        intercept: true,
        weights: None,
        exclude: Vec::new(),
    }
}

fn ids(p: &Problem, terms: &Value) -> Vec<usize> {
    let mut v: Vec<usize> = terms
        .as_array()
        .unwrap()
        .iter()
        .map(|t| p.candidates.iter().position(|c| c.text == t.as_str().unwrap()).unwrap_or_else(|| panic!("no candidate {t}")))
        .collect();
    v.sort_unstable();
    v
}

fn names(v: &Value) -> Vec<String> {
    let mut s: Vec<String> = v.as_array().unwrap().iter().map(|t| t.as_str().unwrap().to_string()).collect();
    s.sort();
    s
}

fn sorted(mut v: Vec<String>) -> Vec<String> {
    v.sort();
    v
}

#[test]
fn selection_matches_numpy_brute_force_and_cv() {
    for name in ["plain", "structured"] {
        let doc = read_json(&data_dir().join(format!("reference/selection/{name}.json")));
        let req = &doc["request"];
        let table = read_csv(&std::fs::read(data_dir().join(format!("reference/selection/{name}.csv"))).unwrap()).unwrap();
        let (resp, cands, force) = (req["response"].as_str().unwrap(), req["candidates"].as_str().unwrap(), req["force"].as_str().unwrap());
        let p = problem(&table, resp, cands, force);
        let mut m = Mismatches::default();
        let sigma2 = json_f64(&doc["sigma2_full"]);
        // Every subset's criteria.
        for s in doc["subsets"].as_array().unwrap() {
            let set = ids(&p, &s["terms"]);
            let (rss, k) = p.rss(&set);
            assert_eq!(k as u64, s["k"].as_u64().unwrap(), "{name}: k of {}", s["terms"]);
            let c = p.criteria(rss, k, sigma2);
            let label = s["terms"].to_string();
            m.check(&format!("{label} rss"), c.rss, json_f64(&s["rss"]), 1e-10, 0.0);
            m.check(&format!("{label} adj_r2"), c.adj_r_squared, json_f64(&s["adj_r2"]), 1e-10, 1e-14);
            m.check(&format!("{label} aic"), c.aic, json_f64(&s["aic"]), 1e-11, 0.0);
            m.check(&format!("{label} bic"), c.bic, json_f64(&s["bic"]), 1e-11, 0.0);
            m.check(&format!("{label} cp"), c.cp, json_f64(&s["cp"]), 1e-9, 1e-9);
        }
        // The exhaustive search's best of each size.
        let order: Vec<usize> = p.free();
        let r = best_subsets(&p, &order, SubsetOptions { max_nodes: u64::MAX, progress: None });
        assert!(r.complete);
        for b in doc["by_size"].as_array().unwrap() {
            let size = b["size"].as_u64().unwrap() as usize;
            let (set, rss) = r.by_size[size].clone().unwrap_or_else(|| panic!("{name}: no best of size {size}"));
            assert_eq!(set, ids(&p, &b["terms"]), "{name}: best of size {size}");
            m.check(&format!("best rss of size {size}"), rss, json_f64(&b["rss"]), 1e-9, 0.0);
        }
        // The winners through the whole selection.
        for (by, key) in [(Criterion::AdjR2, "adj_r2"), (Criterion::Aic, "aic"), (Criterion::Bic, "bic"), (Criterion::Cp, "cp")] {
            let o = SelectOptions { by, ..SelectOptions::default() };
            let rep = select(&table, &request(resp, cands, force), &o, None).unwrap();
            let mut want = names(&doc["best"][key]["terms"]);
            want.retain(|t| !rep.forced.contains(t));
            let got: Vec<String> = sorted(rep.best.terms.iter().filter(|t| !rep.forced.contains(t)).cloned().collect());
            assert_eq!(got, want, "{name}: best by {key}");
            // The refit's AIC and BIC are the fit module's own and agree with numpy.
            if key == "aic" {
                m.check("refit aic", rep.best.fit.aic, json_f64(&doc["best"]["aic"]["value"]), 1e-11, 0.0);
            }
            if key == "bic" {
                m.check("refit bic", rep.best.fit.bic, json_f64(&doc["best"]["bic"]["value"]), 1e-11, 0.0);
            }
        }
        // Cross-validation with numpy's folds.
        let folds: Vec<usize> = doc["folds"].as_array().unwrap().iter().map(|v| v.as_u64().unwrap() as usize).collect();
        for c in doc["cv"].as_array().unwrap() {
            let set = ids(&p, &c["terms"]);
            let e = cv::cv_error(&p, &set, &folds);
            m.check(&format!("cv rmse {}", c["terms"]), e.rmse, json_f64(&c["rmse"]), 1e-10, 0.0);
            m.check(&format!("cv mae {}", c["terms"]), e.mae, json_f64(&c["mae"]), 1e-10, 0.0);
        }
        let all: Vec<usize> = (0..p.candidates.len()).collect();
        let (press, loo) = cv::press(&p, &all);
        // The full model's row in the comparison carries the same PRESS.
        let rep = select(&table, &request(resp, cands, force), &SelectOptions::default(), None).unwrap();
        if let Some(full) = rep.comparison.iter().find(|c| c.terms.len() == p.candidates.len()) {
            m.check("press in the comparison", full.press, json_f64(&doc["press"]), 1e-10, 0.0);
        }
        m.check("press", press, json_f64(&doc["press"]), 1e-10, 0.0);
        m.check("loo rmse", loo, json_f64(&doc["loo_rmse"]), 1e-10, 0.0);
        m.assert_none(name);
    }
}

/// A random problem: numeric x1..xq, a text category g, and candidates
/// with squares (which need their base) and a product.
fn random_problem(seed: u64) -> (Table, String, String) {
    let mut rng = Rng::new(seed);
    let n = 30 + (rng.next_u64() % 40) as usize;
    let q = 2 + (rng.next_u64() % 9) as usize;
    let mut cols: Vec<Column> = Vec::new();
    let mut y = vec![0.0; n];
    for j in 0..q {
        let x: Vec<f64> = (0..n).map(|_| rng.normal()).collect();
        let b = if rng.uniform() < 0.5 { rng.normal() * 0.7 } else { 0.0 };
        for i in 0..n {
            y[i] += b * x[i] + 0.1 * x[i] * x[i];
        }
        cols.push(Column::new(format!("x{}", j + 1), ColumnData::Numeric(x.into())));
    }
    let levels = ["p", "q", "r"];
    let g: Vec<Option<String>> = (0..n).map(|i| Some(levels[(i + seed as usize) % 3].to_string())).collect();
    for (i, v) in y.iter_mut().enumerate() {
        *v += rng.normal() + if i % 3 == 0 { 0.5 } else { 0.0 };
    }
    cols.insert(0, Column::new("y", ColumnData::Numeric(y.into())));
    cols.push(Column::new("g", ColumnData::Text(g)));
    let table = Table { columns: cols, source_rows: (2..n + 2).collect(), sheet: None, warnings: Vec::new() };
    let mut cands: Vec<String> = (1..=q).map(|j| format!("x{j}")).collect();
    let extra = (rng.next_u64() % 4) as usize;
    for j in 1..=extra.min(q) {
        cands.push(format!("x{j}^2"));
    }
    if q >= 2 && rng.uniform() < 0.7 {
        cands.push("x1*x2".into());
    }
    if rng.uniform() < 0.7 {
        cands.push("cat(g)".into());
    }
    let force = if rng.uniform() < 0.3 { "x1".to_string() } else { String::new() };
    (table, cands.join(", "), force)
}

/// Every subset of the free terms, by brute force.
fn brute_force(p: &Problem) -> (Vec<f64>, Vec<f64>) {
    let free = p.free();
    let forced = p.forced();
    let mut by_size = vec![f64::INFINITY; p.candidates.len() + 1];
    let kmax = 1 + p.candidates.iter().map(|c| c.columns.len()).sum::<usize>();
    let mut by_k = vec![f64::INFINITY; kmax + 1];
    for mask in 0u32..(1 << free.len()) {
        let mut set = forced.clone();
        for (b, &t) in free.iter().enumerate() {
            if mask & (1 << b) != 0 {
                set.push(t);
            }
        }
        if !p.respects_hierarchy(&set) {
            continue;
        }
        let (rss, _) = p.rss(&set);
        let k = p.columns_of(&set).len();
        by_size[set.len()] = by_size[set.len()].min(rss);
        by_k[k] = by_k[k].min(rss);
    }
    (by_size, by_k)
}

#[test]
fn branch_and_bound_equals_brute_force_on_200_problems() {
    let mut max_terms = 0;
    for seed in 0..200u64 {
        let (table, cands, force) = random_problem(seed * 7919 + 3);
        let p = problem(&table, "y", &cands, &force);
        max_terms = max_terms.max(p.free().len());
        let mut order = p.free();
        // Search in a scrambled order too: exactness must not depend on it.
        if seed % 2 == 1 {
            order.reverse();
        }
        let r = best_subsets(&p, &order, SubsetOptions { max_nodes: u64::MAX, progress: None });
        assert!(r.complete);
        let (bs, bk) = brute_force(&p);
        for (size, want) in bs.iter().enumerate() {
            let got = r.by_size[size].as_ref().map_or(f64::INFINITY, |x| x.1);
            assert!(
                (got == *want) || ((got - want).abs() <= 1e-9 * want.abs()),
                "seed {seed} ({cands}; force {force}): size {size}: search {got}, brute force {want}"
            );
        }
        for (k, want) in bk.iter().enumerate() {
            let got = r.by_k[k].as_ref().map_or(f64::INFINITY, |x| x.1);
            assert!((got == *want) || ((got - want).abs() <= 1e-9 * want.abs()), "seed {seed}: k {k}: search {got}, brute force {want}");
        }
    }
    assert!(max_terms >= 13, "the random problems should reach at least 13 terms, reached {max_terms}");
}

/// A constructed example in which backward elimination at 5% drops a term
/// that adjusted R² keeps: x2's t statistic is set to exactly 1.5 (adjusted
/// R² keeps a term whenever |t| > 1; the 5% test needs |t| > about 2).
#[test]
fn p_value_pruning_drops_a_term_that_adjusted_r2_keeps() {
    let n = 40;
    let mut rng = Rng::new(2024);
    let x1: Vec<f64> = (0..n).map(|_| rng.normal()).collect();
    let x2: Vec<f64> = (0..n).map(|_| rng.normal()).collect();
    let mut e: Vec<f64> = (0..n).map(|_| rng.normal()).collect();
    // Make e orthogonal to 1, x1 and x2 (Gram–Schmidt against the design).
    let basis = {
        let mut b: Vec<Vec<f64>> = Vec::new();
        for v in [vec![1.0; n], x1.clone(), x2.clone()] {
            let mut u = v.clone();
            for w in &b {
                let d: f64 = u.iter().zip(w).map(|(a, c)| a * c).sum();
                for i in 0..n {
                    u[i] -= d * w[i];
                }
            }
            let norm = u.iter().map(|a| a * a).sum::<f64>().sqrt();
            b.push(u.iter().map(|a| a / norm).collect());
        }
        b
    };
    for w in &basis {
        let d: f64 = e.iter().zip(w).map(|(a, c)| a * c).sum();
        for i in 0..n {
            e[i] -= d * w[i];
        }
    }
    // With y = 2·x1 + b·x2 + e, the fit returns b exactly and σ̂ from e;
    // choose b so that t(x2) = 1.5.
    let base = Table::from_numeric(vec![("y".into(), e.clone()), ("x1".into(), x1.clone()), ("x2".into(), x2.clone())]);
    let probe = common::fit_table(&base, "y", "x1, x2", true, Default::default()).unwrap().report;
    let se = probe.coefficients[2].std_error;
    let b = 1.5 * se;
    let y: Vec<f64> = (0..n).map(|i| 2.0 * x1[i] + b * x2[i] + e[i]).collect();
    let table = Table::from_numeric(vec![("y".into(), y), ("x1".into(), x1), ("x2".into(), x2)]);
    let fit = common::fit_table(&table, "y", "x1, x2", true, Default::default()).unwrap().report;
    assert!((fit.coefficients[2].t - 1.5).abs() < 1e-9, "t = {}", fit.coefficients[2].t);
    let run = |by| {
        let o = SelectOptions { by, ..SelectOptions::default() };
        select(&table, &request("y", "x1, x2", ""), &o, None).unwrap()
    };
    let by_p = run(Criterion::PValue);
    let by_adj = run(Criterion::AdjR2);
    assert_eq!(by_p.best.terms, ["x1"], "p-value pruning drops x2 (p = {})", fit.coefficients[2].p_value);
    assert_eq!(by_p.p_value_route.path.len(), 1);
    assert_eq!(by_adj.best.terms, ["x1", "x2"], "adjusted R² keeps x2");
    assert!(by_adj.recommended.reason.contains("Pruning by p-value would keep a different set"), "{}", by_adj.recommended.reason);
}

/// PRESS from the hat matrix equals explicit leave-one-out refits.
#[test]
fn press_equals_explicit_leave_one_out_refits() {
    let (table, cands, _) = random_problem(11);
    let p = problem(&table, "y", &cands, "");
    let all: Vec<usize> = (0..p.candidates.len()).collect();
    let (press, _) = cv::press(&p, &all);
    let cols = p.columns_of(&all);
    let mut explicit = 0.0;
    for i in 0..p.n {
        let rows: Vec<usize> = (0..p.n).filter(|&r| r != i).collect();
        let sol = p.solve(&all, Some(&rows));
        let pred: f64 = cols.iter().enumerate().map(|(a, &j)| if sol.coef[a].is_finite() { sol.coef[a] * p.columns[j].get(i).to_f64() } else { 0.0 }).sum();
        explicit += (p.y.get(i).to_f64() - pred).powi(2);
    }
    assert!((press - explicit).abs() <= 1e-9 * explicit, "PRESS {press} vs leave-one-out {explicit}");
}

/// The same seed gives the same folds, the same CV and the same stability.
#[test]
fn cross_validation_and_stability_repeat_for_a_seed() {
    let (table, cands, _) = random_problem(5);
    let o = SelectOptions { by: Criterion::Cv, stability: Some(25), seed: 77, ..SelectOptions::default() };
    let run = || select(&table, &request("y", &cands, ""), &o, None).unwrap();
    let (a, b) = (run(), run());
    assert_eq!(serde_json::to_value(&a.comparison).unwrap(), serde_json::to_value(&b.comparison).unwrap());
    assert_eq!(serde_json::to_value(&a.stability).unwrap(), serde_json::to_value(&b.stability).unwrap());
    assert_eq!(a.stability.as_ref().unwrap().resamples, 25);
    assert_eq!(cv::folds(50, 5, 77), cv::folds(50, 5, 77));
    let other = SelectOptions { seed: 78, ..o.clone() };
    let c = select(&table, &request("y", &cands, ""), &other, None).unwrap();
    assert_ne!(
        serde_json::to_value(&a.stability).unwrap(),
        serde_json::to_value(&c.stability).unwrap(),
        "another seed draws other resamples"
    );
}

/// The search reports progress and can be stopped.
#[test]
fn the_search_reports_progress_and_stops_when_asked() {
    let (table, _, _) = random_problem(3);
    let mut cols = table.columns.clone();
    let n = table.n_rows();
    let mut rng = Rng::new(99);
    for j in 0..18 {
        cols.push(Column::new(format!("z{j}"), ColumnData::Numeric((0..n).map(|_| rng.normal()).collect::<Vec<f64>>().into())));
    }
    let t = Table { columns: cols, ..table };
    let cands: Vec<String> = (0..18).map(|j| format!("z{j}")).collect();
    let mut calls = 0;
    let mut stop = |share: f64| {
        assert!((0.0..=1.0).contains(&share));
        calls += 1;
        calls < 3
    };
    let o = SelectOptions { max_nodes: u64::MAX, ..SelectOptions::default() };
    let r = select(&t, &request("y", &cands.join(", "), ""), &o, Some(&mut stop));
    assert_eq!(r.unwrap_err(), plumbline::select::SelectError::Cancelled);
    assert_eq!(calls, 3);
}

/// A category level seen in one row only is missed by about a third of the
/// bootstrap resamples (the chance a row is never drawn in n draws is
/// (1 − 1/n)ⁿ ≈ e⁻¹); in those its dummy is all zeros and the search cannot
/// run, so they are left out and counted, and the shares stay proportions.
#[test]
fn resamples_that_miss_a_rare_level_are_left_out_and_counted() {
    let mut rng = Rng::new(404);
    let n = 60;
    let x: Vec<f64> = (0..n).map(|_| rng.normal()).collect();
    let z: Vec<f64> = (0..n).map(|_| rng.normal()).collect();
    let site: Vec<Option<String>> = (0..n).map(|i| Some(if i == 7 { "rare" } else if i % 2 == 0 { "a" } else { "b" }.to_string())).collect();
    let y: Vec<f64> = (0..n).map(|i| 1.0 + 2.0 * x[i] + rng.normal()).collect();
    let table = Table {
        columns: vec![
            Column::new("y", ColumnData::Numeric(y.into())),
            Column::new("x", ColumnData::Numeric(x.into())),
            Column::new("z", ColumnData::Numeric(z.into())),
            Column::new("site", ColumnData::Text(site)),
        ],
        source_rows: (2..n + 2).collect(),
        sheet: None,
        warnings: Vec::new(),
    };
    let o = SelectOptions { stability: Some(60), seed: 3, ..SelectOptions::default() };
    let r = select(&table, &request("y", "x, z, cat(site)", ""), &o, None).unwrap();
    let st = r.stability.as_ref().unwrap();
    assert_eq!(st.resamples + st.skipped, 60);
    // About 60·e⁻¹ ≈ 22 miss the row; far from 0 and from 60 either way.
    assert!((8..=40).contains(&st.skipped), "{} skipped", st.skipped);
    assert!((0.0..=1.0).contains(&st.winner_share), "{}", st.winner_share);
    let share_x = st.terms.iter().find(|t| t.term == "x").unwrap().share;
    assert!(share_x > 0.9, "x carries the effect: chosen in {share_x} of the resamples");
    assert!(st.terms.iter().all(|t| (0.0..=1.0).contains(&t.share)), "{:?}", st.terms);
}
