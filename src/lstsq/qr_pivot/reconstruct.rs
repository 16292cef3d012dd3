//! Forming Q and R explicitly, for leverages and for testing that the
//! factorization reproduces its input (X·P ≈ Q·R).

use super::factor::PivotedQr;
use super::super::real::Real;

impl<T: Real> PivotedQr<T> {
    /// The thin Q, column-major `rows x rank`, with orthonormal columns.
    pub fn thin_q(&self) -> Vec<T> {
        let n = self.rows;
        let mut q = vec![T::zero(); n * self.rank];
        for k in 0..self.rank {
            let col = &mut q[k * n..(k + 1) * n];
            col[k] = T::from_f64(1.0);
            self.apply_q(col);
        }
        q
    }

    /// R as a dense column-major `rank x rank` matrix.
    pub fn r_matrix(&self) -> Vec<T> {
        let r = self.rank;
        let mut m = vec![T::zero(); r * r];
        for j in 0..r {
            for i in 0..=j {
                m[j * r + i] = self.r(i, j);
            }
        }
        m
    }
}
