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
pub mod tsqr;

use dd::DD;
use qr_pivot::{factor_qr_pivoted, PivotedQr, QrParams};
use real::Real;
use serde::Serialize;

/// A column held as `hi + lo` double-double parts; `lo` is absent when
/// the column is exactly representable in `f64` (raw data).
#[derive(Clone, Debug, PartialEq)]
pub struct DdColumn {
    pub hi: Vec<f64>,
    pub lo: Option<Vec<f64>>,
}

impl DdColumn {
    pub fn from_f64(values: Vec<f64>) -> DdColumn {
        DdColumn { hi: values, lo: None }
    }

    /// Builds a column from double-double values, dropping an all-zero low part.
    pub fn from_dd(values: &[DD]) -> DdColumn {
        let hi: Vec<f64> = values.iter().map(|v| v.hi).collect();
        let lo: Vec<f64> = values.iter().map(|v| v.lo).collect();
        let lo = if lo.iter().all(|&l| l == 0.0) { None } else { Some(lo) };
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
}

impl Default for LstsqOptions {
    fn default() -> Self {
        LstsqOptions { rank_tol: 1e-12, target_digits: 13.0, force_path: None }
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
    /// y − Xβ, accumulated in double-double.
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
    /// Diagonal of the hat matrix X(XᵀX)⁻¹Xᵀ.
    pub leverage: Vec<f64>,
    /// 1-norm condition number of the column-scaled design (from R).
    pub condition: f64,
    /// Digits the double-precision pass could promise (the bound above).
    pub double_digits: f64,
    pub path: SolverPath,
    pub rank_tol: f64,
    /// Thin Q of the scaled accepted columns, `rows x rank` column-major.
    q: Vec<f64>,
    /// R⁻¹ of the scaled accepted columns, `rank x rank` column-major.
    r_inv: Vec<f64>,
    /// (XᵀX)⁻¹ of the scaled columns, `cols x cols` row-major, NaN in
    /// aliased rows and columns.
    unit_xtx_inv: Vec<f64>,
    accepted: Vec<usize>,
    /// The power of two each input column was multiplied by.
    scales: Vec<f64>,
}

/// Solves min ‖y − Xβ‖₂ for the columns `x` (all of length `y.len()`).
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

    let fast = factor_qr_pivoted(scaled_matrix::<f64>(x, &scales, n), n, p, params);
    let mut qty: Vec<f64> = (0..n).map(|i| y.hi[i]).collect();
    fast.apply_qt(&mut qty);
    let r_inv_fast = fast.invert_upper();
    let condition_fast = condition_1(&fast, &r_inv_fast);
    let fitted_norm = qr_pivot::norm(&qty[..fast.rank]);
    let resid_norm = qr_pivot::norm(&qty[fast.rank..]);
    let tan_theta = if fitted_norm > 0.0 { resid_norm / fitted_norm } else { f64::INFINITY };
    let bound = <f64 as Real>::EPS * (condition_fast + condition_fast * condition_fast * tan_theta);
    let double_digits = if fast.rank == 0 { f64::INFINITY } else { -bound.log10() };

    let path = options.force_path.unwrap_or(if double_digits >= options.target_digits {
        SolverPath::Double
    } else {
        SolverPath::DoubleDouble
    });
    match path {
        SolverPath::Double => finish(x, y, y_scale, fast, r_inv_fast, condition_fast, double_digits, path, options, scales),
        SolverPath::DoubleDouble => {
            let slow = factor_qr_pivoted(scaled_matrix::<DD>(x, &scales, n), n, p, params);
            let r_inv = slow.invert_upper();
            let condition = condition_1(&slow, &r_inv);
            finish(x, y, y_scale, slow, r_inv, condition, double_digits, path, options, scales)
        }
    }
}

#[allow(clippy::too_many_arguments)]
fn finish<T: Real>(
    x: &[DdColumn],
    y: &DdColumn,
    y_scale: f64,
    qr: PivotedQr<T>,
    r_inv: Vec<T>,
    condition: f64,
    double_digits: f64,
    path: SolverPath,
    options: &LstsqOptions,
    scales: Vec<f64>,
) -> LstsqSolution {
    let n = y.len();
    let p = x.len();
    let r = qr.rank;
    let mut qty: Vec<T> = (0..n).map(|i| T::from_dd(y.get(i))).collect();
    qr.apply_qt(&mut qty);
    let beta_scaled = qr.solve_upper(&qty);

    let mut coef_dd = vec![DD::ZERO; p];
    for (k, &j) in qr.accepted.iter().enumerate() {
        coef_dd[j] = beta_scaled[k].to_dd().scale(scales[j]);
    }
    let mut residuals = residuals_dd(x, y, &qr.accepted, &coef_dd);
    // Iterative refinement (Golub and Wilkinson 1966): the correction solves
    // R·δ = Qᵀr with the residual r accumulated in double-double. Each step
    // costs O(n·p); it lifts the componentwise accuracy of small
    // coefficients that the normwise bound does not protect.
    for _ in 0..REFINEMENT_STEPS {
        let mut qtr: Vec<T> = residuals.iter().map(|&e| T::from_dd(e)).collect();
        qr.apply_qt(&mut qtr);
        let delta = qr.solve_upper(&qtr);
        for (k, &j) in qr.accepted.iter().enumerate() {
            coef_dd[j] = coef_dd[j] + delta[k].to_dd().scale(scales[j]);
        }
        residuals = residuals_dd(x, y, &qr.accepted, &coef_dd);
    }
    // If the coefficients rounded to f64 fit at least as well (an exact fit
    // with representable coefficients), keep them: the residuals are then
    // exactly zero instead of 1e-90-sized remnants.
    let rounded: Vec<DD> = coef_dd.iter().map(|c| DD::from_f64(c.to_f64())).collect();
    let rounded_residuals = residuals_dd(x, y, &qr.accepted, &rounded);
    if sum_sq(&rounded_residuals) <= sum_sq(&residuals) {
        coef_dd = rounded;
        residuals = rounded_residuals;
    }
    // Back to the response's own scale (exact: y_scale is a power of two).
    let unscale = 1.0 / y_scale;
    let coef_dd: Vec<DD> = coef_dd.iter().map(|c| c.scale(unscale)).collect();
    let coef: Vec<f64> =
        (0..p).map(|j| if qr.accepted.contains(&j) { coef_dd[j].to_f64() } else { f64::NAN }).collect();
    let rss_scaled = sum_sq(&residuals);
    let rss = unscale_sum(rss_scaled, unscale);
    let residuals: Vec<DD> = residuals.iter().map(|r| r.scale(unscale)).collect();

    // (XᵀX)⁻¹ = C R⁻¹ R⁻ᵀ C in the original column order.
    let mut xtx_inv = vec![f64::NAN; p * p];
    let mut unit_xtx_inv = vec![f64::NAN; p * p];
    for a in 0..r {
        for b in a..r {
            let mut s = T::zero();
            for l in b..r {
                s = s + r_inv[l * r + a] * r_inv[l * r + b];
            }
            let (ja, jb) = (qr.accepted[a], qr.accepted[b]);
            let u = s.to_dd();
            unit_xtx_inv[ja * p + jb] = u.to_f64();
            unit_xtx_inv[jb * p + ja] = u.to_f64();
            // One scale at a time, so that a huge and a tiny column do not
            // overflow a product the result does not need.
            let v = u.scale(scales[ja]).scale(scales[jb]).to_f64();
            xtx_inv[ja * p + jb] = v;
            xtx_inv[jb * p + ja] = v;
        }
    }

    let q_t = qr.thin_q();
    let q: Vec<f64> = q_t.iter().map(|v| v.to_f64()).collect();
    let mut leverage = vec![0.0; n];
    for k in 0..r {
        for (i, h) in leverage.iter_mut().enumerate() {
            let v = q[k * n + i];
            *h += v * v;
        }
    }
    LstsqSolution {
        rows: n,
        cols: p,
        coef,
        coef_dd,
        aliased: qr.aliased.clone(),
        rank: r,
        residuals,
        rss,
        y_scale,
        rss_scaled,
        xtx_inv,
        leverage,
        condition,
        double_digits,
        path,
        rank_tol: options.rank_tol,
        q,
        r_inv: r_inv.iter().map(|v| v.to_f64()).collect(),
        unit_xtx_inv,
        accepted: qr.accepted,
        scales,
    }
}

impl LstsqSolution {
    /// The sandwich (XᵀX)⁻¹ Xᵀ diag(ω) X (XᵀX)⁻¹ for per-row weights ω,
    /// `cols x cols` row-major with NaN for aliased columns. With
    /// ω = r²/(1−h)² this is the HC3 covariance of MacKinnon and White
    /// (1985, Journal of Econometrics 29).
    pub fn sandwich(&self, omega: &[f64]) -> Vec<f64> {
        let (n, p, r) = (self.rows, self.cols, self.rank);
        // M = Qᵀ diag(ω) Q  (r x r)
        let mut m = vec![0.0; r * r];
        for a in 0..r {
            for b in a..r {
                let qa = &self.q[a * n..(a + 1) * n];
                let qb = &self.q[b * n..(b + 1) * n];
                let s: f64 = (0..n).map(|i| qa[i] * omega[i] * qb[i]).sum();
                m[a * r + b] = s;
                m[b * r + a] = s;
            }
        }
        // R⁻¹ M R⁻ᵀ
        let rinv = |i: usize, j: usize| self.r_inv[j * r + i];
        let mut t = vec![0.0; r * r]; // R⁻¹ M
        for i in 0..r {
            for j in 0..r {
                t[i * r + j] = (i..r).map(|l| rinv(i, l) * m[l * r + j]).sum();
            }
        }
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

    /// √ of the sandwich's diagonal, one per column (NaN when aliased),
    /// computed on the scaled columns and scaled back one factor at a time,
    /// so that it stays finite for columns near 1e±300.
    pub fn sandwich_se(&self, omega: &[f64]) -> Vec<f64> {
        let (n, p, r) = (self.rows, self.cols, self.rank);
        let rinv = |i: usize, j: usize| self.r_inv[j * r + i];
        let mut out = vec![f64::NAN; p];
        for i in 0..r {
            // (R⁻¹ Qᵀ)ᵢ row, then Σ ω (row)²
            let mut v = vec![0.0; n];
            for l in i..r {
                let c = rinv(i, l);
                for (k, vk) in v.iter_mut().enumerate() {
                    *vk += c * self.q[l * n + k];
                }
            }
            let s: f64 = v.iter().zip(omega).map(|(a, w)| a * a * w).sum();
            let j = self.accepted[i];
            out[j] = s.sqrt() * self.scales[j];
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

    /// Thin Q of the scaled accepted columns (column-major `rows x rank`),
    /// exposed for the algebra tests.
    pub fn thin_q(&self) -> &[f64] {
        &self.q
    }

    /// Input columns in the order they entered R.
    pub fn accepted(&self) -> &[usize] {
        &self.accepted
    }
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
/// (within 2^±1020, so that its reciprocal is finite too).
fn pow2_scale(col: &[f64]) -> f64 {
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
