//! Solving with a pivoted QR factorization: applying Qᵀ, back-substitution
//! and the inverse of R.

use super::factor::{apply_reflector, PivotedQr};
use super::super::real::Real;

impl<T: Real> PivotedQr<T> {
    /// Entry (i, j) of R, 0 <= i <= j < rank.
    #[inline]
    pub fn r(&self, i: usize, j: usize) -> T {
        self.qr[j * self.rows + i]
    }

    /// Overwrites `y` (length `rows`) with Qᵀy.
    pub fn apply_qt(&self, y: &mut [T]) {
        let n = self.rows;
        for k in 0..self.rank {
            apply_reflector(&self.qr[k * n..(k + 1) * n], self.tau[k], k, y);
        }
    }

    /// Overwrites `y` (length `rows`) with Qy.
    pub fn apply_q(&self, y: &mut [T]) {
        let n = self.rows;
        for k in (0..self.rank).rev() {
            apply_reflector(&self.qr[k * n..(k + 1) * n], self.tau[k], k, y);
        }
    }

    /// Solves R x = b for the leading `rank` entries of `b`.
    pub fn solve_upper(&self, b: &[T]) -> Vec<T> {
        let r = self.rank;
        let mut x: Vec<T> = b[..r].to_vec();
        for i in (0..r).rev() {
            let mut s = x[i];
            for (j, &xj) in x.iter().enumerate().skip(i + 1) {
                s = s - self.r(i, j) * xj;
            }
            x[i] = s / self.r(i, i);
        }
        x
    }

    /// R⁻¹ as a column-major `rank x rank` upper-triangular matrix.
    pub fn invert_upper(&self) -> Vec<T> {
        let r = self.rank;
        let mut inv = vec![T::zero(); r * r];
        for j in 0..r {
            // Column j of R⁻¹ solves R x = e_j; only rows 0..=j are non-zero.
            inv[j * r + j] = T::from_f64(1.0) / self.r(j, j);
            for i in (0..j).rev() {
                let mut s = T::zero();
                for l in i + 1..=j {
                    s = s + self.r(i, l) * inv[j * r + l];
                }
                inv[j * r + i] = -s / self.r(i, i);
            }
        }
        inv
    }
}
