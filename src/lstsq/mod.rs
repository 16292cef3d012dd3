//! The least-squares kernel: minimises ‖y − Xβ‖₂ and reports how it did it.
//!
//! The path is chosen by accuracy, not by habit:
//!
//! 1. Every column, and the response, is multiplied by a power of two that
//!    brings its 2-norm into [0.5, 1) (exact, so no digit is lost), which
//!    removes the bad conditioning that comes only from units (years next
//!    to rates) and keeps sums of squares of data near 1e±300 inside the
//!    range of `f64`. Results are scaled back exactly; the scaled residual
//!    sum of squares and (XᵀX)⁻¹ of the scaled columns are kept as well, so
//!    that standard errors and tests stay finite when RSS itself (≈ 1e600)
//!    is not representable.
//! 2. A double-precision Householder QR with pivoting by deferral
//!    ([`qr_pivot`]) finds the rank and estimates the 1-norm condition
//!    number κ of the scaled R from R⁻¹.
//! 3. The first-order perturbation bound for least squares,
//!    u·(κ + κ²·tan θ) with tan θ = ‖r‖/‖Xβ‖ (Wedin 1973; Higham, *Accuracy
//!    and Stability of Numerical Algorithms*, 2nd ed. 2002, §20.1), says how
//!    many digits double precision can promise. If fewer than
//!    [`LstsqOptions::target_digits`], the factorization and the solve are
//!    redone in double-double arithmetic ([`dd`]), on the same inputs
//!    carried to double-double (a design column built as x¹⁰ keeps the
//!    digits that rounding to `f64` would drop).
//! 4. Either way, the solution is refined twice (Golub and Wilkinson 1966):
//!    the residual y − Xβ is accumulated in double-double from the inputs
//!    and the correction solved with the same factorization. This lifts the
//!    accuracy of small coefficients, which the normwise bound does not
//!    protect, to the limit the `f64` input data allow.
//! 5. Residuals and the residual sum of squares come from that
//!    double-double accumulation, so an exact fit reports zero.

pub mod dd;
pub mod qr_pivot;
pub mod real;
pub mod rows;
pub mod tsqr;

use dd::DD;
use qr_pivot::{factor_qr_pivoted, PivotedQr, QrParams};
use real::Real;
use tsqr::TsqrParams;
use crate::values::Values;
use serde::Serialize;

/// A column held as `hi + lo` double-double parts; `lo` is absent when
/// the column is exactly representable in `f64` (raw data).
#[derive(Clone, Debug, PartialEq)]
pub struct DdColumn {
    pub hi: Values,
    pub lo: Option<Values>,
}

impl DdColumn {
    pub fn from_f64(values: Vec<f64>) -> DdColumn {
        DdColumn { hi: values.into(), lo: None }
    }

    /// A column of exact `f64` values that shares `values`' storage.
    pub fn shared(values: &Values) -> DdColumn {
        DdColumn { hi: values.clone(), lo: None }
    }

    /// Builds a column from double-double values, dropping an all-zero low part.
    pub fn from_dd(values: &[DD]) -> DdColumn {
        let hi: Values = values.iter().map(|v| v.hi).collect();
        let lo = if values.iter().all(|v| v.lo == 0.0) { None } else { Some(values.iter().map(|v| v.lo).collect()) };
        DdColumn { hi, lo }
    }

    pub fn len(&self) -> usize {
        self.hi.len()
    }

    pub fn is_empty(&self) -> bool {
        self.hi.is_empty()
    }

    #[inline]
    pub fn get(&self, i: usize) -> DD {
        match &self.lo {
            Some(lo) => DD { hi: self.hi[i], lo: lo[i] },
            None => DD::from_f64(self.hi[i]),
        }
    }
}

/// Which arithmetic produced the solution.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum SolverPath {
    /// Householder QR in IEEE double precision, with iterative refinement
    /// whose residuals are accumulated in double-double.
    Double,
    /// Householder QR redone in double-double arithmetic (about 32 digits).
    DoubleDouble,
}

impl SolverPath {
    pub fn describe(self) -> &'static str {
        match self {
            SolverPath::Double => "double precision, refined with residuals accumulated in double-double",
            SolverPath::DoubleDouble => "double-double (about 32 digits), because double precision could not promise the target digits",
        }
    }
}

/// Tuning for [`solve_lstsq`].
#[derive(Clone, Copy, Debug)]
pub struct LstsqOptions {
    /// A column whose distance from the span of the earlier columns is at
    /// most `rank_tol` times its own norm is aliased. Default 1e-12: four
    /// orders of magnitude above the rounding noise of data held in `f64`
    /// (1.1e-16 relative), and far below any real design's dependence (the
    /// hardest NIST StRD design, Filip, has 5.2e-8).
    pub rank_tol: f64,
    /// The number of correct significant digits the solution must be able to
    /// promise before the double-precision result is accepted. Default 13:
    /// the 12 digits we promise, plus one for the looseness of the bound.
    pub target_digits: f64,
    /// Forces one path (for testing that both agree); `None` chooses.
    pub force_path: Option<SolverPath>,
    /// Threads the passes over the rows may use; 0 leaves it to the
    /// machine ([`rows::machine_threads`]). The result is the same bits
    /// whatever the number.
    pub threads: usize,
}

impl Default for LstsqOptions {
    fn default() -> Self {
        LstsqOptions { rank_tol: 1e-12, target_digits: 13.0, force_path: None, threads: 0 }
    }
}

/// The least-squares solution and everything the factorization learnt.
#[derive(Clone, Debug)]
pub struct LstsqSolution {
    pub rows: usize,
    pub cols: usize,
    /// β, with NaN for aliased columns.
    pub coef: Vec<f64>,
    /// β in double-double (zero for aliased columns).
    pub coef_dd: Vec<DD>,
    /// Input columns found linearly dependent on earlier ones.
    pub aliased: Vec<usize>,
    pub rank: usize,
    /// y − Xβ, accumulated to about twice double precision.
    pub residuals: Vec<DD>,
    /// Σ residual², in double-double (infinite or zero when it lies
    /// beyond the range of `f64`; see `rss_scaled`).
    pub rss: DD,
    /// The power of two the response was multiplied by before solving.
    pub y_scale: f64,
    /// Σ (residual · `y_scale`)², always within range for finite data.
    pub rss_scaled: DD,
    /// (XᵀX)⁻¹, `cols x cols` row-major, NaN in aliased rows and columns.
    /// Infinite or zero entries for columns near 1e±300: the standard
    /// errors use [`LstsqSolution::se_factor`] and [`LstsqSolution::unit_xtx_inv`].
    pub xtx_inv: Vec<f64>,
    /// 1-norm condition number of the column-scaled design (from R).
    pub condition: f64,
    /// Digits the double-precision pass could promise (the bound above).
    pub double_digits: f64,
    pub path: SolverPath,
    pub rank_tol: f64,
    /// The columns solved (shared with the caller's, not copied): rows of
    /// Q, the leverages and the sandwich are computed from them and R⁻¹
    /// when asked for, so no `rows x rank` Q is kept.
    system: Vec<DdColumn>,
    /// R⁻¹ of the scaled accepted columns, `rank x rank` column-major, in
    /// the arithmetic of the path (its `lo` parts are zero on the double path).
    r_inv: Vec<DD>,
    /// Diagonal of the hat matrix, computed on first use.
    leverage: std::sync::OnceLock<Vec<f64>>,
    /// (XᵀX)⁻¹ of the scaled columns, `cols x cols` row-major, NaN in
    /// aliased rows and columns.
    unit_xtx_inv: Vec<f64>,
    accepted: Vec<usize>,
    /// The power of two each input column was multiplied by.
    scales: Vec<f64>,
    /// Threads the passes over the rows may use.
    threads: usize,
}

/// Solves min ‖y − Xβ‖₂ for the columns `x` (all of length `y.len()`).
///
/// The columns are kept by the solution (cheaply: [`DdColumn`] shares its
/// storage) for the per-row results computed on demand.
pub fn solve_lstsq(x: &[DdColumn], y: &DdColumn, options: &LstsqOptions) -> LstsqSolution {
    let n = y.len();
    let p = x.len();
    let scales: Vec<f64> = x.iter().map(|c| pow2_scale(&c.hi)).collect();
    let y_scale = pow2_scale(&y.hi);
    let y = &DdColumn {
        hi: y.hi.iter().map(|v| v * y_scale).collect(),
        lo: y.lo.as_ref().map(|lo| lo.iter().map(|v| v * y_scale).collect()),
    };
    let params = QrParams { rank_tol: options.rank_tol };

    // The R factor of the scaled [X y] in double precision, a block of rows
    // at a time; then the pivoted QR of its p × p part, which aliases the
    // columns the same rule would alias in X (RᵀR = XᵀX).
    let refs: Vec<&DdColumn> = x.iter().collect();
    let threads = if options.threads == 0 { rows::machine_threads() } else { options.threads };
    let r_xy = tsqr::factor_system::<f64>(&refs, y, &scales, 1.0, TsqrParams::default(), threads);
    let mut rx = vec![0.0; p * p];
    for j in 0..p {
        for i in 0..=j {
            rx[j * p + i] = r_xy.get(i, j);
        }
    }
    let fast = factor_qr_pivoted(rx, p, p, params);
    let mut qty: Vec<f64> = (0..p).map(|i| r_xy.get(i, p)).collect();
    fast.apply_qt(&mut qty);
    let r_inv_fast = fast.invert_upper();
    let condition_fast = condition_1(&fast, &r_inv_fast);
    let fitted_norm = qr_pivot::norm(&qty[..fast.rank]);
    let beyond = r_xy.get(p, p);
    let resid_norm = (beyond * beyond + qr_pivot::norm(&qty[fast.rank..]).powi(2)).sqrt();
    let tan_theta = if fitted_norm > 0.0 { resid_norm / fitted_norm } else { f64::INFINITY };
    let bound = <f64 as Real>::EPS * (condition_fast + condition_fast * condition_fast * tan_theta);
    let double_digits = if fast.rank == 0 { f64::INFINITY } else { -bound.log10() };

    let path = options.force_path.unwrap_or(if double_digits >= options.target_digits {
        SolverPath::Double
    } else {
        SolverPath::DoubleDouble
    });
    let (solved, condition) = match path {
        SolverPath::Double => (solve_double(x, y, fast, &qty, r_inv_fast, &scales, threads), condition_fast),
        SolverPath::DoubleDouble => {
            let slow = factor_qr_pivoted(scaled_matrix::<DD>(x, &scales, n), n, p, params);
            let r_inv = slow.invert_upper();
            let condition = condition_1(&slow, &r_inv);
            (solve_extended(x, y, slow, r_inv, &scales), condition)
        }
    };
    assemble(x, y, y_scale, solved, condition, double_digits, path, options, scales, threads)
}

/// What either path hands to [`assemble`]: β of the scaled response (in
/// the columns' own units), its residuals, and the factorization's facts.
struct Solved {
    coef_dd: Vec<DD>,
    residuals: Vec<DD>,
    accepted: Vec<usize>,
    aliased: Vec<usize>,
    r_inv: Vec<DD>,
}

/// The double path: β from the R factor, then refinement by the corrected
/// semi-normal equations (Björck 1987, "Stability analysis of the method
/// of seminormal equations for linear least squares problems", Linear
/// Algebra Appl. 88/89): with r = y − Xβ and g = Xᵀr accumulated to about
/// twice double precision, RᵀRδ = g needs R only, not Q. The path is taken
/// only where the bound promises the target digits (κ below about 10³ for
/// the default), where the semi-normal equations converge at once.
fn solve_double(x: &[DdColumn], y: &DdColumn, qr: PivotedQr<f64>, qty: &[f64], r_inv: Vec<f64>, scales: &[f64], threads: usize) -> Solved {
    let p = x.len();
    let k = qr.rank;
    let beta = qr.solve_upper(qty);
    let mut coef_dd = vec![DD::ZERO; p];
    for (pos, &j) in qr.accepted.iter().enumerate() {
        coef_dd[j] = DD::from_f64(beta[pos]).scale(scales[j]);
    }
    let r_at = |i: usize, j: usize| qr.r(i, j);
    for _ in 0..REFINEMENT_STEPS {
        let (_, g) = residual_pass(x, y, &qr.accepted, &coef_dd, scales, true, threads);
        let mut z: Vec<f64> = g.iter().map(|v| v.to_f64()).collect();
        tsqr::solve_semi_normal(k, r_at, &mut z);
        for (pos, &j) in qr.accepted.iter().enumerate() {
            coef_dd[j] = coef_dd[j] + DD::from_f64(z[pos]).scale(scales[j]);
        }
    }
    let (residuals, _) = residual_pass(x, y, &qr.accepted, &coef_dd, scales, false, threads);
    let (coef_dd, residuals) = prefer_rounded(x, y, &qr.accepted, coef_dd, residuals, scales, threads);
    Solved { coef_dd, residuals, r_inv: r_inv.into_iter().map(DD::from_f64).collect(), accepted: qr.accepted, aliased: qr.aliased }
}

/// The double-double path: the whole scaled matrix factored by Householder
/// QR in double-double, refined twice with Qᵀr (Golub and Wilkinson 1966).
fn solve_extended(x: &[DdColumn], y: &DdColumn, qr: PivotedQr<DD>, r_inv: Vec<DD>, scales: &[f64]) -> Solved {
    let n = y.len();
    let p = x.len();
    let mut qty: Vec<DD> = (0..n).map(|i| y.get(i)).collect();
    qr.apply_qt(&mut qty);
    let beta_scaled = qr.solve_upper(&qty);
    let mut coef_dd = vec![DD::ZERO; p];
    for (k, &j) in qr.accepted.iter().enumerate() {
        coef_dd[j] = beta_scaled[k].scale(scales[j]);
    }
    let mut residuals = residuals_dd(x, y, &qr.accepted, &coef_dd);
    for _ in 0..REFINEMENT_STEPS {
        let mut qtr = residuals.clone();
        qr.apply_qt(&mut qtr);
        let delta = qr.solve_upper(&qtr);
        for (k, &j) in qr.accepted.iter().enumerate() {
            coef_dd[j] = coef_dd[j] + delta[k].scale(scales[j]);
        }
        residuals = residuals_dd(x, y, &qr.accepted, &coef_dd);
    }
    let rounded: Vec<DD> = coef_dd.iter().map(|c| DD::from_f64(c.to_f64())).collect();
    let rounded_residuals = residuals_dd(x, y, &qr.accepted, &rounded);
    if sum_sq(&rounded_residuals) <= sum_sq(&residuals) {
        coef_dd = rounded;
        residuals = rounded_residuals;
    }
    Solved { coef_dd, residuals, r_inv, accepted: qr.accepted, aliased: qr.aliased }
}

/// If the coefficients rounded to f64 fit at least as well (an exact fit
/// with representable coefficients), keeps them: the residuals are then
/// exactly zero instead of 1e-90-sized remnants.
///
/// Skipped (same result, one pass fewer) when the scaled RSS exceeds
/// 1e-12: rounding moves the fit by ‖XΔ‖² ≈ (2⁻⁵³‖Xβ‖)², about 1e-33,
/// which raises an RSS that large by far more than its double-double
/// rounding (1e-44), so the rounded coefficients never fit as well.
fn prefer_rounded(x: &[DdColumn], y: &DdColumn, accepted: &[usize], coef_dd: Vec<DD>, residuals: Vec<DD>, scales: &[f64], threads: usize) -> (Vec<DD>, Vec<DD>) {
    if sum_sq(&residuals).hi > 1e-12 {
        return (coef_dd, residuals);
    }
    let rounded: Vec<DD> = coef_dd.iter().map(|c| DD::from_f64(c.to_f64())).collect();
    let (rounded_residuals, _) = residual_pass(x, y, accepted, &rounded, scales, false, threads);
    if sum_sq(&rounded_residuals) <= sum_sq(&residuals) {
        (rounded, rounded_residuals)
    } else {
        (coef_dd, residuals)
    }
}

/// One pass over the rows: r = y − Xβ over the accepted columns and, with
/// `gradient`, g = X̃ᵀr for the scaled accepted columns X̃, both to about
/// twice double precision ([`rows`]). β is in the columns' own units.
/// Chunks of [`rows::CHUNK_ROWS`] run on up to `threads` threads; their
/// sums are added in chunk order.
fn residual_pass(x: &[DdColumn], y: &DdColumn, accepted: &[usize], coef: &[DD], scales: &[f64], gradient: bool, threads: usize) -> (Vec<DD>, Vec<DD>) {
    let n = y.len();
    // Coefficients of the scaled columns (exact: the scales are powers of two).
    let terms: Vec<rows::Term> =
        accepted.iter().map(|&j| rows::Term { col: &x[j], scale: scales[j], coef: coef[j].scale(1.0 / scales[j]) }).collect();
    if terms.iter().any(|t| !(t.coef.hi.abs() < rows::SPLIT_LIMIT)) {
        let r = residuals_dd(x, y, accepted, coef);
        let g = if gradient {
            terms.iter().map(|t| (0..n).fold(DD::ZERO, |s, i| s + t.col.get(i).scale(t.scale) * r[i])).collect()
        } else {
            Vec::new()
        };
        return (r, g);
    }
    let chunk = rows::CHUNK_ROWS;
    let parts = rows::map_chunks(n.div_ceil(chunk), threads, |c| {
        let (from, to) = (c * chunk, ((c + 1) * chunk).min(n));
        let mut r = vec![DD::ZERO; to - from];
        let mut g = vec![DD::ZERO; if gradient { terms.len() } else { 0 }];
        residual_blocks(&terms, y, from, &mut r, &mut g);
        (r, g)
    });
    let mut r = Vec::with_capacity(n);
    let mut g = vec![DD::ZERO; if gradient { terms.len() } else { 0 }];
    for (rc, gc) in parts {
        r.extend_from_slice(&rc);
        for (a, b) in g.iter_mut().zip(gc) {
            *a = *a + b;
        }
    }
    (r, g)
}

rows::wide_vectors! {
    /// The blocks of [`residual_pass`] from row `from`: residuals into `r`,
    /// and Xᵀr added into `g` unless it is empty.
    fn residual_blocks<>(terms: &[rows::Term], y: &DdColumn, from: usize, r: &mut [DD], g: &mut [DD]) = residual_blocks_body;
}

#[inline(always)]
fn residual_blocks_body(terms: &[rows::Term], y: &DdColumn, from: usize, r: &mut [DD], g: &mut [DD]) {
    let (mut s, mut c) = (Vec::with_capacity(rows::BLOCK), Vec::with_capacity(rows::BLOCK));
    for (b, block) in r.chunks_mut(rows::BLOCK).enumerate() {
        let start = from + b * rows::BLOCK;
        rows::residual_block(terms, y, start, block, &mut s, &mut c);
        for (gk, t) in g.iter_mut().zip(terms) {
            *gk = *gk + rows::dot_block(t.col, t.scale, start, block);
        }
    }
}

#[allow(clippy::too_many_arguments)]
fn assemble(
    x: &[DdColumn],
    y: &DdColumn,
    y_scale: f64,
    solved: Solved,
    condition: f64,
    double_digits: f64,
    path: SolverPath,
    options: &LstsqOptions,
    scales: Vec<f64>,
    threads: usize,
) -> LstsqSolution {
    let n = y.len();
    let p = x.len();
    let Solved { coef_dd, residuals, accepted, aliased, r_inv } = solved;
    let r = accepted.len();
    // Back to the response's own scale (exact: y_scale is a power of two).
    let unscale = 1.0 / y_scale;
    let coef_dd: Vec<DD> = coef_dd.iter().map(|c| c.scale(unscale)).collect();
    let coef: Vec<f64> = (0..p).map(|j| if accepted.contains(&j) { coef_dd[j].to_f64() } else { f64::NAN }).collect();
    let rss_scaled = sum_sq(&residuals);
    let rss = unscale_sum(rss_scaled, unscale);
    let residuals: Vec<DD> = residuals.iter().map(|e| e.scale(unscale)).collect();

    // (XᵀX)⁻¹ = C R⁻¹ R⁻ᵀ C in the original column order.
    let mut xtx_inv = vec![f64::NAN; p * p];
    let mut unit_xtx_inv = vec![f64::NAN; p * p];
    for a in 0..r {
        for b in a..r {
            let mut s = DD::ZERO;
            for l in b..r {
                s = s + r_inv[l * r + a] * r_inv[l * r + b];
            }
            let (ja, jb) = (accepted[a], accepted[b]);
            unit_xtx_inv[ja * p + jb] = s.to_f64();
            unit_xtx_inv[jb * p + ja] = s.to_f64();
            // One scale at a time, so that a huge and a tiny column do not
            // overflow a product the result does not need.
            let v = s.scale(scales[ja]).scale(scales[jb]).to_f64();
            xtx_inv[ja * p + jb] = v;
            xtx_inv[jb * p + ja] = v;
        }
    }
    debug_assert_eq!(residuals.len(), n);
    LstsqSolution {
        rows: n,
        cols: p,
        coef,
        coef_dd,
        aliased,
        rank: r,
        residuals,
        rss,
        y_scale,
        rss_scaled,
        xtx_inv,
        condition,
        double_digits,
        path,
        rank_tol: options.rank_tol,
        system: x.to_vec(),
        r_inv,
        leverage: std::sync::OnceLock::new(),
        unit_xtx_inv,
        accepted,
        scales,
        threads,
    }
}

impl LstsqSolution {
    /// Calls `f(start, h, q)` for each block of rows `from..to` of Q
    /// (column-major `h x rank`), in order. The blocks are computed in
    /// batches of [`Q_BATCH`] (with wide vectors where the processor has them).
    fn for_each_q_block(&self, from: usize, to: usize, mut f: impl FnMut(usize, usize, &[f64])) {
        let r = self.rank;
        let cols: Vec<(&DdColumn, f64)> = self.accepted.iter().map(|&j| (&self.system[j], self.scales[j])).collect();
        let r_inv_f: Vec<f64> = self.r_inv.iter().map(|v| v.hi).collect();
        let mut out = vec![0.0; rows::BLOCK * Q_BATCH * r];
        let mut start = from;
        while start < to {
            let end = (start + rows::BLOCK * Q_BATCH).min(to);
            let heights = match self.path {
                SolverPath::Double => q_blocks_f64(&cols, &r_inv_f, start, end, &mut out),
                SolverPath::DoubleDouble => q_blocks_dd(&cols, &self.r_inv, start, end, &mut out),
            };
            let mut at = start;
            let mut offset = 0;
            for h in heights {
                f(at, h, &out[offset..offset + h * r]);
                at += h;
                offset += h * r;
            }
            start = end;
        }
    }

    /// `f(from, to)` for each chunk of [`rows::CHUNK_ROWS`] rows, on the
    /// solution's threads, in chunk order.
    fn map_row_chunks<R: Send>(&self, f: impl Fn(usize, usize) -> R + Sync) -> Vec<R> {
        let (n, chunk) = (self.rows, rows::CHUNK_ROWS);
        rows::map_chunks(n.div_ceil(chunk), self.threads, |c| f(c * chunk, ((c + 1) * chunk).min(n)))
    }

    /// Diagonal of the hat matrix X(XᵀX)⁻¹Xᵀ, the squared row norms of Q;
    /// computed on first use (one pass over the rows, O(n·p²)).
    pub fn leverage(&self) -> &[f64] {
        self.leverage.get_or_init(|| {
            let r = self.rank;
            let parts = self.map_row_chunks(|from, to| {
                let mut lev = vec![0.0; to - from];
                self.for_each_q_block(from, to, |start, h, q| {
                    let out = &mut lev[start - from..start - from + h];
                    for k in 0..r {
                        for (o, v) in out.iter_mut().zip(&q[k * h..(k + 1) * h]) {
                            *o += v * v;
                        }
                    }
                });
                lev
            });
            parts.concat()
        })
    }

    /// Qᵀ diag(ω) Q, `rank x rank` row-major.
    fn weighted_gram(&self, omega: &[f64]) -> Vec<f64> {
        let r = self.rank;
        let parts = self.map_row_chunks(|from, to| {
            let mut m = vec![0.0; r * r];
            self.for_each_q_block(from, to, |start, h, q| {
                let w = &omega[start..start + h];
                for a in 0..r {
                    let qa = &q[a * h..(a + 1) * h];
                    for b in a..r {
                        let qb = &q[b * h..(b + 1) * h];
                        let s: f64 = (0..h).map(|i| qa[i] * w[i] * qb[i]).sum();
                        m[a * r + b] += s;
                    }
                }
            });
            m
        });
        let mut m = vec![0.0; r * r];
        for part in parts {
            for (a, b) in m.iter_mut().zip(part) {
                *a += b;
            }
        }
        for a in 0..r {
            for b in 0..a {
                m[a * r + b] = m[b * r + a];
            }
        }
        m
    }

    /// The sandwich (XᵀX)⁻¹ Xᵀ diag(ω) X (XᵀX)⁻¹ for per-row weights ω,
    /// `cols x cols` row-major with NaN for aliased columns. With
    /// ω = r²/(1−h)² this is the HC3 covariance of MacKinnon and White
    /// (1985, Journal of Econometrics 29).
    pub fn sandwich(&self, omega: &[f64]) -> Vec<f64> {
        let (p, r) = (self.cols, self.rank);
        let t = self.rinv_m(omega);
        let rinv = |i: usize, j: usize| self.r_inv[j * r + i].to_f64();
        let mut out = vec![f64::NAN; p * p];
        for i in 0..r {
            for j in 0..r {
                let s: f64 = (j..r).map(|l| t[i * r + l] * rinv(j, l)).sum();
                let (ji, jj) = (self.accepted[i], self.accepted[j]);
                out[ji * p + jj] = s * self.scales[ji] * self.scales[jj];
            }
        }
        out
    }

    /// R⁻¹ (Qᵀ diag(ω) Q), `rank x rank` row-major.
    fn rinv_m(&self, omega: &[f64]) -> Vec<f64> {
        let r = self.rank;
        let m = self.weighted_gram(omega);
        let rinv = |i: usize, j: usize| self.r_inv[j * r + i].to_f64();
        let mut t = vec![0.0; r * r];
        for i in 0..r {
            for j in 0..r {
                t[i * r + j] = (i..r).map(|l| rinv(i, l) * m[l * r + j]).sum();
            }
        }
        t
    }

    /// √ of the sandwich's diagonal, one per column (NaN when aliased),
    /// computed on the scaled columns and scaled back one factor at a time,
    /// so that it stays finite for columns near 1e±300.
    pub fn sandwich_se(&self, omega: &[f64]) -> Vec<f64> {
        let (p, r) = (self.cols, self.rank);
        let t = self.rinv_m(omega);
        let rinv = |i: usize, j: usize| self.r_inv[j * r + i].to_f64();
        let mut out = vec![f64::NAN; p];
        for i in 0..r {
            let s: f64 = (i..r).map(|l| t[i * r + l] * rinv(i, l)).sum();
            let j = self.accepted[i];
            out[j] = s.max(0.0).sqrt() * self.scales[j];
        }
        out
    }

    /// The power of two each input column was multiplied by.
    pub fn scales(&self) -> &[f64] {
        &self.scales
    }

    /// (XᵀX)⁻¹ of the scaled columns X·diag(scales), `cols x cols`
    /// row-major, NaN in aliased rows and columns.
    pub fn unit_xtx_inv(&self) -> &[f64] {
        &self.unit_xtx_inv
    }

    /// √[(XᵀX)⁻¹]ⱼⱼ, the standard error of βⱼ per unit of σ, computed so
    /// that it is finite whenever the true value is (NaN when aliased).
    pub fn se_factor(&self, j: usize) -> f64 {
        self.unit_xtx_inv[j * self.cols + j].sqrt() * self.scales[j]
    }

    /// σ̂ = √(RSS/(n − rank)) on the response's scale, from the scaled RSS.
    pub fn sigma(&self) -> f64 {
        let df = (self.rows - self.rank) as f64;
        (self.rss_scaled / DD::from_f64(df)).sqrt().to_f64() / self.y_scale
    }

    /// Residual i times `y_scale`: the residual on a scale where its
    /// square cannot overflow or underflow.
    pub fn scaled_residual(&self, i: usize) -> f64 {
        self.residuals[i].scale(self.y_scale).to_f64()
    }

    /// The thin Q of the scaled accepted columns, column-major
    /// `rows x rank`, formed in full (n·rank numbers; the fit itself never
    /// forms it).
    pub fn thin_q(&self) -> Vec<f64> {
        let (n, r) = (self.rows, self.rank);
        let mut q = vec![0.0; n * r];
        self.for_each_q_block(0, n, |start, h, block| {
            for k in 0..r {
                q[k * n + start..k * n + start + h].copy_from_slice(&block[k * h..(k + 1) * h]);
            }
        });
        q
    }

    /// Threads the passes over the rows may use (for callers that add
    /// passes of their own).
    pub fn threads(&self) -> usize {
        self.threads
    }

    /// Input columns in the order they entered R.
    pub fn accepted(&self) -> &[usize] {
        &self.accepted
    }
}

/// Blocks of rows of Q computed per batch in [`LstsqSolution::for_each_q_block`].
const Q_BATCH: usize = 16;

rows::wide_vectors! {
    /// Rows `start..end` of Q in double precision, block after block into
    /// `out`; returns the blocks' heights.
    fn q_blocks_f64<>(cols: &[(&DdColumn, f64)], r_inv: &[f64], start: usize, end: usize, out: &mut [f64]) -> Vec<usize> = q_blocks_body;
}

/// As [`q_blocks_f64`], in double-double (the extended path's R⁻¹).
fn q_blocks_dd(cols: &[(&DdColumn, f64)], r_inv: &[DD], start: usize, end: usize, out: &mut [f64]) -> Vec<usize> {
    q_blocks_body(cols, r_inv, start, end, out)
}

#[inline(always)]
fn q_blocks_body<T: Real>(cols: &[(&DdColumn, f64)], r_inv: &[T], start: usize, end: usize, out: &mut [f64]) -> Vec<usize> {
    let r = cols.len();
    let mut xs = Vec::new();
    let mut heights = Vec::new();
    let (mut at, mut offset) = (start, 0);
    while at < end {
        let h = rows::BLOCK.min(end - at);
        rows::q_block::<T>(cols, r_inv, at, h, &mut xs, &mut out[offset..offset + h * r]);
        heights.push(h);
        at += h;
        offset += h * r;
    }
    heights
}

/// Refinement steps after the solve, in either path.
const REFINEMENT_STEPS: usize = 2;

/// y − Xβ over the accepted columns, in double-double.
fn residuals_dd(x: &[DdColumn], y: &DdColumn, accepted: &[usize], coef: &[DD]) -> Vec<DD> {
    let mut r: Vec<DD> = (0..y.len()).map(|i| y.get(i)).collect();
    for &j in accepted {
        let b = coef[j];
        for (i, r_i) in r.iter_mut().enumerate() {
            *r_i = *r_i - x[j].get(i) * b;
        }
    }
    r
}

/// A sum of squares of the scaled problem on the response's own scale:
/// v / y_scale², infinite (not NaN) when that is beyond `f64`.
pub fn unscale_sum(v: DD, unscale: f64) -> DD {
    let r = v.scale(unscale).scale(unscale);
    if r.hi.is_finite() {
        r
    } else {
        DD::from_f64(r.hi)
    }
}

fn sum_sq(v: &[DD]) -> DD {
    v.iter().fold(DD::ZERO, |s, &e| s + e * e)
}

/// The power of two that brings the column's 2-norm into [0.5, 1)
/// (within 2^±1020, so that its reciprocal is finite too). The streaming
/// kernel scales by the same rule.
pub(crate) fn pow2_scale(col: &[f64]) -> f64 {
    let nrm = qr_pivot::norm(col);
    if nrm == 0.0 || !nrm.is_finite() {
        return 1.0;
    }
    let e = (nrm.log2().floor() as i32 + 1).clamp(-1020, 1020);
    2f64.powi(-e)
}

fn scaled_matrix<T: Real>(x: &[DdColumn], scales: &[f64], n: usize) -> Vec<T> {
    let mut a = Vec::with_capacity(n * x.len());
    for (c, &s) in x.iter().zip(scales) {
        for i in 0..n {
            a.push(T::from_dd(c.get(i).scale(s)));
        }
    }
    a
}

/// ‖R‖₁ · ‖R⁻¹‖₁, the 1-norm condition number of R.
fn condition_1<T: Real>(qr: &PivotedQr<T>, r_inv: &[T]) -> f64 {
    let r = qr.rank;
    if r == 0 {
        return 1.0;
    }
    let mut norm_r = 0.0f64;
    let mut norm_inv = 0.0f64;
    for j in 0..r {
        let mut s = 0.0;
        let mut t = 0.0;
        for i in 0..=j {
            s += qr.r(i, j).to_f64().abs();
            t += r_inv[j * r + i].to_f64().abs();
        }
        norm_r = norm_r.max(s);
        norm_inv = norm_inv.max(t);
    }
    norm_r * norm_inv
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::select::cv::SplitMix64;

    fn columns(n: usize, p: usize, seed: u64) -> (Vec<DdColumn>, DdColumn) {
        let mut rng = SplitMix64::new(seed);
        let mut u = || (rng.next_u64() >> 11) as f64 / (1u64 << 53) as f64 * 2.0 - 1.0;
        let x: Vec<DdColumn> = (0..p).map(|_| DdColumn::from_f64((0..n).map(|_| u()).collect())).collect();
        let y = DdColumn::from_f64((0..n).map(|_| u()).collect());
        (x, y)
    }

    /// The wide-vector and plain builds of the row passes give the same
    /// bits (the claim `rows::wide_vectors!` rests on). On a processor
    /// without AVX2 both sides are the plain build and the test is void.
    #[test]
    fn wide_and_plain_row_passes_agree_bit_for_bit() {
        let (n, p) = (1000, 7);
        let (x, y) = columns(n, p, 3);
        let mut rng = SplitMix64::new(9);
        let terms: Vec<rows::Term> = x
            .iter()
            .map(|c| rows::Term { col: c, scale: 0.5, coef: DD::from_parts((rng.next_u64() % 1000) as f64 / 7.0, 1e-20) })
            .collect();
        let (mut r1, mut g1) = (vec![DD::ZERO; n], vec![DD::ZERO; p]);
        let (mut r2, mut g2) = (vec![DD::ZERO; n], vec![DD::ZERO; p]);
        residual_blocks(&terms, &y, 0, &mut r1, &mut g1);
        residual_blocks_body(&terms, &y, 0, &mut r2, &mut g2);
        assert_eq!(r1, r2);
        assert_eq!(g1, g2);
        assert!(g1.iter().all(|g| g.hi != 0.0));

        let scales = vec![1.0; p];
        let refs: Vec<&DdColumn> = x.iter().collect();
        let wide = tsqr::factor_system::<f64>(&refs, &y, &scales, 1.0, TsqrParams::default(), 1);
        let mut plain = tsqr::RFactor::<f64>::zero(p + 1);
        let mut block: Vec<f64> = Vec::new();
        for start in (0..n).step_by(256) {
            let h = 256.min(n - start);
            block.clear();
            for c in refs.iter().map(|c| &c.hi).chain(std::iter::once(&y.hi)) {
                block.extend_from_slice(&c[start..start + h]);
            }
            plain.absorb(&mut block, h);
        }
        assert_eq!(wide.r, plain.r);
    }

    /// The row passes' residuals match double-double arithmetic to its
    /// precision, and the solution's leverages sum to the rank.
    #[test]
    fn row_pass_residuals_match_double_double_and_leverages_sum_to_rank() {
        let (n, p) = (700, 5);
        let (x, y) = columns(n, p, 11);
        let sol = solve_lstsq(&x, &y, &LstsqOptions::default());
        assert_eq!(sol.path, SolverPath::Double);
        let scaled_y = DdColumn::from_f64(y.hi.iter().map(|v| v * sol.y_scale).collect());
        let coef: Vec<DD> = sol.coef_dd.iter().map(|c| c.scale(sol.y_scale)).collect();
        let accepted: Vec<usize> = (0..p).collect();
        let (fast, _) = residual_pass(&x, &scaled_y, &accepted, &coef, sol.scales(), false, 1);
        let slow = residuals_dd(&x, &scaled_y, &accepted, &coef);
        for (a, b) in fast.iter().zip(&slow) {
            assert!((*a - *b).abs().to_f64() <= 1e-30 * b.abs().to_f64().max(1e-3), "{a:?} vs {b:?}");
        }
        let total: f64 = sol.leverage().iter().sum();
        assert!((total - p as f64).abs() < 1e-12, "Σh = {total}");
    }
}

#[cfg(test)]
mod thread_tests {
    use super::*;
    use crate::select::cv::SplitMix64;

    /// Chunks are fixed by the number of rows and combined in chunk order,
    /// so one thread and three give the same bits: coefficients, residuals,
    /// leverages and the sandwich.
    #[test]
    fn the_number_of_threads_does_not_change_a_bit() {
        let n = 3 * rows::CHUNK_ROWS + 123;
        let mut rng = SplitMix64::new(21);
        let mut u = || (rng.next_u64() >> 11) as f64 / (1u64 << 53) as f64 - 0.5;
        let mut x = vec![DdColumn::from_f64(vec![1.0; n])];
        for _ in 0..3 {
            x.push(DdColumn::from_f64((0..n).map(|_| u()).collect()));
        }
        let y = DdColumn::from_f64((0..n).map(|i| 2.0 + x[1].hi[i] - 3.0 * x[3].hi[i] + u()).collect());
        let run = |threads| solve_lstsq(&x, &y, &LstsqOptions { threads, ..LstsqOptions::default() });
        let (one, three) = (run(1), run(3));
        assert_eq!(one.path, SolverPath::Double);
        assert_eq!(one.coef_dd, three.coef_dd);
        assert_eq!(one.residuals, three.residuals);
        assert_eq!(one.rss_scaled, three.rss_scaled);
        assert_eq!(one.leverage(), three.leverage());
        let omega: Vec<f64> = one.residuals.iter().map(|e| e.hi * e.hi).collect();
        assert_eq!(one.sandwich(&omega), three.sandwich(&omega));
        assert!((one.coef[1] - 1.0).abs() < 0.02 && (one.coef[3] + 3.0).abs() < 0.02, "{:?}", one.coef);
    }
}
