//! The served interpolation-error bound of a table: where the table is compared with direct
//! evaluation of its source, and how those comparisons are turned into a bound for the whole
//! interval.
//!
//! Within one grid interval, with t in [0, 1] the position in steps of log10 T, let
//! d(t) = ln(tabulated / direct). It vanishes at the knots. For a smooth source the cubic
//! Hermite error with estimated knot slopes is, to leading order,
//! d(t) = t (1 - t) p(t) with p quadratic: the slope errors give h e_0 t (1 - t)^2 and
//! -h e_1 t^2 (1 - t), the fourth derivative t^2 (1 - t)^2 f''''/24 (de Boor, A Practical Guide
//! to Splines, 2001, ch. IV, the cubic Hermite error formula). Slope errors alone make d
//! vanish near the middle and peak near t = 1/3 and 2/3, so the middle alone is no measure.
//!
//! - Ordinary intervals: d is measured at t = 1/4, 1/2, 3/4 ([`MODEL_FRACTIONS`]); p is the
//!   quadratic through d / (t (1 - t)) there; the model d is evaluated at t = k/16,
//!   k = 0..=16, and the interval's bound is the largest |d_k| plus an eighth of the largest
//!   second difference |d_(k+1) - 2 d_k + d_(k-1)| (for a function sampled every delta, the
//!   excess of its maximum over the largest sample is at most delta^2 max|d''| / 8, and
//!   delta^2 d'' is what the second difference measures).
//! - Intervals holding, strictly inside, a point where the source's second derivative jumps
//!   (the nodes of a piecewise interpolant, see [`super::UpsilonSource::breakpoints_k`]; one at
//!   a knot leaves both neighbours smooth): the leading-order form
//!   does not hold there, so d is measured directly at t = k/8, k = 1..=7, and the same
//!   sample-plus-second-difference rule is applied to those measurements.
//!
//! The relative-error bound is e^(max |d|) - 1 plus a rounding allowance of
//! 16 eps (1 + max |ln Upsilon|) (eps = 2^-52): the cubic is evaluated in ln Upsilon, whose
//! rounding is relative to |ln Upsilon|, and both sides carry a few roundings.

use crate::physics::elementary::exp_m1;

/// Fractions of an ordinary interval at which the table is compared with its source.
pub const MODEL_FRACTIONS: [f64; 3] = [0.25, 0.5, 0.75];

/// Measurements in an interval holding a source breakpoint: at k / `DENSE_DIVISIONS`.
pub const DENSE_DIVISIONS: usize = 8;

/// Divisions of an interval at which the fitted error model is evaluated.
const MODEL_DIVISIONS: usize = 16;

/// Bound on |d| over an ordinary interval from d at [`MODEL_FRACTIONS`].
pub fn model_interval_bound(d: [f64; 3]) -> f64 {
    let mut samples = [0.0; MODEL_DIVISIONS + 1];
    for (sample, w) in samples[1..MODEL_DIVISIONS].iter_mut().zip(&MODEL_WEIGHTS) {
        *sample = w[0] * d[0] + w[1] * d[1] + w[2] * d[2];
    }
    sampled_bound(&samples)
}

/// The model d at t = k / MODEL_DIVISIONS (k = 1..MODEL_DIVISIONS - 1) is linear in the three
/// measurements: d(t) = t (1 - t) sum_j L_j(t) d_j / (t_j (1 - t_j)), L_j the Lagrange basis on
/// 1/4, 1/2, 3/4. Row k holds the three weights.
const MODEL_WEIGHTS: [[f64; 3]; MODEL_DIVISIONS - 1] = model_weights();

const fn model_weights() -> [[f64; 3]; MODEL_DIVISIONS - 1] {
    let mut w = [[0.0; 3]; MODEL_DIVISIONS - 1];
    let mut k = 0;
    while k < MODEL_DIVISIONS - 1 {
        let t = (k + 1) as f64 / MODEL_DIVISIONS as f64;
        let envelope = t * (1.0 - t);
        let (a, b, c) = (t - 0.25, t - 0.5, t - 0.75);
        // Lagrange basis (denominators 1/8, -1/16, 1/8) over t_j (1 - t_j) = 3/16, 1/4, 3/16.
        w[k] = [
            envelope * 8.0 * b * c * (16.0 / 3.0),
            envelope * -16.0 * a * c * 4.0,
            envelope * 8.0 * a * b * (16.0 / 3.0),
        ];
        k += 1;
    }
    w
}

/// Bound on |d| over an interval from d at k / `DENSE_DIVISIONS`, k = 1..DENSE_DIVISIONS - 1
/// (d = 0 at both knots).
pub fn dense_interval_bound(d: &[f64; DENSE_DIVISIONS - 1]) -> f64 {
    let mut samples = [0.0; DENSE_DIVISIONS + 1];
    samples[1..DENSE_DIVISIONS].copy_from_slice(d);
    sampled_bound(&samples)
}

/// The relative-error bound served for a table whose largest |d| bound is `max_log_error` and
/// whose knots have largest |ln Upsilon| `max_abs_ln_upsilon`.
pub fn relative_error_bound(max_log_error: f64, max_abs_ln_upsilon: f64) -> f64 {
    exp_m1(max_log_error) + 16.0 * f64::EPSILON * (1.0 + max_abs_ln_upsilon)
}

/// Largest |sample| plus an eighth of the largest |second difference| (samples equally
/// spaced, the first and last included).
fn sampled_bound(samples: &[f64]) -> f64 {
    let largest = samples.iter().fold(0.0f64, |m, &v| m.max(v.abs()));
    let curvature = samples
        .windows(3)
        .fold(0.0f64, |m, w| m.max((w[2] - 2.0 * w[1] + w[0]).abs()));
    largest + curvature / 8.0
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The largest |q| over 10,001 points of [0, 1].
    fn dense_max(q: impl Fn(f64) -> f64) -> f64 {
        (0..=10_000)
            .map(|k| q(f64::from(k) / 10_000.0).abs())
            .fold(0.0, f64::max)
    }

    #[test]
    fn the_model_bound_covers_every_leading_order_error_shape() {
        // d(t) = t (1 - t) (a + b t + c t^2) is the leading-order cubic Hermite error (de Boor
        // 2001, ch. IV); the bound from three samples must cover its true maximum for any
        // coefficients, and stay within 5 % of it for the two pure shapes (fourth-derivative
        // error, symmetric; slope errors of opposite sign, antisymmetric).
        let shapes: [(f64, f64, f64); 6] = [
            (1.0, 0.0, 0.0),
            (1.0, -2.0, 0.0),
            (0.0, 1.0, -1.0),
            (0.3, -1.7, 2.2),
            (-1.0, 4.0, -3.5),
            (0.0, 0.0, 1.0),
        ];
        for (a, b, c) in shapes {
            let q = |t: f64| t * (1.0 - t) * (a + b * t + c * t * t);
            let bound = model_interval_bound([q(0.25), q(0.5), q(0.75)]);
            let truth = dense_max(q);
            assert!(bound >= truth, "({a}, {b}, {c}): bound {bound} < max {truth}");
            if (a, b, c) == (1.0, 0.0, 0.0) || (a, b, c) == (1.0, -2.0, 0.0) {
                assert!(bound < 1.05 * truth, "({a}, {b}, {c}): bound {bound} vs {truth}");
            }
        }
    }

    #[test]
    fn slope_errors_peak_off_the_middle() {
        // Opposite slope errors give d = t (1 - t)(1 - 2 t): zero at the middle, largest at
        // t = 1/2 -+ sqrt(3)/6 (0.211, 0.789) where it is sqrt(3)/18 = 0.0962 (calculus).
        let q = |t: f64| t * (1.0 - t) * (1.0 - 2.0 * t);
        assert!(q(0.5).abs() < 1e-17);
        let bound = model_interval_bound([q(0.25), q(0.5), q(0.75)]);
        let peak = 3f64.sqrt() / 18.0;
        assert!(bound >= peak && bound < 1.05 * peak, "{bound} vs {peak}");
    }

    #[test]
    fn the_dense_bound_covers_a_kinked_error() {
        // A C1 function with a jump in its second derivative at t = 0.3 (what a piecewise
        // cubic source gives): samples every 1/8 plus the curvature allowance cover it.
        let q = |t: f64| {
            let smooth = t * (1.0 - t) * 0.2;
            let kink = if t > 0.3 { (t - 0.3) * (t - 0.3) } else { 0.0 };
            smooth - kink * (1.0 - t) / 0.7
        };
        let mut d = [0.0; DENSE_DIVISIONS - 1];
        for (k, v) in d.iter_mut().enumerate() {
            *v = q((k + 1) as f64 / DENSE_DIVISIONS as f64);
        }
        let bound = dense_interval_bound(&d);
        assert!(bound >= dense_max(q), "{bound} vs {}", dense_max(q));
    }
}
