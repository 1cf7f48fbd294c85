//! Shape-preserving knot slopes for ln Upsilon on a uniform grid.

/// Shape-preserving knot slopes for data on a uniform grid of spacing `step` (Fritsch & Carlson
/// 1980, SIAM J. Numer. Anal. 17, 238, with the weighted-harmonic-mean interior slopes of
/// Fritsch & Butland 1984 and the three-point end formula of Moler's `pchip`).
pub fn monotone_slopes(y: &[f64], step: f64) -> Vec<f64> {
    let n = y.len();
    let delta: Vec<f64> = y.windows(2).map(|w| (w[1] - w[0]) / step).collect();
    let mut m = vec![0.0; n];
    if n == 2 {
        m[0] = delta[0];
        m[1] = delta[0];
        return m;
    }
    for k in 1..n - 1 {
        let (a, b) = (delta[k - 1], delta[k]);
        m[k] = if a == 0.0 || b == 0.0 || (a > 0.0) != (b > 0.0) {
            0.0
        } else {
            // Uniform spacing: weights 3h on both sides, so the weighted harmonic mean is 2ab/(a+b).
            2.0 / (1.0 / a + 1.0 / b)
        };
    }
    m[0] = end_slope(delta[0], delta[1]);
    m[n - 1] = end_slope(delta[n - 2], delta[n - 3]);
    m
}

/// Three-point end slope kept shape-preserving (uniform spacing form).
fn end_slope(d0: f64, d1: f64) -> f64 {
    let m = (3.0 * d0 - d1) / 2.0;
    if m == 0.0 || d0 == 0.0 || (m > 0.0) != (d0 > 0.0) {
        0.0
    } else if (d0 > 0.0) != (d1 > 0.0) && m.abs() > 3.0 * d0.abs() {
        3.0 * d0
    } else {
        m
    }
}
