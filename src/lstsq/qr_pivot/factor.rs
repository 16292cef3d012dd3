//! Householder QR with column pivoting by deferral.
//!
//! Columns are taken in the order the user gave them. At each step the next
//! column's norm below the diagonal (its distance from the span of the
//! columns already taken) is compared with `rank_tol` times its original
//! norm; a column that falls under it is numerically a combination of
//! earlier columns, so it is *deferred*: moved out of the factorization and
//! reported as aliased. This is the limited pivoting that keeps a stable,
//! user-visible column order (the later of two duplicates is the aliased
//! one) while still revealing rank; the condition number of the accepted
//! columns is estimated afterwards, so near-dependence that passes the
//! tolerance is still caught. Householder reflections as in Golub and Van
//! Loan, *Matrix Computations* (4th ed., 2013), Algorithm 5.1.1, in the
//! normalisation of LAPACK's `dlarfg` (v[0] = 1 implicit).

use super::super::real::Real;

/// Tuning for the factorization.
#[derive(Clone, Copy, Debug)]
pub struct QrParams {
    /// A column whose remaining norm is at most `rank_tol` times its original
    /// norm is treated as aliased.
    pub rank_tol: f64,
}

/// The factored matrix and what the factorization found.
#[derive(Clone, Debug)]
pub struct PivotedQr<T> {
    pub rows: usize,
    /// Number of accepted (linearly independent) columns: the numerical rank.
    pub rank: usize,
    /// Column-major `rows x rank`: R on and above the diagonal, the
    /// Householder vectors (without their implicit leading 1) below it.
    pub qr: Vec<T>,
    /// Householder scalars, one per accepted column.
    pub tau: Vec<T>,
    /// `accepted[k]` is the input column index at position `k` of R.
    pub accepted: Vec<usize>,
    /// Input columns found aliased, in input order.
    pub aliased: Vec<usize>,
}

/// Factors the column-major `rows x cols` matrix `a` (consumed).
pub fn factor_qr_pivoted<T: Real>(mut a: Vec<T>, rows: usize, cols: usize, params: QrParams) -> PivotedQr<T> {
    assert_eq!(a.len(), rows * cols, "matrix storage does not match its shape");
    let n = rows;
    let orig_norm: Vec<T> = (0..cols).map(|j| norm(&a[j * n..(j + 1) * n])).collect();
    // position -> input column; columns [k, end) are still candidates.
    let mut order: Vec<usize> = (0..cols).collect();
    let mut end = cols;
    let mut tau = Vec::with_capacity(cols.min(n));
    let mut aliased = Vec::new();
    let mut k = 0;
    while k < end && k < n {
        let col = &a[k * n..(k + 1) * n];
        let rest = norm(&col[k..]);
        let limit = orig_norm[order[k]] * T::from_f64(params.rank_tol);
        if rest.partial_cmp(&limit) != Some(std::cmp::Ordering::Greater) {
            // Defer: rotate this column to the end of the candidates.
            aliased.push(order[k]);
            a[k * n..end * n].rotate_left(n);
            order[k..end].rotate_left(1);
            end -= 1;
            continue;
        }
        let t = householder_in_place(&mut a[k * n..(k + 1) * n], k, rest);
        tau.push(t);
        // Apply H_k to the remaining candidate columns.
        let (head, tail) = a.split_at_mut((k + 1) * n);
        let v = &head[k * n..];
        for j in 0..(end - k - 1) {
            let c = &mut tail[j * n..(j + 1) * n];
            apply_reflector(v, t, k, c);
        }
        k += 1;
    }
    // Columns never reached (more columns than rows) are aliased too.
    for &j in &order[k..end] {
        aliased.push(j);
    }
    let rank = k;
    a.truncate(rank * n);
    aliased.sort_unstable();
    PivotedQr { rows: n, rank, qr: a, tau, accepted: order[..rank].to_vec(), aliased }
}

/// 2-norm, computed with a scale to avoid overflow and underflow.
pub(crate) fn norm<T: Real>(x: &[T]) -> T {
    let mut scale = 0.0f64;
    for v in x {
        let a = v.to_f64().abs();
        if a > scale {
            scale = a;
        }
    }
    if scale == 0.0 || !scale.is_finite() {
        return T::from_f64(scale);
    }
    // A power of two, so the scaling is exact.
    let s = 2f64.powi(scale.log2().ceil() as i32);
    let inv = T::from_f64(1.0 / s);
    let mut sum = T::zero();
    for &v in x {
        let w = v * inv;
        sum = sum + w * w;
    }
    sum.sqrt() * T::from_f64(s)
}

/// Turns `col[k..]` into a Householder vector; returns tau. `col[k]` becomes R's
/// diagonal entry, `col[k+1..]` the vector below the implicit 1.
fn householder_in_place<T: Real>(col: &mut [T], k: usize, xnorm: T) -> T {
    let alpha = col[k];
    let beta = if alpha.to_f64() >= 0.0 { -xnorm } else { xnorm };
    let t = (beta - alpha) / beta;
    let scale = alpha - beta;
    for v in col[k + 1..].iter_mut() {
        *v = *v / scale;
    }
    col[k] = beta;
    t
}

/// `c <- (I - tau v v^T) c` on rows `k..`, with v[k] = 1 implicit.
#[inline]
pub(crate) fn apply_reflector<T: Real>(v: &[T], tau: T, k: usize, c: &mut [T]) {
    let mut w = c[k];
    for i in k + 1..v.len() {
        w = w + v[i] * c[i];
    }
    let w = w * tau;
    c[k] = c[k] - w;
    for i in k + 1..v.len() {
        c[i] = c[i] - w * v[i];
    }
}
