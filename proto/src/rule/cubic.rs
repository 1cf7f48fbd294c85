//! The per-interval cubic Hermite of ln Upsilon: its coefficients from knots and slopes, and its
//! value at a location, with linear continuation outside the grid.

use super::grid::Side;

/// The cubic Hermite's coefficients a, b, c, d of a + f (b + f (c + f d)) (f in steps) on
/// interval `i` (clamped to the last), from the (ln Upsilon, slope per log10 T) pairs, computed
/// where they are used: a table stores no coefficients, so a large species costs its knots and
/// slopes only, and a table file loads without building them. The vector kernels repeat these
/// operations in this order.
#[inline(always)]
pub(super) fn hermite_coefficients(knots: &[[f64; 2]], step: f64, i: usize) -> [f64; 4] {
    let i = i.min(knots.len() - 2);
    let ([y0, s0], [y1, s1]) = (knots[i], knots[i + 1]);
    let (m0, m1) = (s0 * step, s1 * step);
    let dy = y1 - y0;
    [y0, m0, 3.0 * dy - 2.0 * m0 - m1, -2.0 * dy + m0 + m1]
}

/// ln Upsilon of one table (knot pairs, grid step `step`): the cubic inside the grid,
/// linear continuation from the end knots outside. Select-based and free of bounds panics for
/// tables of two or more knots.
#[inline(always)]
pub(super) fn ln_upsilon_cubic(knots: &[[f64; 2]], step: f64, interval: usize, f: f64, side: Side) -> f64 {
    let [a, b, c, d] = hermite_coefficients(knots, step, interval);
    let inside = a + f * (b + f * (c + f * d));
    // Linear continuation from the first knot with its slope (b is the slope per step).
    let below = a + f * b;
    // Linear continuation from the last knot: value a+b+c+d, slope b+2c+3d per step.
    let above = (a + b + c + d) + (f - 1.0) * (b + 2.0 * c + 3.0 * d);
    // Selects rather than a match, so loops over many locations need no branches.
    let outside = if side == Side::Below { below } else { above };
    if side == Side::Inside { inside } else { outside }
}
