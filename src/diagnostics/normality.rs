//! Tests of normality for residuals.
//!
//! * Shapiro–Wilk W with Royston's approximations to the coefficients and
//!   to the null distribution (Royston 1995, "Remark AS R94", Applied
//!   Statistics 44, 547–551), for 3 ≤ n ≤ 5000.
//! * Anderson–Darling A² with mean and variance estimated, its small-sample
//!   form A*² = A²(1 + 0.75/n + 2.25/n²) and the p-value of D'Agostino and
//!   Stephens (1986, *Goodness-of-Fit Techniques*, Table 4.9).
//! * Jarque–Bera JB = n/6·(S² + (K − 3)²/4) with the moment skewness S and
//!   kurtosis K (Jarque and Bera 1980, Economics Letters 6), χ² on 2 df.

use serde::Serialize;

/// A test statistic and its p-value.
#[derive(Clone, Copy, Debug, PartialEq, Serialize)]
pub struct TestResult {
    #[serde(serialize_with = "crate::schema::num")]
    pub statistic: f64,
    #[serde(serialize_with = "crate::schema::num")]
    pub p_value: f64,
}

/// c[0] + c[1]x + c[2]x² + ...
fn poly(c: &[f64], x: f64) -> f64 {
    c.iter().rev().fold(0.0, |acc, &ci| acc * x + ci)
}

/// Royston's approximate Shapiro–Wilk coefficients a₁..a_{n/2} for the
/// largest order statistics (the others are their negatives).
pub fn shapiro_wilk_coefficients(n: usize) -> Vec<f64> {
    let nn2 = n / 2;
    if n == 3 {
        return vec![std::f64::consts::FRAC_1_SQRT_2];
    }
    const C1: [f64; 6] = [0.0, 0.221157, -0.147981, -2.071190, 4.434685, -2.706056];
    const C2: [f64; 6] = [0.0, 0.042981, -0.293762, -1.752461, 5.682633, -3.582633];
    let an = n as f64;
    let an25 = an + 0.25;
    // m[i] for i = 1..n/2 are the (negative) expected lower order statistics.
    let m: Vec<f64> = (1..=nn2).map(|i| crate::special::normal_quantile((i as f64 - 0.375) / an25)).collect();
    let summ2 = 2.0 * m.iter().map(|v| v * v).sum::<f64>();
    let ssumm2 = summ2.sqrt();
    let rsn = 1.0 / an.sqrt();
    let a1 = poly(&C1, rsn) - m[0] / ssumm2;
    let mut a = vec![0.0; nn2];
    a[0] = a1;
    let (first, fac) = if n > 5 {
        let a2 = -m[1] / ssumm2 + poly(&C2, rsn);
        a[1] = a2;
        (2, ((summ2 - 2.0 * m[0] * m[0] - 2.0 * m[1] * m[1]) / (1.0 - 2.0 * a1 * a1 - 2.0 * a2 * a2)).sqrt())
    } else {
        (1, ((summ2 - 2.0 * m[0] * m[0]) / (1.0 - 2.0 * a1 * a1)).sqrt())
    };
    for i in first..nn2 {
        a[i] = -m[i] / fac;
    }
    a
}

/// Shapiro–Wilk W and its p-value; `None` outside 3 ≤ n ≤ 5000 or when
/// the values do not vary.
pub fn shapiro_wilk(values: &[f64]) -> Option<TestResult> {
    let n = values.len();
    if !(3..=5000).contains(&n) {
        return None;
    }
    let mut x = values.to_vec();
    x.sort_by(|a, b| a.total_cmp(b));
    let range = x[n - 1] - x[0];
    if !(range > 1e-19 * x[n - 1].abs().max(1.0)) {
        return None;
    }
    let a = shapiro_wilk_coefficients(n);
    // Full antisymmetric coefficient vector, lowest order statistic first.
    let full: Vec<f64> = (0..n)
        .map(|i| {
            let j = n - 1 - i;
            if i < n / 2 {
                -a[i]
            } else if j < n / 2 {
                a[j]
            } else {
                0.0
            }
        })
        .collect();
    let mean_x = x.iter().sum::<f64>() / n as f64;
    let mean_a = full.iter().sum::<f64>() / n as f64;
    let (mut ssa, mut ssx, mut sax) = (0.0, 0.0, 0.0);
    for i in 0..n {
        let asa = full[i] - mean_a;
        let xsx = (x[i] - mean_x) / range;
        ssa += asa * asa;
        ssx += xsx * xsx;
        sax += asa * xsx;
    }
    // 1 − W in a form that keeps its digits when W is near 1.
    let ssassx = (ssa * ssx).sqrt();
    let w1 = (ssassx - sax) * (ssassx + sax) / (ssa * ssx);
    let w = 1.0 - w1;
    Some(TestResult { statistic: w, p_value: shapiro_wilk_p(w, w1, n) })
}

/// Royston's p-value of W.
fn shapiro_wilk_p(w: f64, w1: f64, n: usize) -> f64 {
    let an = n as f64;
    if n == 3 {
        // Exact for n = 3.
        let pi6 = 6.0 / std::f64::consts::PI;
        let stqr = std::f64::consts::PI / 3.0;
        return (pi6 * (w.sqrt().asin() - stqr)).clamp(0.0, 1.0);
    }
    const G: [f64; 2] = [-2.273, 0.459];
    const C3: [f64; 4] = [0.5440, -0.39978, 0.025054, -6.714e-4];
    const C4: [f64; 4] = [1.3822, -0.77857, 0.062767, -0.0020322];
    const C5: [f64; 4] = [-1.5861, -0.31082, -0.083751, 0.0038915];
    const C6: [f64; 3] = [-0.4803, -0.082676, 0.0030302];
    let mut y = w1.ln();
    let (m, s) = if n <= 11 {
        let gamma = poly(&G, an);
        if y >= gamma {
            return 1e-99;
        }
        y = -(gamma - y).ln();
        (poly(&C3, an), poly(&C4, an).exp())
    } else {
        let xx = an.ln();
        (poly(&C5, xx), poly(&C6, xx).exp())
    };
    // Upper tail of N(m, s).
    0.5 * libm::erfc((y - m) / s / std::f64::consts::SQRT_2)
}

/// ln Φ(z), accurate in the lower tail.
fn ln_phi(z: f64) -> f64 {
    (0.5 * libm::erfc(-z / std::f64::consts::SQRT_2)).ln()
}

/// Anderson–Darling test for normality with estimated mean and variance:
/// returns (A², A*², p-value); `None` for n < 8 (the p-value formula's
/// range) or no spread.
pub fn anderson_darling(values: &[f64]) -> Option<(f64, f64, f64)> {
    let n = values.len();
    if n < 8 {
        return None;
    }
    let nf = n as f64;
    let mean = values.iter().sum::<f64>() / nf;
    let sd = (values.iter().map(|v| (v - mean) * (v - mean)).sum::<f64>() / (nf - 1.0)).sqrt();
    if !(sd > 0.0) {
        return None;
    }
    let mut z: Vec<f64> = values.iter().map(|v| (v - mean) / sd).collect();
    z.sort_by(|a, b| a.total_cmp(b));
    let s: f64 = (0..n).map(|i| (2.0 * i as f64 + 1.0) * (ln_phi(z[i]) + ln_phi(-z[n - 1 - i]))).sum();
    let a2 = -nf - s / nf;
    let a2s = a2 * (1.0 + 0.75 / nf + 2.25 / (nf * nf));
    let p = if a2s >= 0.6 {
        (1.2937 - 5.709 * a2s + 0.0186 * a2s * a2s).exp()
    } else if a2s >= 0.34 {
        (0.9177 - 4.279 * a2s - 1.38 * a2s * a2s).exp()
    } else if a2s >= 0.2 {
        1.0 - (-8.318 + 42.796 * a2s - 59.938 * a2s * a2s).exp()
    } else {
        1.0 - (-13.436 + 101.14 * a2s - 223.73 * a2s * a2s).exp()
    };
    Some((a2, a2s, p.clamp(0.0, 1.0)))
}

/// Jarque–Bera test; `None` for n < 3 or no spread.
pub fn jarque_bera(values: &[f64]) -> Option<TestResult> {
    let n = values.len();
    if n < 3 {
        return None;
    }
    let nf = n as f64;
    let mean = values.iter().sum::<f64>() / nf;
    let (mut m2, mut m3, mut m4) = (0.0, 0.0, 0.0);
    for v in values {
        let d = v - mean;
        m2 += d * d;
        m3 += d * d * d;
        m4 += d * d * d * d;
    }
    let (m2, m3, m4) = (m2 / nf, m3 / nf, m4 / nf);
    if !(m2 > 0.0) {
        return None;
    }
    let s = m3 / m2.powf(1.5);
    let k = m4 / (m2 * m2);
    let jb = nf / 6.0 * (s * s + (k - 3.0) * (k - 3.0) / 4.0);
    Some(TestResult { statistic: jb, p_value: (-jb / 2.0).exp() })
}

#[cfg(test)]
mod tests {
    use super::*;

    /// For n = 3 the coefficient is exactly 1/√2, and for any n the full
    /// antisymmetric vector has unit length by construction.
    #[test]
    fn coefficients_have_unit_length() {
        assert_eq!(shapiro_wilk_coefficients(3), vec![std::f64::consts::FRAC_1_SQRT_2]);
        for n in [4, 5, 6, 11, 50, 1000] {
            let a = shapiro_wilk_coefficients(n);
            let ss: f64 = 2.0 * a.iter().map(|v| v * v).sum::<f64>();
            assert!((ss - 1.0).abs() < 1e-12, "n = {n}: Σa² = {ss}");
        }
    }

    #[test]
    fn equally_spaced_triples_have_w_one() {
        let r = shapiro_wilk(&[1.0, 2.0, 3.0]).unwrap();
        assert!((r.statistic - 1.0).abs() < 1e-15 && (r.p_value - 1.0).abs() < 1e-12, "{r:?}");
    }
}
