//! Exact best subsets over terms by branch and bound.
//!
//! The search walks the tree of Furnival and Wilson (1974, "Regressions by
//! leaps and bounds", Technometrics 16): a node is a model I ∪ U (terms fixed
//! in, and terms still undecided); its children drop one undecided term
//! each, the earlier undecided ones becoming fixed, so every subset is
//! visited once. Any model below a node is a subset of it, so its RSS is at
//! least the node's (least squares on fewer columns cannot fit better):
//! when that bound cannot beat the best model found so far of any size
//! still reachable, the whole subtree is skipped. Exact: the result equals
//! brute-force enumeration.
//!
//! Each node's R factor comes from its parent's by deleting the dropped
//! term's columns and restoring the triangle with Givens rotations
//! (Golub and Van Loan 2013, §6.5.2), O(p²) per node instead of a new
//! factorization. The y column rides along as the last column, so the
//! node's RSS is the square of R's last diagonal entry. Groups (a
//! category's dummies) enter and leave together; a subset that breaks the
//! hierarchy (x² without x) is walked through but never recorded.

use super::problem::Problem;
use crate::lstsq::dd::DD;
use crate::lstsq::qr_pivot::{factor_qr_pivoted, QrParams};

/// The best subsets found.
#[derive(Clone, Debug, Default)]
pub struct SubsetResult {
    /// By number of terms (forced ones included): the best set and its RSS.
    pub by_size: Vec<Option<(Vec<usize>, f64)>>,
    /// By number of coefficients k: the best set and its RSS.
    pub by_k: Vec<Option<(Vec<usize>, f64)>>,
    /// Models whose RSS was computed.
    pub examined: u64,
    /// False when stopped by the caller or by the node budget.
    pub complete: bool,
}

/// Tuning and control of the search.
pub struct SubsetOptions<'a> {
    /// Stop after this many nodes.
    pub max_nodes: u64,
    /// Called now and then with the share of subsets covered; returning
    /// false stops the search.
    pub progress: Option<&'a mut dyn FnMut(f64) -> bool>,
}

/// An R factor with the owner (candidate index, or none) of each column;
/// the last column is y.
#[derive(Clone)]
struct Node {
    m: usize,
    r: Vec<f64>, // column-major m × m
    owner: Vec<Option<usize>>,
}

impl Node {
    fn rss(&self) -> f64 {
        let v = self.r[(self.m - 1) * self.m + (self.m - 1)];
        v * v
    }

    /// Deletes column q and restores the upper triangle with Givens rotations.
    fn delete_column(&self, q: usize) -> Node {
        let m = self.m;
        let nm = m - 1;
        // Shift the columns after q left, keeping all m rows for now.
        let mut a = vec![0.0; m * nm];
        for (cn, co) in (0..m).filter(|&c| c != q).enumerate() {
            a[cn * m..cn * m + m].copy_from_slice(&self.r[co * m..co * m + m]);
        }
        for c in q..nm {
            let x = a[c * m + c];
            let y = a[c * m + c + 1];
            if y == 0.0 {
                continue;
            }
            let h = x.hypot(y);
            let (cs, sn) = (x / h, y / h);
            for j in c..nm {
                let (u, v) = (a[j * m + c], a[j * m + c + 1]);
                a[j * m + c] = cs * u + sn * v;
                a[j * m + c + 1] = -sn * u + cs * v;
            }
        }
        let mut r = vec![0.0; nm * nm];
        for j in 0..nm {
            r[j * nm..j * nm + nm].copy_from_slice(&a[j * m..j * m + nm]);
        }
        let mut owner = self.owner.clone();
        owner.remove(q);
        Node { m: nm, r, owner }
    }

    fn drop_term(&self, t: usize) -> Node {
        let mut node = self.clone();
        while let Some(q) = node.owner.iter().rposition(|o| *o == Some(t)) {
            node = node.delete_column(q);
        }
        node
    }
}

struct Search<'p, 'o> {
    p: &'p Problem,
    forced: Vec<usize>,
    df: Vec<usize>,
    best_size: Vec<f64>,
    best_k: Vec<f64>,
    result: SubsetResult,
    nodes: u64,
    covered: f64,
    total: f64,
    options: SubsetOptions<'o>,
    stopped: bool,
}

impl Search<'_, '_> {
    fn k_of(&self, terms: &[usize]) -> usize {
        usize::from(self.p.intercept) + terms.iter().map(|&t| self.df[t]).sum::<usize>()
    }

    fn record(&mut self, terms: &[usize], rss: f64) {
        if !self.p.respects_hierarchy(terms) {
            return;
        }
        let size = terms.len();
        let k = self.k_of(terms);
        let mut sorted = terms.to_vec();
        sorted.sort_unstable();
        if rss < self.best_size[size] {
            self.best_size[size] = rss;
            self.result.by_size[size] = Some((sorted.clone(), rss));
        }
        if rss < self.best_k[k] {
            self.best_k[k] = rss;
            self.result.by_k[k] = Some((sorted, rss));
        }
    }

    /// Visits the node (fixed ∪ undecided) and its subtree.
    fn visit(&mut self, node: &Node, fixed: &[usize], undecided: &[usize]) {
        if self.stopped {
            return;
        }
        self.nodes += 1;
        self.result.examined += 1;
        let rss = node.rss();
        let model: Vec<usize> = self.forced.iter().chain(fixed).chain(undecided).copied().collect();
        self.record(&model, rss);
        self.covered += 1.0;
        if self.nodes.is_multiple_of(4096) {
            if self.nodes >= self.options.max_nodes {
                self.stopped = true;
                return;
            }
            if let Some(cb) = self.options.progress.as_mut() {
                if !cb(self.covered / self.total) {
                    self.stopped = true;
                    return;
                }
            }
        }
        if undecided.is_empty() {
            return;
        }
        // Sizes and coefficient counts still reachable below this node.
        let base = self.forced.len() + fixed.len();
        let size_range = base..=(base + undecided.len() - 1);
        let k_lo = self.k_of(&self.forced.iter().chain(fixed).copied().collect::<Vec<_>>());
        let k_hi = self.k_of(&model) - undecided.iter().map(|&t| self.df[t]).min().unwrap_or(0);
        let hopeful = size_range.clone().any(|s| rss < self.best_size[s]) || (k_lo..=k_hi).any(|k| rss < self.best_k[k]);
        if !hopeful {
            self.covered += 2f64.powi(undecided.len() as i32) - 1.0;
            return;
        }
        for i in 0..undecided.len() {
            let child = node.drop_term(undecided[i]);
            let mut f = fixed.to_vec();
            f.extend_from_slice(&undecided[..i]);
            self.visit(&child, &f, &undecided[i + 1..]);
            if self.stopped {
                return;
            }
        }
    }
}

/// Finds the best subset of every size and every coefficient count over the
/// free candidates, in `order` (most important first prunes best).
pub fn best_subsets(p: &Problem, order: &[usize], options: SubsetOptions) -> SubsetResult {
    let forced = p.forced();
    let n = p.n;
    // Columns: intercept, forced, then the ordered free terms; y last.
    let mut owner: Vec<Option<usize>> = Vec::new();
    let mut cols: Vec<usize> = Vec::new();
    if p.intercept {
        owner.push(None);
        cols.push(0);
    }
    for &t in forced.iter().chain(order) {
        for &j in &p.candidates[t].columns {
            owner.push(Some(t));
            cols.push(j);
        }
    }
    let m = cols.len() + 1;
    let mut a: Vec<DD> = Vec::with_capacity(n * m);
    for &j in &cols {
        let c = &p.columns[j];
        let norm = (0..n).map(|i| c.get(i).to_f64().powi(2)).sum::<f64>().sqrt();
        let s = if norm > 0.0 { 2f64.powi(-(norm.log2().floor() as i32 + 1)) } else { 1.0 };
        a.extend((0..n).map(|i| c.get(i).scale(s)));
    }
    a.extend((0..n).map(|i| p.y.get(i)));
    owner.push(None);
    // Plain Householder QR (no deferral: a negative tolerance accepts every column).
    let qr = factor_qr_pivoted(a, n, m, QrParams { rank_tol: -1.0 });
    let rm = qr.r_matrix();
    let r: Vec<f64> = rm.iter().map(|v| v.to_f64()).collect();
    let root = Node { m: qr.rank, r, owner: owner[..qr.rank].to_vec() };
    let df: Vec<usize> = p.candidates.iter().map(|c| c.columns.len()).collect();
    let total_terms = p.candidates.len();
    let kmax = usize::from(p.intercept) + df.iter().sum::<usize>();
    let mut s = Search {
        p,
        forced,
        df,
        best_size: vec![f64::INFINITY; total_terms + 1],
        best_k: vec![f64::INFINITY; kmax + 1],
        result: SubsetResult { by_size: vec![None; total_terms + 1], by_k: vec![None; kmax + 1], examined: 0, complete: true },
        nodes: 0,
        covered: 0.0,
        total: 2f64.powi(order.len() as i32),
        options,
        stopped: false,
    };
    if root.m == m {
        s.visit(&root, &[], order);
    } else {
        // More columns than rows: no exhaustive search.
        s.stopped = true;
    }
    s.result.complete = !s.stopped;
    s.result
}
