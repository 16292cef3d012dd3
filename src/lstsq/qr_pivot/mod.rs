//! Householder QR with column pivoting: factoring, solving and
//! reconstruction live in separate files.

mod factor;
mod reconstruct;
mod solve;

pub use factor::{factor_qr_pivoted, PivotedQr, QrParams};
pub(crate) use factor::norm;
