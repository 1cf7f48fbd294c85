//! The per-interval cubic Hermite of ln Upsilon: its coefficients from knots and slopes, and its
//! value at a location, with linear continuation outside the grid.

use super::grid::Side;

/// Per-interval coefficients of the cubic Hermite in the fractional position f (in steps).
pub(super) fn hermite_coefficients(y: &[f64], slopes: &[f64], step: f64) -> Vec<[f64; 4]> {
    (0..y.len() - 1)
        .map(|i| {
            let (y0, y1) = (y[i], y[i + 1]);
            let (m0, m1) = (slopes[i] * step, slopes[i + 1] * step);
            let dy = y1 - y0;
            [y0, m0, 3.0 * dy - 2.0 * m0 - m1, -2.0 * dy + m0 + m1]
        })
        .collect()
}

/// ln Upsilon from one table's per-interval coefficients: the cubic inside the grid, linear
/// continuation from the end knots outside. Select-based and free of bounds panics.
#[inline(always)]
pub(super) fn ln_upsilon_cubic(coeffs: &[[f64; 4]], interval: usize, f: f64, side: Side) -> f64 {
    let [a, b, c, d] = coeffs[interval.min(coeffs.len() - 1)];
    let inside = a + f * (b + f * (c + f * d));
    // Linear continuation from the first knot with its slope (b is the slope per step).
    let below = a + f * b;
    // Linear continuation from the last knot: value a+b+c+d, slope b+2c+3d per step.
    let above = (a + b + c + d) + (f - 1.0) * (b + 2.0 * c + 3.0 * d);
    // Selects rather than a match, so loops over many locations need no branches.
    let outside = if side == Side::Below { below } else { above };
    if side == Side::Inside { inside } else { outside }
}
