//! Passes over the rows, a block at a time: residuals and Xᵀr to about
//! twice double precision, and rows of Q computed from X and R⁻¹.
//!
//! Nothing here holds more than one block of rows beyond its inputs, so a
//! fit keeps O(p²) numbers besides the data, its residuals and (when asked
//! for) its leverages.
//!
//! **Residuals.** r = y − Xβ is accumulated with error-free
//! transformations instead of double-double operations: each product
//! xᵢⱼ·βⱼ is split exactly into two doubles (Dekker's TwoProduct), the
//! running sum is kept exactly as a double and its error term (Knuth's
//! TwoSum), and the small parts are summed in a second double. This is
//! `Dot2` of Ogita, Rump and Oishi (2005, "Accurate sum and dot product",
//! SIAM J. Sci. Comput. 26): the result is as accurate as if computed in
//! twice the working precision and then rounded, like the double-double
//! arithmetic it replaces, at about half its cost, and the loop over rows
//! is straight-line code that the compiler vectorises. No fused
//! multiply-add is used, so native and wasm builds give the same bits.
//!
//! The splitting needs |a| below about 6.7e299; it is applied to the
//! power-of-two-scaled columns (|x| ≤ 1) and to coefficients of the scaled
//! problem, and the caller falls back to double-double operations when a
//! coefficient is beyond 1e290.

use super::dd::DD;
use super::real::Real;
use super::DdColumn;

/// Rows per block: 256 rows of 50 columns are 100 kB, within L2 cache.
pub const BLOCK: usize = 256;

/// Rows per chunk of the passes that may run on several threads. The
/// chunks depend only on the number of rows, never on the number of
/// threads, and their results are combined in chunk order, so a fit gives
/// the same bits on one thread or eight, natively or in wasm.
pub const CHUNK_ROWS: usize = 32 * 1024;

/// The threads a fit may use when the caller leaves it to the machine:
/// every core (at most 8) natively, one in wasm.
pub fn machine_threads() -> usize {
    #[cfg(target_arch = "wasm32")]
    {
        1
    }
    #[cfg(not(target_arch = "wasm32"))]
    {
        std::thread::available_parallelism().map_or(1, |n| n.get()).min(8)
    }
}

/// `f(i)` for i in `0..count`, in index order, computed on up to
/// `threads` threads (each takes a contiguous run of indices).
pub fn map_chunks<R: Send>(count: usize, threads: usize, f: impl Fn(usize) -> R + Sync) -> Vec<R> {
    let threads = threads.clamp(1, count.max(1));
    if threads == 1 {
        return (0..count).map(f).collect();
    }
    let per = count.div_ceil(threads);
    std::thread::scope(|scope| {
        let f = &f;
        let handles: Vec<_> =
            (0..threads).map(|t| scope.spawn(move || (t * per..((t + 1) * per).min(count)).map(f).collect::<Vec<R>>())).collect();
        handles.into_iter().flat_map(|h| h.join().unwrap_or_else(|e| std::panic::resume_unwind(e))).collect()
    })
}

/// Coefficients this large or larger are not split (see the module doc).
pub const SPLIT_LIMIT: f64 = 1e290;

const SPLITTER: f64 = 134_217_729.0; // 2^27 + 1

/// Dekker's split of `a` (|a| < 6.7e299) into two 26-bit halves.
#[inline(always)]
fn split(a: f64) -> (f64, f64) {
    let t = SPLITTER * a;
    let hi = t - (t - a);
    (hi, a - hi)
}

/// Defines `$name`, which runs the `#[inline(always)]` function `$body`
/// compiled for 256-bit vectors (AVX2) when the processor has them, and as
/// it is otherwise. The results are the same bits either way: the
/// operations and their order are fixed in the source (interleaved sums,
/// no reassociation, no fused multiply-add); only how many lanes run at
/// once changes. wasm builds have the one version.
macro_rules! wide_vectors {
    ($(#[$doc:meta])* $vis:vis fn $name:ident<$($g:ident: $b:path),*>($($arg:ident: $ty:ty),*) $(-> $ret:ty)? = $body:path;) => {
        $(#[$doc])*
        $vis fn $name<$($g: $b),*>($($arg: $ty),*) $(-> $ret)? {
            #[cfg(target_arch = "x86_64")]
            {
                #[target_feature(enable = "avx2")]
                unsafe fn wide<$($g: $b),*>($($arg: $ty),*) $(-> $ret)? {
                    $body($($arg),*)
                }
                if std::arch::is_x86_feature_detected!("avx2") {
                    // SAFETY: the processor supports AVX2, checked just above.
                    return unsafe { wide($($arg),*) };
                }
            }
            $body($($arg),*)
        }
    };
}
pub(crate) use wide_vectors;

/// A column of the scaled system: the input column, the power of two it is
/// multiplied by, and its coefficient.
#[derive(Clone, Copy)]
pub struct Term<'a> {
    pub col: &'a DdColumn,
    pub scale: f64,
    pub coef: DD,
}

/// r = y − Σ xⱼ·scaleⱼ·βⱼ on rows `start..start + out.len()`, written to
/// `out` as double-double (`y` is the scaled response).
#[inline(always)]
pub fn residual_block(terms: &[Term], y: &DdColumn, start: usize, out: &mut [DD], s: &mut Vec<f64>, c: &mut Vec<f64>) {
    let h = out.len();
    s.clear();
    s.extend_from_slice(&y.hi[start..start + h]);
    c.clear();
    match &y.lo {
        Some(lo) => c.extend_from_slice(&lo[start..start + h]),
        None => c.resize(h, 0.0),
    }
    for t in terms {
        let (bh, bl) = (t.coef.hi, t.coef.lo);
        let (bhh, bhl) = split(bh);
        let scale = t.scale;
        let xh = &t.col.hi[start..start + h];
        for ((si, ci), &x) in s.iter_mut().zip(c.iter_mut()).zip(xh) {
            let xs = x * scale;
            let p = xs * bh;
            let (ah, al) = split(xs);
            let pe = ((ah * bhh - p) + ah * bhl + al * bhh) + al * bhl;
            let tsum = *si - p;
            let bb = tsum - *si;
            let se = (*si - (tsum - bb)) + (-p - bb);
            *si = tsum;
            *ci += se - pe - xs * bl;
        }
        if let Some(lo) = &t.col.lo {
            for (ci, &xl) in c.iter_mut().zip(&lo[start..start + h]) {
                *ci -= (xl * scale) * bh;
            }
        }
    }
    for ((o, &si), &ci) in out.iter_mut().zip(s.iter()).zip(c.iter()) {
        *o = DD::from_parts(si, ci);
    }
}

/// Σᵢ xᵢ·scale·eᵢ over rows `start..start + e.len()`, to about twice
/// double precision (four interleaved sums in a fixed order).
#[inline(always)]
pub fn dot_block(col: &DdColumn, scale: f64, start: usize, e: &[DD]) -> DD {
    let h = e.len();
    let xh = &col.hi[start..start + h];
    let mut sum = [0.0f64; 4];
    let mut err = [0.0f64; 4];
    let chunks = h / 4 * 4;
    for (xc, ec) in xh[..chunks].chunks_exact(4).zip(e[..chunks].chunks_exact(4)) {
        for l in 0..4 {
            let xs = xc[l] * scale;
            let (eh, el) = (ec[l].hi, ec[l].lo);
            let p = xs * eh;
            let (ah, al) = split(xs);
            let (bh, bl) = split(eh);
            let pe = ((ah * bh - p) + ah * bl + al * bh) + al * bl;
            let t = sum[l] + p;
            let bb = t - sum[l];
            let se = (sum[l] - (t - bb)) + (p - bb);
            sum[l] = t;
            err[l] += se + pe + xs * el;
        }
    }
    let mut tail = DD::ZERO;
    for i in chunks..h {
        tail = tail + DD::mul_f64s(xh[i] * scale, e[i].hi) + DD::from_f64(xh[i] * scale * e[i].lo);
    }
    if let Some(lo) = &col.lo {
        // The low parts of the column enter to first order only.
        let mut s = 0.0;
        for (&xl, ei) in lo[start..start + h].iter().zip(e) {
            s += (xl * scale) * ei.hi;
        }
        tail = tail + DD::from_f64(s);
    }
    let lane = |l: usize| DD::from_parts(sum[l], err[l]);
    ((lane(0) + lane(1)) + (lane(2) + lane(3))) + tail
}

/// Rows `start..start + h` of Q = X̃R⁻¹, where X̃ holds the accepted columns
/// scaled by their powers of two and R⁻¹ (`k × k`, column-major, upper
/// triangular) is that of X̃'s R factor. Computed in `T`; written to `out`
/// column-major `h × k` in `f64`. `xs` is scratch.
#[inline(always)]
pub fn q_block<T: Real>(cols: &[(&DdColumn, f64)], r_inv: &[T], start: usize, h: usize, xs: &mut Vec<T>, out: &mut [f64]) {
    let k = cols.len();
    xs.clear();
    for &(c, s) in cols {
        match &c.lo {
            None => xs.extend(c.hi[start..start + h].iter().map(|&v| T::from_f64(v * s))),
            Some(_) => xs.extend((start..start + h).map(|i| T::from_dd(c.get(i).scale(s)))),
        }
    }
    let mut q = vec![T::zero(); h];
    for j in 0..k {
        q.iter_mut().for_each(|v| *v = T::zero());
        for a in 0..=j {
            let m = r_inv[j * k + a];
            for (qi, &xi) in q.iter_mut().zip(&xs[a * h..(a + 1) * h]) {
                *qi = *qi + xi * m;
            }
        }
        for (o, v) in out[j * h..(j + 1) * h].iter_mut().zip(&q) {
            *o = v.to_f64();
        }
    }
}
