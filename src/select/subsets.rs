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

/// No owner: the intercept's column, and y's.
const NONE: u32 = u32::MAX;

/// The R factors of the nodes on the current path of the tree, one per
/// depth, allocated once: depth d holds the R (column-major, leading
/// dimension `ld`, only the upper triangle and the first subdiagonal are
/// meaningful) and the owner of each column (candidate index, or [`NONE`]);
/// the last column is y.
struct Stack {
    ld: usize,
    r: Vec<f64>,
    owner: Vec<u32>,
    m: Vec<usize>,
    /// `valid[d]`: how many leading columns of depth d's buffer still equal
    /// its parent's (siblings are made in order of the deleted column, so
    /// each copies only what the one before it changed).
    valid: Vec<usize>,
}

impl Stack {
    fn new(root: &[f64], root_m: usize, owner: &[u32], depths: usize) -> Stack {
        let ld = root_m;
        let mut st =
            Stack { ld, r: vec![0.0; ld * ld * depths], owner: vec![NONE; ld * depths], m: vec![0; depths], valid: vec![0; depths + 1] };
        st.r[..ld * ld].copy_from_slice(root);
        st.owner[..ld].copy_from_slice(owner);
        st.m[0] = root_m;
        st
    }

    fn rss(&self, depth: usize) -> f64 {
        let (ld, m) = (self.ld, self.m[depth]);
        let v = self.r[depth * ld * ld + (m - 1) * ld + (m - 1)];
        v * v
    }

    /// Writes into depth + 1 the R of depth `depth` without term `t`'s
    /// columns: each column is deleted (the last one first) and the
    /// triangle restored with Givens rotations ([`givens_from`]). Only the
    /// part of each column down to its diagonal is copied: nothing below it
    /// is ever read.
    fn drop_term(&mut self, depth: usize, t: usize) {
        let ld = self.ld;
        let pm = self.m[depth];
        let t = t as u32;
        let (lo, hi) = self.r.split_at_mut((depth + 1) * ld * ld);
        let parent = &lo[depth * ld * ld..];
        let child = &mut hi[..ld * ld];
        let (olo, ohi) = self.owner.split_at_mut((depth + 1) * ld);
        let pown = &olo[depth * ld..depth * ld + pm];
        let cown = &mut ohi[..ld];
        // The grandchildren's buffer no longer follows this child.
        self.valid[depth + 2] = 0;
        let Some(q) = pown.iter().rposition(|&o| o == t) else {
            // Not in this node: the child is the parent.
            child[..pm * ld].copy_from_slice(&parent[..pm * ld]);
            cown[..pm].copy_from_slice(pown);
            self.m[depth + 1] = pm;
            self.valid[depth + 1] = 0;
            return;
        };
        // The first deletion copies the parent's columns but q (each down to
        // its diagonal, all that is read) into the child; the leading ones
        // still there from the previous sibling are kept.
        let mut m = pm - 1;
        for cn in self.valid[depth + 1].min(q)..m {
            let co = if cn < q { cn } else { cn + 1 };
            child[cn * ld..cn * ld + co + 1].copy_from_slice(&parent[co * ld..co * ld + co + 1]);
            cown[cn] = pown[co];
        }
        givens_from(child, ld, q, m);
        // The term's other columns (contiguous, just before q), in place.
        let mut first = q;
        while let Some(q) = cown[..m].iter().rposition(|&o| o == t) {
            m -= 1;
            for cn in q..m {
                child.copy_within((cn + 1) * ld..(cn + 1) * ld + cn + 2, cn * ld);
                cown[cn] = cown[cn + 1];
            }
            givens_from(child, ld, q, m);
            first = q;
        }
        self.m[depth + 1] = m;
        self.valid[depth + 1] = first;
    }
}

/// After column q of an upper triangle was deleted and the later columns
/// shifted left, restores the triangle of the first `m` columns (leading
/// dimension `ld`) with Givens rotations on rows c, c + 1 (Golub and Van
/// Loan 2013, §6.5.2), the rotation's length from [`hypot_ieee`].
#[inline]
fn givens_from(a: &mut [f64], ld: usize, q: usize, m: usize) {
    for c in q..m {
        let x = a[c * ld + c];
        let y = a[c * ld + c + 1];
        if y == 0.0 {
            continue;
        }
        let h = hypot_ieee(x, y);
        let (cs, sn) = (x / h, y / h);
        for j in c..m {
            let (u, v) = (a[j * ld + c], a[j * ld + c + 1]);
            a[j * ld + c] = cs * u + sn * v;
            a[j * ld + c + 1] = -sn * u + cs * v;
        }
    }
}

/// √(x² + y²) from IEEE operations only (correctly rounded ×, +, √), so
/// the native and the wasm builds get the same bits; `f64::hypot` comes
/// from the platform's libm (glibc natively, a different implementation in
/// wasm) and made the search's RSS differ between the CLI and the page in
/// the last digits. It was also a quarter of the search's time. Scaled by
/// the larger magnitude when the squares would overflow or underflow.
#[inline]
fn hypot_ieee(x: f64, y: f64) -> f64 {
    let h2 = x * x + y * y;
    if h2.is_finite() && h2 >= f64::MIN_POSITIVE {
        return h2.sqrt();
    }
    let s = x.abs().max(y.abs());
    if s == 0.0 || !s.is_finite() {
        return s;
    }
    let (a, b) = (x / s, y / s);
    s * (a * a + b * b).sqrt()
}

struct Search<'p, 'o> {
    p: &'p Problem,
    /// The free terms in search order; a node's undecided terms are
    /// `order[start..]`.
    order: Vec<usize>,
    /// Whether each candidate is in the current node's model.
    in_model: Vec<bool>,
    df: Vec<usize>,
    best_size: Vec<f64>,
    best_k: Vec<f64>,
    result: SubsetResult,
    stack: Stack,
    nodes: u64,
    covered: f64,
    total: f64,
    options: SubsetOptions<'o>,
    stopped: bool,
}

impl Search<'_, '_> {
    fn respects_hierarchy(&self) -> bool {
        let c = &self.p.candidates;
        (0..c.len()).filter(|&t| self.in_model[t]).all(|t| c[t].requires.iter().all(|&r| self.in_model[r]))
    }

    /// Records the current model (`size` terms, `k` coefficients).
    fn record(&mut self, size: usize, k: usize, rss: f64) {
        // Most nodes improve nothing: compare first, check the hierarchy
        // only for a model that would be recorded.
        if !(rss < self.best_size[size] || rss < self.best_k[k]) || !self.respects_hierarchy() {
            return;
        }
        let sorted: Vec<usize> = (0..self.in_model.len()).filter(|&t| self.in_model[t]).collect();
        if rss < self.best_size[size] {
            self.best_size[size] = rss;
            self.result.by_size[size] = Some((sorted.clone(), rss));
        }
        if rss < self.best_k[k] {
            self.best_k[k] = rss;
            self.result.by_k[k] = Some((sorted, rss));
        }
    }

    /// Visits the node at `depth` (its model: the forced terms, the fixed
    /// ones, and the undecided `order[start..]`; `size` terms and `k`
    /// coefficients in all) and its subtree.
    fn visit(&mut self, depth: usize, start: usize, size: usize, k: usize) {
        if self.stopped {
            return;
        }
        self.nodes += 1;
        self.result.examined += 1;
        let rss = self.stack.rss(depth);
        self.record(size, k, rss);
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
        let undecided = self.order.len() - start;
        if undecided == 0 {
            return;
        }
        // Sizes and coefficient counts still reachable below this node.
        let base = size - undecided;
        let (mut df_sum, mut df_min) = (0, usize::MAX);
        for &t in &self.order[start..] {
            df_sum += self.df[t];
            df_min = df_min.min(self.df[t]);
        }
        let (k_lo, k_hi) = (k - df_sum, k - df_min);
        let hopeful =
            (base..=base + undecided - 1).any(|s| rss < self.best_size[s]) || (k_lo..=k_hi).any(|kk| rss < self.best_k[kk]);
        if !hopeful {
            self.covered += 2f64.powi(undecided as i32) - 1.0;
            return;
        }
        for i in start..self.order.len() {
            let t = self.order[i];
            self.stack.drop_term(depth, t);
            self.in_model[t] = false;
            self.visit(depth + 1, i + 1, size - 1, k - self.df[t]);
            self.in_model[t] = true;
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
    let root_owner: Vec<u32> = owner[..qr.rank].iter().map(|o| o.map_or(NONE, |t| t as u32)).collect();
    let df: Vec<usize> = p.candidates.iter().map(|c| c.columns.len()).collect();
    let total_terms = p.candidates.len();
    let kmax = usize::from(p.intercept) + df.iter().sum::<usize>();
    let mut in_model = vec![false; total_terms];
    for &t in forced.iter().chain(order) {
        in_model[t] = true;
    }
    let size = forced.len() + order.len();
    let k = usize::from(p.intercept) + forced.iter().chain(order).map(|&t| df[t]).sum::<usize>();
    let mut s = Search {
        p,
        order: order.to_vec(),
        in_model,
        df,
        best_size: vec![f64::INFINITY; total_terms + 1],
        best_k: vec![f64::INFINITY; kmax + 1],
        result: SubsetResult { by_size: vec![None; total_terms + 1], by_k: vec![None; kmax + 1], examined: 0, complete: true },
        stack: Stack::new(&r, qr.rank, &root_owner, order.len() + 1),
        nodes: 0,
        covered: 0.0,
        total: 2f64.powi(order.len() as i32),
        options,
        stopped: false,
    };
    if qr.rank == m {
        s.visit(0, 0, size, k);
    } else {
        // More columns than rows: no exhaustive search.
        s.stopped = true;
    }
    s.result.complete = !s.stopped;
    s.result
}
