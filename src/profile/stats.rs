//! Summaries of a numeric sample: location, spread and shape.

use crate::lstsq::dd::DD;
use serde::Serialize;

/// Summaries of the non-missing values of a column.
#[derive(Clone, Debug, Default, PartialEq, Serialize)]
pub struct Summary {
    pub count: usize,
    #[serde(serialize_with = "crate::schema::opt_num")]
    pub min: Option<f64>,
    #[serde(serialize_with = "crate::schema::opt_num")]
    pub max: Option<f64>,
    #[serde(serialize_with = "crate::schema::opt_num")]
    pub mean: Option<f64>,
    #[serde(serialize_with = "crate::schema::opt_num")]
    pub median: Option<f64>,
    /// Sample standard deviation (n − 1 in the denominator).
    #[serde(serialize_with = "crate::schema::opt_num")]
    pub sd: Option<f64>,
    /// Adjusted Fisher–Pearson skewness G1 (needs n ≥ 3).
    #[serde(serialize_with = "crate::schema::opt_num")]
    pub skewness: Option<f64>,
    /// Standard error of G1 under normality: √(6n(n−1)/((n−2)(n+1)(n+3))).
    #[serde(serialize_with = "crate::schema::opt_num")]
    pub skewness_se: Option<f64>,
    /// Adjusted excess kurtosis G2 (needs n ≥ 4).
    #[serde(serialize_with = "crate::schema::opt_num")]
    pub kurtosis: Option<f64>,
}

/// Central moments m2, m3, m4 (divided by n). The mean is held in
/// double-double, so the deviations are exact to rounding even when the
/// values barely differ (250.0001, 250.0058, ...).
fn moments(v: &[f64], _mean: f64) -> (f64, f64, f64) {
    let n = v.len() as f64;
    let mean_dd = v.iter().fold(DD::ZERO, |s, &x| s + DD::from_f64(x)) / DD::from_f64(n);
    let (mut m2, mut m3, mut m4) = (0.0, 0.0, 0.0);
    for &x in v {
        let d = (DD::from_f64(x) - mean_dd).to_f64();
        let d2 = d * d;
        m2 += d2;
        m3 += d2 * d;
        m4 += d2 * d2;
    }
    (m2 / n, m3 / n, m4 / n)
}

/// Mean, summed in double-double.
pub fn mean(v: &[f64]) -> f64 {
    (v.iter().fold(DD::ZERO, |s, &x| s + DD::from_f64(x)) / DD::from_f64(v.len() as f64)).to_f64()
}

/// Adjusted Fisher–Pearson skewness G1 = g1·√(n(n−1))/(n−2), with
/// g1 = m3/m2^{3/2} (Joanes and Gill 1998, The Statistician 47). `None`
/// for n < 3 or no spread.
pub fn skewness(v: &[f64]) -> Option<f64> {
    let n = v.len();
    if n < 3 {
        return None;
    }
    let (m2, m3, _) = moments(v, mean(v));
    if m2 <= 0.0 || !m2.is_finite() {
        return None;
    }
    let nf = n as f64;
    let g1 = m3 / m2.powf(1.5);
    Some(g1 * (nf * (nf - 1.0)).sqrt() / (nf - 2.0))
}

/// Standard error of G1 for a normal sample of size n.
pub fn skewness_se(n: usize) -> Option<f64> {
    if n < 3 {
        return None;
    }
    let n = n as f64;
    Some((6.0 * n * (n - 1.0) / ((n - 2.0) * (n + 1.0) * (n + 3.0))).sqrt())
}

/// Adjusted excess kurtosis G2 = ((n+1)g2 + 6)(n−1)/((n−2)(n−3)), with
/// g2 = m4/m2² − 3 (Joanes and Gill 1998). `None` for n < 4 or no spread.
pub fn kurtosis(v: &[f64]) -> Option<f64> {
    let n = v.len();
    if n < 4 {
        return None;
    }
    let (m2, _, m4) = moments(v, mean(v));
    if m2 <= 0.0 || !m2.is_finite() {
        return None;
    }
    let nf = n as f64;
    let g2 = m4 / (m2 * m2) - 3.0;
    Some(((nf + 1.0) * g2 + 6.0) * (nf - 1.0) / ((nf - 2.0) * (nf - 3.0)))
}

/// The median of sorted values.
fn median_sorted(s: &[f64]) -> f64 {
    let n = s.len();
    if n % 2 == 1 {
        s[n / 2]
    } else {
        (s[n / 2 - 1] + s[n / 2]) / 2.0
    }
}

/// All summaries of the values (missing values already removed).
pub fn summarise(v: &[f64]) -> Summary {
    let n = v.len();
    if n == 0 {
        return Summary::default();
    }
    let mut s = v.to_vec();
    s.sort_by(|a, b| a.total_cmp(b));
    let m = mean(v);
    let sd = (n > 1).then(|| (moments(v, m).0 * n as f64 / (n as f64 - 1.0)).sqrt());
    Summary {
        count: n,
        min: Some(s[0]),
        max: Some(s[n - 1]),
        mean: Some(m),
        median: Some(median_sorted(&s)),
        sd,
        skewness: skewness(v),
        skewness_se: skewness_se(n),
        kurtosis: kurtosis(v),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Hand-computed: 1, 2, 3, 10 has mean 4, m2 = 12.5, m3 = 45, m4 = 348.5.
    #[test]
    fn small_sample_by_hand() {
        let v = [1.0, 2.0, 3.0, 10.0];
        let s = summarise(&v);
        assert_eq!(s.mean, Some(4.0));
        assert_eq!(s.median, Some(2.5));
        let g1 = 45.0 / 12.5f64.powf(1.5);
        let want = g1 * (12.0f64).sqrt() / 2.0;
        assert!((s.skewness.unwrap() - want).abs() < 1e-14);
        let g2 = 348.5 / (12.5 * 12.5) - 3.0;
        let want = (5.0 * g2 + 6.0) * 3.0 / 2.0;
        assert!((s.kurtosis.unwrap() - want).abs() < 1e-13);
        assert_eq!(summarise(&[5.0, 5.0, 5.0]).skewness, None, "no spread, no skewness");
        // Values that barely differ: G1 of (250.0058, 250.0001, 250.004,
        // 249.9976, 250.0014) is -0.0239806594022100578... (mpmath, 50 digits,
        // computed for this check from the decimal values).
        let g = skewness(&[250.0058, 250.0001, 250.004, 249.9976, 250.0014]).unwrap();
        assert!((g + 0.023_980_659_402_210_06).abs() < 1e-9, "{g}");
    }
}
