//! LOWESS, the locally weighted scatterplot smoother of Cleveland (1979,
//! JASA 74, 829–836): at every x, a straight line fitted by weighted least
//! squares to the q = ⌈f·n⌉ nearest points with tricube weights
//! (1 − (d/h)³)³, h the distance to the q-th nearest; then `iterations`
//! robustness passes that multiply the weights by the bisquare
//! (1 − (r/6s)²)² of each residual r, s the median absolute residual.
//! Fitted at every point (no interpolation shortcut).

/// Smoothed values at each x, in the input order.
pub fn lowess(x: &[f64], y: &[f64], f: f64, iterations: usize) -> Vec<f64> {
    let n = x.len();
    if n == 0 {
        return Vec::new();
    }
    let mut order: Vec<usize> = (0..n).collect();
    order.sort_by(|&a, &b| x[a].total_cmp(&x[b]));
    let xs: Vec<f64> = order.iter().map(|&i| x[i]).collect();
    let ys: Vec<f64> = order.iter().map(|&i| y[i]).collect();
    let q = ((f * n as f64).ceil() as usize).clamp(2.min(n), n);
    let mut robust = vec![1.0; n];
    let mut fit = vec![0.0; n];
    for pass in 0..=iterations {
        for i in 0..n {
            fit[i] = local_fit(&xs, &ys, &robust, i, q);
        }
        if pass == iterations {
            break;
        }
        let resid: Vec<f64> = (0..n).map(|i| ys[i] - fit[i]).collect();
        let mut abs: Vec<f64> = resid.iter().map(|r| r.abs()).collect();
        abs.sort_by(|a, b| a.total_cmp(b));
        let s = if n % 2 == 1 { abs[n / 2] } else { 0.5 * (abs[n / 2 - 1] + abs[n / 2]) };
        if !(s > 0.0) {
            break;
        }
        for i in 0..n {
            let u = resid[i] / (6.0 * s);
            robust[i] = if u.abs() < 1.0 { (1.0 - u * u).powi(2) } else { 0.0 };
        }
    }
    let mut out = vec![0.0; n];
    for (k, &i) in order.iter().enumerate() {
        out[i] = fit[k];
    }
    out
}

/// The local line at sorted position i over its q nearest neighbours.
fn local_fit(xs: &[f64], ys: &[f64], robust: &[f64], i: usize, q: usize) -> f64 {
    let n = xs.len();
    let x0 = xs[i];
    // The q nearest: grow a window around i.
    let (mut lo, mut hi) = (i, i);
    while hi - lo + 1 < q {
        if lo == 0 {
            hi += 1;
        } else if hi == n - 1 || x0 - xs[lo - 1] <= xs[hi + 1] - x0 {
            lo -= 1;
        } else {
            hi += 1;
        }
    }
    let h = (x0 - xs[lo]).max(xs[hi] - x0);
    let mut w = vec![0.0; n];
    let (mut sw, mut swx, mut swy) = (0.0, 0.0, 0.0);
    // Points tied with the window's ends at distance h are included with
    // weight 0 by the tricube, so only the window needs scanning.
    for j in lo..=hi {
        let d = (xs[j] - x0).abs();
        let t = if h > 0.0 { d / h } else { 0.0 };
        let wj = if t < 1.0 { (1.0 - t * t * t).powi(3) } else { 0.0 } * robust[j];
        w[j] = wj;
        sw += wj;
        swx += wj * xs[j];
        swy += wj * ys[j];
    }
    if !(sw > 0.0) {
        return ys[i];
    }
    let xbar = swx / sw;
    let ybar = swy / sw;
    let (mut sxx, mut sxy) = (0.0, 0.0);
    for j in lo..=hi {
        let dx = xs[j] - xbar;
        sxx += w[j] * dx * dx;
        sxy += w[j] * dx * (ys[j] - ybar);
    }
    // A window with (numerically) one distinct x gives its weighted mean.
    let range = xs[hi] - xs[lo];
    if sxx <= 1e-12 * sw * range * range || range == 0.0 {
        return ybar;
    }
    ybar + sxy / sxx * (x0 - xbar)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_straight_line_is_reproduced() {
        let x: Vec<f64> = (0..30).map(|i| (i as f64 * 0.37).sin() * 10.0).collect();
        let y: Vec<f64> = x.iter().map(|v| 3.0 - 0.5 * v).collect();
        for it in [0, 3] {
            let s = lowess(&x, &y, 2.0 / 3.0, it);
            for (a, b) in s.iter().zip(&y) {
                assert!((a - b).abs() < 1e-12, "{a} vs {b}");
            }
        }
    }
}
