//! Streaming least squares: the R factor of a tall matrix computed block of
//! rows by block of rows, in O(p²) memory plus one block.
//!
//! The rows are never held all at once. Each block B of rows is stacked
//! under the R found so far and the stack [R; B] is reduced to a new upper
//! triangle by Householder reflections (Golub and Van Loan 2013, §5.2, with
//! the structure of the stack used: reflector k touches row k of R and the
//! rows of B only). The Q factor is not kept. Because QᵀQ = I, the final R
//! satisfies RᵀR = XᵀX, so it carries everything least squares needs:
//! carrying y as the last column, the top of that column is Q₁ᵀy and its
//! last entry is ±‖y − Xβ̂‖.
//!
//! Two R factors of disjoint sets of rows merge the same way ([`merge_r`],
//! Householder on the stacked triangles [R₁; R₂]): this is the TSQR tree of
//! Demmel, Grigori, Hoemmen and Langou (2012, "Communication-optimal
//! parallel and sequential QR and LU factorizations", SIAM J. Sci. Comput.
//! 34). A map step that factors its partition of rows and a reduce step that
//! merges R factors pairwise give the same fit on a distributed engine, with
//! p² numbers sent per partition.
//!
//! Rank is found afterwards from R alone: R's columns have the same norms
//! and the same distances from the span of earlier columns as X's (RᵀR =
//! XᵀX), so the deferral rule of [`super::qr_pivot`] applied to R aliases the
//! same columns it would alias in X.
//!
//! Refinement ([`refine_tsqr`]) is a second pass over the rows: the
//! residual r = y − Xβ and Xᵀr accumulated in double-double, and the
//! correction from the corrected semi-normal equations RᵀRδ = Xᵀr (Björck
//! 1987, "Stability analysis of the method of seminormal equations for
//! linear least squares problems", Linear Algebra Appl. 88/89), which need
//! R only, not Q.
//!
//! What this path does not do, compared with [`super::solve_lstsq`]: no
//! explicit Q (leverages would come row by row as ‖R⁻ᵀxᵢ‖²), no automatic
//! switch to double-double (the caller chooses the arithmetic `T`).

use super::dd::DD;
use super::pow2_scale;
use super::qr_pivot::{factor_qr_pivoted, norm, QrParams};
use super::real::Real;
use super::DdColumn;
use std::borrow::Borrow;

/// Tuning of the blocked factorization.
#[derive(Clone, Copy, Debug)]
pub struct TsqrParams {
    /// Rows per block. Default 256: a block of 256 × 51 doubles is 104 kB,
    /// which stays in a typical L2 cache while its reflectors are applied.
    pub block_rows: usize,
}

impl Default for TsqrParams {
    fn default() -> Self {
        TsqrParams { block_rows: 256 }
    }
}

/// An upper-triangular R of `cols` columns from `rows` rows, column-major
/// `cols × cols` (zeros below the diagonal).
#[derive(Clone, Debug, PartialEq)]
pub struct RFactor<T> {
    pub cols: usize,
    /// Rows absorbed so far.
    pub rows: usize,
    pub r: Vec<T>,
}

impl<T: Real> RFactor<T> {
    /// The R of no rows: all zeros.
    pub fn zero(cols: usize) -> RFactor<T> {
        RFactor { cols, rows: 0, r: vec![T::zero(); cols * cols] }
    }

    /// Entry (i, j), i ≤ j.
    #[inline]
    pub fn get(&self, i: usize, j: usize) -> T {
        self.r[j * self.cols + i]
    }

    /// Absorbs a block of rows, column-major `height × cols` in `block`
    /// (overwritten: it holds the reflectors afterwards).
    #[inline(always)]
    pub fn absorb(&mut self, block: &mut [T], height: usize) {
        assert_eq!(block.len(), height * self.cols, "block storage does not match its shape");
        reduce_stack(&mut self.r, self.cols, block, height, |_| height);
        self.rows += height;
    }
}

/// Reduces the stack [R; L] to upper-triangular form in place: R (`p × p`,
/// column-major) becomes the new R and L (`height × p`, column-major) is
/// annihilated. Only rows `0..live(k)` of L's column k can be non-zero
/// before step k (all of them for a dense block; `k + 1` for a triangle),
/// and reflector k is built from R[k,k] and those rows.
#[inline(always)]
fn reduce_stack<T: Real>(r: &mut [T], p: usize, l: &mut [T], height: usize, live: impl Fn(usize) -> usize) {
    for k in 0..p {
        let h = live(k).min(height);
        if h == 0 {
            continue;
        }
        let (head, tail) = l.split_at_mut((k + 1) * height);
        let v = &mut head[k * height..k * height + h];
        let below = norm(v);
        if below.to_f64() == 0.0 {
            continue; // nothing to annihilate in this column
        }
        let alpha = r[k * p + k];
        let xnorm = (alpha * alpha + below * below).sqrt();
        let beta = if alpha.to_f64() >= 0.0 { -xnorm } else { xnorm };
        let tau = (beta - alpha) / beta;
        let scale = alpha - beta;
        for e in v.iter_mut() {
            *e = *e / scale;
        }
        r[k * p + k] = beta;
        // Apply I − τ (1; v)(1; v)ᵀ to the later columns of the stack.
        for j in k + 1..p {
            let c = &mut tail[(j - k - 1) * height..(j - k - 1) * height + h];
            let w = (r[j * p + k] + dot4(v, c)) * tau;
            r[j * p + k] = r[j * p + k] - w;
            for (ci, vi) in c.iter_mut().zip(v.iter()) {
                *ci = *ci - w * *vi;
            }
        }
    }
}

/// Σ aᵢbᵢ in four interleaved partial sums, added pairwise at the end: a
/// fixed order (so every platform gives the same bits) that the compiler can
/// vectorise, which one running sum does not allow.
#[inline]
fn dot4<T: Real>(a: &[T], b: &[T]) -> T {
    let mut s = [T::zero(); 4];
    let (ca, cb) = (a.chunks_exact(4), b.chunks_exact(4));
    let (ra, rb) = (ca.remainder(), cb.remainder());
    for (x, y) in ca.zip(cb) {
        s[0] = s[0] + x[0] * y[0];
        s[1] = s[1] + x[1] * y[1];
        s[2] = s[2] + x[2] * y[2];
        s[3] = s[3] + x[3] * y[3];
    }
    let mut t = T::zero();
    for (x, y) in ra.iter().zip(rb) {
        t = t + *x * *y;
    }
    ((s[0] + s[1]) + (s[2] + s[3])) + t
}

/// Merges the R factors of two disjoint sets of rows into the R factor of
/// their union: Householder on the stacked triangles [R₁; R₂]. This is the
/// reduce step of TSQR; merging in any order gives the same R up to the
/// signs of its rows (and rounding).
pub fn merge_r<T: Real>(a: &RFactor<T>, b: &RFactor<T>) -> RFactor<T> {
    assert_eq!(a.cols, b.cols, "R factors of different widths");
    let p = a.cols;
    let mut out = a.clone();
    let mut lower = b.r.clone();
    // Column k of the triangle R₂ has non-zeros in rows 0..=k only.
    reduce_stack(&mut out.r, p, &mut lower, p, |k| k + 1);
    out.rows = a.rows + b.rows;
    out
}

/// Feeds rows one at a time into blocks and the blocks into an R factor,
/// holding only R and one block.
#[derive(Clone, Debug)]
pub struct StreamingQr<T> {
    r: RFactor<T>,
    block: Vec<T>,
    block_rows: usize,
    filled: usize,
}

impl<T: Real> StreamingQr<T> {
    pub fn new(cols: usize, params: TsqrParams) -> StreamingQr<T> {
        let block_rows = params.block_rows.max(1);
        StreamingQr { r: RFactor::zero(cols), block: vec![T::zero(); block_rows * cols], block_rows, filled: 0 }
    }

    /// Adds one row (`cols` values).
    pub fn push_row(&mut self, row: &[T]) {
        let (p, b) = (self.r.cols, self.block_rows);
        assert_eq!(row.len(), p, "row length does not match the columns");
        for (j, &v) in row.iter().enumerate() {
            self.block[j * b + self.filled] = v;
        }
        self.filled += 1;
        if self.filled == b {
            self.flush();
        }
    }

    fn flush(&mut self) {
        let (p, b, h) = (self.r.cols, self.block_rows, self.filled);
        if h == 0 {
            return;
        }
        if h < b {
            // Close the gaps so the partial block is contiguous per column.
            for j in 1..p {
                self.block.copy_within(j * b..j * b + h, j * h);
            }
        }
        self.r.absorb(&mut self.block[..h * p], h);
        self.filled = 0;
    }

    /// The R factor of every row pushed.
    pub fn finish(mut self) -> RFactor<T> {
        self.flush();
        self.r
    }
}

/// The R factor of a column-major `rows × cols` matrix, block by block.
pub fn factor_r<T: Real>(a: &[T], rows: usize, cols: usize, params: TsqrParams) -> RFactor<T> {
    assert_eq!(a.len(), rows * cols, "matrix storage does not match its shape");
    let b = params.block_rows.max(1);
    let mut r = RFactor::zero(cols);
    let mut block = vec![T::zero(); b * cols];
    let mut start = 0;
    while start < rows {
        let h = b.min(rows - start);
        for j in 0..cols {
            block[j * h..(j + 1) * h].copy_from_slice(&a[j * rows + start..j * rows + start + h]);
        }
        r.absorb(&mut block[..h * cols], h);
        start += h;
    }
    r
}

/// Options of [`solve_lstsq_tsqr`].
#[derive(Clone, Copy, Debug)]
pub struct TsqrOptions {
    pub tsqr: TsqrParams,
    /// As [`super::LstsqOptions::rank_tol`]: a column within `rank_tol` of
    /// its own norm from the span of the earlier ones is aliased.
    pub rank_tol: f64,
}

impl Default for TsqrOptions {
    fn default() -> Self {
        TsqrOptions { tsqr: TsqrParams::default(), rank_tol: 1e-12 }
    }
}

/// A least-squares solution from the streaming factorization.
#[derive(Clone, Debug)]
pub struct TsqrSolution {
    pub rows: usize,
    pub cols: usize,
    /// β, NaN for aliased columns.
    pub coef: Vec<f64>,
    /// β in double-double (as computed in `T`; zero for aliased columns).
    pub coef_dd: Vec<DD>,
    pub rank: usize,
    pub aliased: Vec<usize>,
    /// ‖y − Xβ‖², from R (not from a pass over the residuals).
    pub rss: DD,
    /// R of the scaled [X y], `(cols + 1)²`: what a map step would send.
    pub r: RFactor<DD>,
    /// Input columns in the order they entered the accepted R.
    pub accepted: Vec<usize>,
    /// The accepted columns' R (scaled), `rank × rank` column-major.
    pub r_accepted: Vec<DD>,
    /// The power of two each column, and the response, was multiplied by.
    pub scales: Vec<f64>,
    pub y_scale: f64,
}

/// Solves min ‖y − Xβ‖₂ in one pass over the rows, in arithmetic `T`, with
/// the same power-of-two column scaling and the same aliasing rule as
/// [`super::solve_lstsq`]. The columns may be borrowed (`&[&DdColumn]`), so
/// nothing of size n × p is allocated.
pub fn solve_lstsq_tsqr<T: Real>(x: &[impl Borrow<DdColumn>], y: &DdColumn, options: &TsqrOptions) -> TsqrSolution {
    let n = y.len();
    let x: Vec<&DdColumn> = x.iter().map(|c| c.borrow()).collect();
    let scales: Vec<f64> = x.iter().map(|c| pow2_scale(&c.hi)).collect();
    let y_scale = pow2_scale(&y.hi);
    let r = factor_system::<T>(&x, y, &scales, y_scale, options.tsqr, 1);
    solve_from_r(&r, n, &scales, y_scale, options.rank_tol)
}

/// The R factor of [X·diag(scales)  y·y_scale] (`p + 1` columns, y last),
/// in arithmetic `T`. The rows are cut into chunks of
/// [`super::rows::CHUNK_ROWS`]; each chunk's R is built block by block
/// (only one block of rows copied at a time, column by column, so each
/// input column is read in order), on up to `threads` threads, and the
/// chunks' R factors are merged pairwise in a fixed tree ([`merge_r`]).
/// The chunks and the tree depend only on the number of rows, so the
/// result is the same bits on any number of threads.
pub fn factor_system<T: Real>(x: &[&DdColumn], y: &DdColumn, scales: &[f64], y_scale: f64, params: TsqrParams, threads: usize) -> RFactor<T> {
    let (n, p) = (y.len(), x.len());
    let chunk = super::rows::CHUNK_ROWS;
    let count = n.div_ceil(chunk).max(1);
    let mut level = super::rows::map_chunks(count, threads, |c| {
        let (from, to) = (c * chunk, ((c + 1) * chunk).min(n));
        factor_rows::<T>(x, y, scales, y_scale, params, from, to)
    });
    while level.len() > 1 {
        let mut next = Vec::with_capacity(level.len().div_ceil(2));
        let mut it = level.into_iter();
        while let Some(a) = it.next() {
            next.push(match it.next() {
                Some(b) => merge_r(&a, &b),
                None => a,
            });
        }
        level = next;
    }
    let r = level.pop().unwrap_or_else(|| RFactor::zero(p + 1));
    debug_assert_eq!(r.rows, n);
    r
}

/// The R factor of rows `from..to` of the scaled system, block by block.
fn factor_rows<T: Real>(x: &[&DdColumn], y: &DdColumn, scales: &[f64], y_scale: f64, params: TsqrParams, from: usize, to: usize) -> RFactor<T> {
    let p = x.len();
    let b = params.block_rows.max(1);
    let mut r = RFactor::<T>::zero(p + 1);
    let mut block = vec![T::zero(); b * (p + 1)];
    let fill = |dst: &mut [T], c: &DdColumn, start: usize, s: f64| match &c.lo {
        None => dst.iter_mut().zip(&c.hi[start..]).for_each(|(d, &v)| *d = T::from_f64(v * s)),
        Some(_) => dst.iter_mut().enumerate().for_each(|(k, d)| *d = T::from_dd(c.get(start + k).scale(s))),
    };
    let mut start = from;
    while start < to {
        let h = b.min(to - start);
        for (j, c) in x.iter().enumerate() {
            fill(&mut block[j * h..(j + 1) * h], c, start, scales[j]);
        }
        fill(&mut block[p * h..(p + 1) * h], y, start, y_scale);
        absorb_block(&mut r, &mut block[..h * (p + 1)], h);
        start += h;
    }
    r
}

super::rows::wide_vectors! {
    /// [`RFactor::absorb`], with wide vectors where the processor has them.
    fn absorb_block<T: Real>(r: &mut RFactor<T>, block: &mut [T], height: usize) = absorb_body;
}

#[inline(always)]
fn absorb_body<T: Real>(r: &mut RFactor<T>, block: &mut [T], height: usize) {
    r.absorb(block, height)
}

/// β and the RSS from the R factor of the scaled [X y] (the last column is
/// y); `scales` and `y_scale` undo the scaling. This is all a reduce step
/// needs once the R factors are merged.
pub fn solve_from_r<T: Real>(r: &RFactor<T>, rows: usize, scales: &[f64], y_scale: f64, rank_tol: f64) -> TsqrSolution {
    let m = r.cols;
    let p = m - 1;
    // The X part of R as a p × p matrix (rows beyond `rows` are zero), and
    // the top of the y column.
    let mut rx = vec![T::zero(); p * p];
    for j in 0..p {
        for i in 0..=j {
            rx[j * p + i] = r.get(i, j);
        }
    }
    let qr = factor_qr_pivoted(rx, p, p, QrParams { rank_tol });
    let mut c: Vec<T> = (0..p).map(|i| r.get(i, p)).collect();
    qr.apply_qt(&mut c);
    let beta = qr.solve_upper(&c);
    let last = r.get(p, p);
    let mut rss_scaled = last.to_dd() * last.to_dd();
    for v in &c[qr.rank..] {
        rss_scaled = rss_scaled + v.to_dd() * v.to_dd();
    }
    let unscale = 1.0 / y_scale;
    let mut coef_dd = vec![DD::ZERO; p];
    let mut coef = vec![f64::NAN; p];
    for (pos, &j) in qr.accepted.iter().enumerate() {
        coef_dd[j] = beta[pos].to_dd().scale(scales[j]).scale(unscale);
        coef[j] = coef_dd[j].to_f64();
    }
    let rank = qr.rank;
    let mut r_accepted = vec![DD::ZERO; rank * rank];
    for j in 0..rank {
        for i in 0..=j {
            r_accepted[j * rank + i] = qr.r(i, j).to_dd();
        }
    }
    TsqrSolution {
        rows,
        cols: p,
        coef,
        coef_dd,
        rank,
        aliased: qr.aliased,
        rss: rss_scaled.scale(unscale).scale(unscale),
        r: RFactor { cols: m, rows: r.rows, r: r.r.iter().map(|v| v.to_dd()).collect() },
        accepted: qr.accepted,
        r_accepted,
        scales: scales.to_vec(),
        y_scale,
    }
}

/// Refines a streaming solution in `steps` passes over the rows: the
/// residual accumulated in double-double, g = Xᵀr, and the correction δ
/// from RᵀRδ = g solved in `T` with the accepted R (corrected semi-normal
/// equations). Updates β and sets the RSS to the Σr² accumulated in the
/// last pass, that is, of the β before the last correction (which changes
/// the RSS only in the second order: β is already at the minimum).
pub fn refine_tsqr<T: Real>(x: &[impl Borrow<DdColumn>], y: &DdColumn, sol: &mut TsqrSolution, steps: usize) {
    let x: Vec<&DdColumn> = x.iter().map(|c| c.borrow()).collect();
    let (n, k) = (y.len(), sol.rank);
    let r_at = |i: usize, j: usize| T::from_dd(sol.r_accepted[j * k + i]);
    for _ in 0..steps {
        // One pass, a block of rows at a time (each column read in order):
        // r = y − Xβ and Xᵀr of the scaled accepted columns.
        let mut g = vec![DD::ZERO; k];
        let mut rss = DD::ZERO;
        let mut e = vec![DD::ZERO; BLOCK];
        let mut start = 0;
        while start < n {
            let h = BLOCK.min(n - start);
            for (i, ei) in e[..h].iter_mut().enumerate() {
                *ei = y.get(start + i);
            }
            for &j in &sol.accepted {
                let b = sol.coef_dd[j];
                for (i, ei) in e[..h].iter_mut().enumerate() {
                    *ei = *ei - x[j].get(start + i) * b;
                }
            }
            for ei in &e[..h] {
                rss = rss + *ei * *ei;
            }
            // Xᵀr in double-double too: r is nearly orthogonal to X, and
            // the semi-normal equations multiply an error in Xᵀr by κ², so
            // rounding r to f64 first would lose digits (Longley: 11.7
            // instead of 14.6).
            for (pos, &j) in sol.accepted.iter().enumerate() {
                let s = sol.scales[j];
                let mut acc = DD::ZERO;
                for (i, ei) in e[..h].iter().enumerate() {
                    acc = acc + x[j].get(start + i).scale(s) * *ei;
                }
                g[pos] = g[pos] + acc;
            }
            start += h;
        }
        sol.rss = rss;
        let mut z: Vec<T> = g.iter().map(|&v| T::from_dd(v)).collect();
        solve_semi_normal(k, r_at, &mut z);
        for (pos, &j) in sol.accepted.iter().enumerate() {
            sol.coef_dd[j] = sol.coef_dd[j] + z[pos].to_dd().scale(sol.scales[j]);
            sol.coef[j] = sol.coef_dd[j].to_f64();
        }
    }
}

/// Rows per block of the refinement pass.
const BLOCK: usize = 256;

/// Solves RᵀRz = g in place (`z` holds g on entry): Rᵀw = g by forward
/// substitution, then Rz = w by back substitution; R is `k × k` upper
/// triangular, read through `r(i, j)`. The correction step of the
/// semi-normal equations, here and in [`super::solve_lstsq`].
pub(crate) fn solve_semi_normal<T: Real>(k: usize, r: impl Fn(usize, usize) -> T, z: &mut [T]) {
    for i in 0..k {
        let mut s = z[i];
        for l in 0..i {
            s = s - r(l, i) * z[l];
        }
        z[i] = s / r(i, i);
    }
    for i in (0..k).rev() {
        let mut s = z[i];
        for l in i + 1..k {
            s = s - r(i, l) * z[l];
        }
        z[i] = s / r(i, i);
    }
}
