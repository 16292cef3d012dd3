//! Power transforms that reduce skew, with λ chosen by maximum likelihood.
//!
//! * Box–Cox (Box and Cox 1964, JRSS B 26): y = (x^λ − 1)/λ, ln x at λ = 0,
//!   for x > 0. Profile log-likelihood ℓ(λ) = (λ − 1)Σ ln x − n/2·ln σ̂²(λ),
//!   σ̂² the variance (divided by n) of the transformed values.
//! * Yeo–Johnson (Yeo and Johnson 2000, Biometrika 87), for any sign:
//!   ℓ(λ) = (λ − 1)Σ sign(x)·ln(1 + |x|) − n/2·ln σ̂²(λ).
//!
//! λ̂ maximises ℓ by Brent's method (Brent 1973, *Algorithms for
//! Minimization without Derivatives*, ch. 5) after a grid search; the
//! confidence interval for Box–Cox is {λ : ℓ(λ) ≥ ℓ(λ̂) − ½χ²₁(1 − α)}.

use super::stats::mean;

/// The Box–Cox transform of one value.
pub fn boxcox(x: f64, lambda: f64) -> f64 {
    if lambda == 0.0 {
        libm::log(x)
    } else {
        libm::expm1(lambda * libm::log(x)) / lambda
    }
}

/// The Yeo–Johnson transform of one value.
pub fn yeojohnson(x: f64, lambda: f64) -> f64 {
    if x >= 0.0 {
        if lambda == 0.0 {
            libm::log1p(x)
        } else {
            libm::expm1(lambda * libm::log1p(x)) / lambda
        }
    } else if lambda == 2.0 {
        -libm::log1p(-x)
    } else {
        -libm::expm1((2.0 - lambda) * libm::log1p(-x)) / (2.0 - lambda)
    }
}

/// Variance with divisor n, by two passes.
fn variance(v: &[f64]) -> f64 {
    let m = mean(v);
    v.iter().map(|x| (x - m) * (x - m)).sum::<f64>() / v.len() as f64
}

/// The Box–Cox profile log-likelihood.
pub fn boxcox_llf(x: &[f64], lambda: f64) -> f64 {
    let n = x.len() as f64;
    let sum_log: f64 = x.iter().map(|v| v.ln()).sum();
    let t: Vec<f64> = x.iter().map(|&v| boxcox(v, lambda)).collect();
    let var = variance(&t);
    if var.is_nan() || var <= 0.0 || var.is_infinite() {
        return f64::NEG_INFINITY;
    }
    (lambda - 1.0) * sum_log - n / 2.0 * var.ln()
}

/// The Yeo–Johnson profile log-likelihood.
pub fn yeojohnson_llf(x: &[f64], lambda: f64) -> f64 {
    let n = x.len() as f64;
    let jac: f64 = x.iter().map(|&v| v.signum() * v.abs().ln_1p()).sum();
    let t: Vec<f64> = x.iter().map(|&v| yeojohnson(v, lambda)).collect();
    let var = variance(&t);
    if var.is_nan() || var <= 0.0 || var.is_infinite() {
        return f64::NEG_INFINITY;
    }
    (lambda - 1.0) * jac - n / 2.0 * var.ln()
}

/// Brent's minimisation of `f` on [a, b] to tolerance `tol` (Brent 1973,
/// procedure `localmin`).
pub fn brent_min(f: &dyn Fn(f64) -> f64, mut a: f64, mut b: f64, tol: f64) -> f64 {
    const C: f64 = 0.381_966_011_250_105_1; // (3 − √5)/2
    let eps = f64::EPSILON.sqrt();
    let mut x = a + C * (b - a);
    let (mut w, mut v) = (x, x);
    let mut fx = f(x);
    let (mut fw, mut fv) = (fx, fx);
    let (mut d, mut e) = (0.0f64, 0.0f64);
    for _ in 0..500 {
        let m = 0.5 * (a + b);
        let t2 = 2.0 * (eps * x.abs() + tol);
        if (x - m).abs() <= t2 - 0.5 * (b - a) {
            break;
        }
        let mut golden = true;
        if e.abs() > eps * x.abs() + tol {
            // Try a parabola through x, w, v.
            let r = (x - w) * (fx - fv);
            let mut q = (x - v) * (fx - fw);
            let mut p = (x - v) * q - (x - w) * r;
            q = 2.0 * (q - r);
            if q > 0.0 {
                p = -p;
            } else {
                q = -q;
            }
            let r = e;
            e = d;
            if p.abs() < (0.5 * q * r).abs() && p > q * (a - x) && p < q * (b - x) {
                d = p / q;
                let u = x + d;
                if u - a < t2 || b - u < t2 {
                    d = if x < m { tol.max(eps * x.abs()) } else { -tol.max(eps * x.abs()) };
                }
                golden = false;
            }
        }
        if golden {
            e = if x < m { b - x } else { a - x };
            d = C * e;
        }
        let step = if d.abs() >= tol { d } else if d > 0.0 { tol } else { -tol };
        let u = x + step;
        let fu = f(u);
        if fu <= fx {
            if u < x {
                b = x;
            } else {
                a = x;
            }
            (v, fv, w, fw, x, fx) = (w, fw, x, fx, u, fu);
        } else {
            if u < x {
                a = u;
            } else {
                b = u;
            }
            if fu <= fw || w == x {
                (v, fv, w, fw) = (w, fw, u, fu);
            } else if fu <= fv || v == x || v == w {
                (v, fv) = (u, fu);
            }
        }
    }
    x
}

/// Range searched for λ.
const LAMBDA_RANGE: (f64, f64) = (-10.0, 10.0);

/// λ maximising `llf` over [-10, 10]: the best point of a 0.25 grid,
/// then Brent's method around it.
fn maximise(llf: &dyn Fn(f64) -> f64) -> f64 {
    let (lo, hi) = LAMBDA_RANGE;
    let steps = ((hi - lo) / 0.25) as usize;
    let grid: Vec<f64> = (0..=steps).map(|i| lo + 0.25 * i as f64).collect();
    let best = grid.iter().copied().max_by(|a, b| llf(*a).total_cmp(&llf(*b))).unwrap_or(1.0);
    let neg = |l: f64| -llf(l);
    brent_min(&neg, (best - 0.25).max(lo), (best + 0.25).min(hi), 1e-12)
}

/// The Box–Cox λ̂ and its likelihood-ratio interval at `level`.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct BoxCoxFit {
    pub lambda: f64,
    pub ci_low: f64,
    pub ci_high: f64,
    pub llf: f64,
}

/// Fits Box–Cox to positive values (needs at least 3, not all equal).
/// `None` also when the likelihood interval for λ is wider than [-10, 10].
pub fn fit_boxcox(x: &[f64], level: f64) -> Option<BoxCoxFit> {
    if x.len() < 3 || x.iter().any(|&v| v.is_nan() || v <= 0.0 || v.is_infinite()) || variance(x) == 0.0 {
        return None;
    }
    let llf = |l: f64| boxcox_llf(x, l);
    let lambda = maximise(&llf);
    let top = llf(lambda);
    let chi = chi2_1_quantile(level);
    let cut = top - 0.5 * chi;
    let root = |from: f64, to: f64| -> f64 {
        // Bisection on llf − cut between λ̂ (above) and `to` (below, if it is).
        if llf(to) >= cut {
            return to;
        }
        let (mut inside, mut outside) = (from, to);
        for _ in 0..200 {
            let mid = 0.5 * (inside + outside);
            if llf(mid) >= cut {
                inside = mid;
            } else {
                outside = mid;
            }
            if (outside - inside).abs() < 1e-13 * (1.0 + mid.abs()) {
                break;
            }
        }
        0.5 * (inside + outside)
    };
    let (ci_low, ci_high) = (root(lambda, lambda - 20.0), root(lambda, lambda + 20.0));
    // When the interval runs past the searched range the data do not pin λ
    // down (the likelihood is flat, as for values that barely vary).
    if ci_low < LAMBDA_RANGE.0 || ci_high > LAMBDA_RANGE.1 {
        return None;
    }
    Some(BoxCoxFit { lambda, ci_low, ci_high, llf: top })
}

/// The Yeo–Johnson λ̂ (needs at least 3 values, not all equal).
pub fn fit_yeojohnson(x: &[f64]) -> Option<f64> {
    if x.len() < 3 || x.iter().any(|v| !v.is_finite()) || variance(x) == 0.0 {
        return None;
    }
    Some(maximise(&|l| yeojohnson_llf(x, l)))
}

/// The χ² quantile with one degree of freedom at probability `p`.
fn chi2_1_quantile(p: f64) -> f64 {
    use statrs::distribution::{ChiSquared, ContinuousCDF};
    ChiSquared::new(1.0).expect("one degree of freedom").inverse_cdf(p)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn brent_finds_a_parabola_minimum() {
        let x = brent_min(&|x| (x - 1.234_567) * (x - 1.234_567) + 3.0, -5.0, 5.0, 1e-12);
        assert!((x - 1.234_567).abs() < 1e-8, "{x}");
    }

    #[test]
    fn transforms_meet_their_limits() {
        assert!((boxcox(2.0, 1e-12) - 2f64.ln()).abs() < 1e-11);
        // λ = 1 is x − 1 (Box–Cox) and x (Yeo–Johnson), to a few ulps
        // through exp(log(·)).
        let near = |a: f64, b: f64| (a - b).abs() <= 4.0 * f64::EPSILON * b.abs();
        assert!(near(boxcox(3.0, 1.0), 2.0), "{}", boxcox(3.0, 1.0));
        assert!((yeojohnson(-3.0, 2.0 - 1e-12) - yeojohnson(-3.0, 2.0)).abs() < 1e-10);
        assert!(near(yeojohnson(3.0, 1.0), 3.0));
        assert!(near(yeojohnson(-3.0, 1.0), -3.0));
    }
}
