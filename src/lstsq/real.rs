//! The arithmetic the QR kernel is generic over: `f64` for the fast path and
//! [`DD`] (double-double) for the extended-precision path, so that both paths
//! run the very same algorithm.

use super::dd::DD;
use std::ops::{Add, Div, Mul, Neg, Sub};

/// A real number type the least-squares kernel can compute in.
pub trait Real:
    Copy
    + Send
    + Sync
    + PartialOrd
    + Add<Output = Self>
    + Sub<Output = Self>
    + Mul<Output = Self>
    + Div<Output = Self>
    + Neg<Output = Self>
{
    fn zero() -> Self;
    fn from_dd(x: DD) -> Self;
    fn from_f64(x: f64) -> Self;
    fn to_dd(self) -> DD;
    fn to_f64(self) -> f64;
    fn sqrt(self) -> Self;
    fn abs(self) -> Self;
    /// Unit roundoff of the type.
    const EPS: f64;
}

impl Real for f64 {
    const EPS: f64 = f64::EPSILON / 2.0;
    #[inline]
    fn zero() -> f64 {
        0.0
    }
    #[inline]
    fn from_dd(x: DD) -> f64 {
        x.to_f64()
    }
    #[inline]
    fn from_f64(x: f64) -> f64 {
        x
    }
    #[inline]
    fn to_dd(self) -> DD {
        DD::from_f64(self)
    }
    #[inline]
    fn to_f64(self) -> f64 {
        self
    }
    #[inline]
    fn sqrt(self) -> f64 {
        f64::sqrt(self)
    }
    #[inline]
    fn abs(self) -> f64 {
        f64::abs(self)
    }
}

impl Real for DD {
    /// 2^-104, the unit roundoff of double-double arithmetic.
    const EPS: f64 = 4.930_380_657_631_324e-32;
    #[inline]
    fn zero() -> DD {
        DD::ZERO
    }
    #[inline]
    fn from_dd(x: DD) -> DD {
        x
    }
    #[inline]
    fn from_f64(x: f64) -> DD {
        DD::from_f64(x)
    }
    #[inline]
    fn to_dd(self) -> DD {
        self
    }
    #[inline]
    fn to_f64(self) -> f64 {
        DD::to_f64(self)
    }
    #[inline]
    fn sqrt(self) -> DD {
        DD::sqrt(self)
    }
    #[inline]
    fn abs(self) -> DD {
        DD::abs(self)
    }
}
