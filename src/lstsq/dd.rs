//! Double-double arithmetic: a number held as an unevaluated sum `hi + lo`
//! of two `f64`s, giving about 32 significant decimal digits.
//!
//! The algorithms are the error-free transformations of Knuth (TwoSum,
//! The Art of Computer Programming vol. 2, 1969) and Dekker (Split and
//! TwoProduct, "A floating-point technique for extending the available
//! precision", Numerische Mathematik 18, 1971), combined as in Hida, Li and
//! Bailey, "Algorithms for quad-double precision floating point arithmetic"
//! (ARITH-15, 2001). Products use Dekker's split rather than a fused
//! multiply-add so that native and wasm builds give bit-identical results.

use std::cmp::Ordering;
use std::ops::{Add, Div, Mul, Neg, Sub};

/// A double-double number `hi + lo` with `|lo| <= ulp(hi)/2`.
#[derive(Clone, Copy, Debug, Default, PartialEq)]
pub struct DD {
    pub hi: f64,
    pub lo: f64,
}

/// Knuth's TwoSum: `s + e == a + b` exactly.
#[inline]
fn two_sum(a: f64, b: f64) -> (f64, f64) {
    let s = a + b;
    let bb = s - a;
    let e = (a - (s - bb)) + (b - bb);
    (s, e)
}

/// Fast TwoSum, valid when `|a| >= |b|` (or `a == 0`).
#[inline]
fn quick_two_sum(a: f64, b: f64) -> (f64, f64) {
    let s = a + b;
    let e = b - (s - a);
    (s, e)
}

/// Dekker's split of `a` into two halves of 26 significant bits each.
#[inline]
fn split(a: f64) -> (f64, f64) {
    const SPLITTER: f64 = 134_217_729.0; // 2^27 + 1
    const LIMIT: f64 = 6.696_928_794_914_17e299; // beyond this, SPLITTER * a overflows
    if a.abs() > LIMIT {
        let a = a * 3.725_290_298_461_914e-9; // 2^-28
        let t = SPLITTER * a;
        let hi = t - (t - a);
        let lo = a - hi;
        (hi * 268_435_456.0, lo * 268_435_456.0)
    } else {
        let t = SPLITTER * a;
        let hi = t - (t - a);
        (hi, a - hi)
    }
}

/// Dekker's TwoProduct: `p + e == a * b` exactly (barring over/underflow).
#[inline]
fn two_prod(a: f64, b: f64) -> (f64, f64) {
    let p = a * b;
    if !p.is_finite() {
        return (p, 0.0);
    }
    let (ah, al) = split(a);
    let (bh, bl) = split(b);
    let e = ((ah * bh - p) + ah * bl + al * bh) + al * bl;
    (p, e)
}

impl DD {
    pub const ZERO: DD = DD { hi: 0.0, lo: 0.0 };
    pub const ONE: DD = DD { hi: 1.0, lo: 0.0 };

    /// An exact double-double from one `f64`.
    #[inline]
    pub const fn from_f64(x: f64) -> DD {
        DD { hi: x, lo: 0.0 }
    }

    /// Builds a normalised double-double from a possibly unnormalised pair.
    #[inline]
    pub fn from_parts(hi: f64, lo: f64) -> DD {
        let (h, l) = two_sum(hi, lo);
        DD { hi: h, lo: l }
    }

    /// The exact product of two `f64`s.
    #[inline]
    pub fn mul_f64s(a: f64, b: f64) -> DD {
        let (p, e) = two_prod(a, b);
        DD { hi: p, lo: e }
    }

    /// The nearest `f64`.
    #[inline]
    pub fn to_f64(self) -> f64 {
        self.hi + self.lo
    }

    #[inline]
    pub fn abs(self) -> DD {
        if self.hi < 0.0 || (self.hi == 0.0 && self.lo < 0.0) {
            -self
        } else {
            self
        }
    }

    #[inline]
    pub fn is_finite(self) -> bool {
        self.hi.is_finite() && self.lo.is_finite()
    }

    /// Square root by one Newton step on the `f64` root (Karp and Markstein 1997).
    pub fn sqrt(self) -> DD {
        if self.hi <= 0.0 {
            return DD::from_f64(self.hi.sqrt());
        }
        if !self.hi.is_finite() {
            return DD::from_f64(self.hi);
        }
        let x = self.hi.sqrt();
        let xx = DD::mul_f64s(x, x);
        let corr = (self - xx).hi / (2.0 * x);
        let (s, e) = quick_two_sum(x, corr);
        DD { hi: s, lo: e }
    }

    /// Multiplies by an exact power of two (no rounding).
    #[inline]
    pub fn scale(self, pow2: f64) -> DD {
        DD { hi: self.hi * pow2, lo: self.lo * pow2 }
    }

    /// Integer power by repeated squaring; every step is double-double.
    pub fn powi(self, k: u32) -> DD {
        let mut result = DD::ONE;
        let mut base = self;
        let mut k = k;
        while k > 0 {
            if k & 1 == 1 {
                result = result * base;
            }
            base = base * base;
            k >>= 1;
        }
        result
    }
}

impl Add for DD {
    type Output = DD;
    /// The accurate ("IEEE-style") double-double sum of Hida, Li and Bailey.
    #[inline]
    fn add(self, b: DD) -> DD {
        let (s1, s2) = two_sum(self.hi, b.hi);
        if !s1.is_finite() {
            return DD::from_f64(s1);
        }
        let (t1, t2) = two_sum(self.lo, b.lo);
        let s2 = s2 + t1;
        let (s1, s2) = quick_two_sum(s1, s2);
        let s2 = s2 + t2;
        let (hi, lo) = quick_two_sum(s1, s2);
        DD { hi, lo }
    }
}

impl Neg for DD {
    type Output = DD;
    #[inline]
    fn neg(self) -> DD {
        DD { hi: -self.hi, lo: -self.lo }
    }
}

impl Sub for DD {
    type Output = DD;
    #[inline]
    fn sub(self, b: DD) -> DD {
        self + (-b)
    }
}

impl Mul for DD {
    type Output = DD;
    #[inline]
    fn mul(self, b: DD) -> DD {
        let (p, e) = two_prod(self.hi, b.hi);
        if !p.is_finite() {
            return DD::from_f64(p);
        }
        let e = e + (self.hi * b.lo + self.lo * b.hi);
        let (hi, lo) = quick_two_sum(p, e);
        DD { hi, lo }
    }
}

impl Div for DD {
    type Output = DD;
    /// Long division with three quotient digits (Hida, Li and Bailey 2001).
    #[inline]
    fn div(self, b: DD) -> DD {
        let q1 = self.hi / b.hi;
        if !q1.is_finite() {
            return DD::from_f64(q1);
        }
        let r = self - b * DD::from_f64(q1);
        let q2 = r.hi / b.hi;
        let r = r - b * DD::from_f64(q2);
        let q3 = r.hi / b.hi;
        let (hi, lo) = quick_two_sum(q1, q2);
        DD { hi, lo } + DD::from_f64(q3)
    }
}

impl PartialOrd for DD {
    fn partial_cmp(&self, other: &DD) -> Option<Ordering> {
        match self.hi.partial_cmp(&other.hi) {
            Some(Ordering::Equal) => self.lo.partial_cmp(&other.lo),
            ord => ord,
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// 1/3 in double-double, checked against its defining identity.
    #[test]
    fn division_is_accurate_to_about_32_digits() {
        let third = DD::ONE / DD::from_f64(3.0);
        let back = third * DD::from_f64(3.0) - DD::ONE;
        assert!(back.to_f64().abs() < 1e-31, "3 * (1/3) - 1 = {:e}", back.to_f64());
    }

    #[test]
    fn products_of_doubles_are_exact() {
        // (1 + 2^-30)^2 = 1 + 2^-29 + 2^-60: the last bit is lost in f64 but kept here.
        let a = 1.0 + 2f64.powi(-30);
        let p = DD::mul_f64s(a, a);
        assert_eq!(p.hi, 1.0 + 2f64.powi(-29));
        assert_eq!(p.lo, 2f64.powi(-60));
    }

    #[test]
    fn sqrt_squares_back() {
        for &x in &[2.0, 3.0, 1e-300, 7.5e200, 0.1] {
            let r = DD::from_f64(x).sqrt();
            let err = (r * r - DD::from_f64(x)).to_f64().abs() / x;
            assert!(err < 1e-30, "sqrt({x}) squared back with relative error {err:e}");
        }
    }

    #[test]
    fn sums_keep_what_f64_drops() {
        let s = DD::from_f64(1e16) + DD::from_f64(1.0) - DD::from_f64(1e16);
        assert_eq!(s.to_f64(), 1.0);
    }

    #[test]
    fn powers_match_repeated_products() {
        let x = DD::from_f64(-6.860120914);
        let mut p = DD::ONE;
        for k in 0..=10u32 {
            let q = x.powi(k);
            let rel = ((q - p).to_f64() / p.to_f64()).abs();
            assert!(rel < 1e-30, "x^{k}: {rel:e}");
            p = p * x;
        }
    }

    #[test]
    fn huge_values_do_not_overflow_the_split() {
        let p = DD::mul_f64s(1e300, 1e-10);
        assert!((p.to_f64() - 1e290).abs() / 1e290 < 1e-15);
        assert!(p.lo.is_finite());
    }
}
