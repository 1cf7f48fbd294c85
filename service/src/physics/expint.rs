//! Exponential integrals E_n(x) = integral_1^inf e^(-x t) t^(-n) dt and their scaled forms
//! e^x E_n(x), which stay finite where E_n underflows (x > ~700).
//!
//! Our own numerics: among the crates available here, `statrs` (function::exponential::integral)
//! has E_n but no scaled form (it multiplies by e^-x, so e^x E_n(x) is lost beyond x ~ 700 and
//! loses precision as a ratio of two tiny numbers long before), and `puruspe` has no exponential
//! integral. The scaled form is what the Maxwellian tail integrals need.
//!
//! Method (Abramowitz & Stegun 1964, 5.1.11 and 5.1.22; the same split as Numerical Recipes
//! `expint`): for 0 < x <= 1 the power series of E_1 and the upward recurrence
//! E_(n+1) = (e^-x - x E_n) / n (stable there, amplification x/n <= 1); for x > 1 the continued
//! fraction, evaluated with the modified Lentz method, which yields e^x E_n(x) directly.
//! Checked against mpmath to 1e-14 relative (tests/physics_expint.rs).

use super::elementary::{exp, ln};

/// Euler-Mascheroni constant gamma.
const EULER_GAMMA: f64 = 0.577_215_664_901_532_9;
/// Iteration cap for the series and the continued fraction (x = 1 needs about 60).
const MAX_ITERATIONS: usize = 1000;

/// E_1(x) for x > 0; +inf at x = 0, NaN for x < 0 or NaN.
pub fn e1(x: f64) -> f64 {
    en(1, x)
}

/// e^x E_1(x) for x > 0 (about 1/x for large x); +inf at x = 0, NaN for x < 0 or NaN.
pub fn e1_scaled(x: f64) -> f64 {
    en_scaled(1, x)
}

/// E_n(x) for n >= 1 and x >= 0 (E_n(0) = 1/(n-1) for n >= 2, +inf for n <= 1); NaN for x < 0,
/// NaN input or n = 0.
pub fn en(n: u32, x: f64) -> f64 {
    if x > 1.0 {
        exp(-x) * continued_fraction_scaled(n, x)
    } else {
        small_argument(n, x)
    }
}

/// e^x E_n(x) for n >= 1 and x >= 0, finite for every finite x > 0; same domain as [`en`].
pub fn en_scaled(n: u32, x: f64) -> f64 {
    if x > 1.0 {
        continued_fraction_scaled(n, x)
    } else {
        exp(x) * small_argument(n, x)
    }
}

/// E_n(x) for 0 <= x <= 1 (or invalid input) by series plus upward recurrence.
fn small_argument(n: u32, x: f64) -> f64 {
    if n == 0 || x.is_nan() || x < 0.0 {
        return f64::NAN;
    }
    if x == 0.0 {
        return if n == 1 {
            f64::INFINITY
        } else {
            1.0 / f64::from(n - 1)
        };
    }
    let mut e = e1_series(x);
    let exp_minus_x = exp(-x);
    for k in 1..n {
        e = (exp_minus_x - x * e) / f64::from(k);
    }
    e
}

/// E_1(x) = -gamma - ln x - sum_(k>=1) (-x)^k / (k k!) for 0 < x <= 1 (A&S 5.1.11).
fn e1_series(x: f64) -> f64 {
    let mut sum = 0.0;
    let mut power_over_factorial = 1.0; // (-x)^k / k!
    for k in 1..MAX_ITERATIONS {
        let kf = k as f64;
        power_over_factorial *= -x / kf;
        let term = power_over_factorial / kf;
        sum += term;
        if term.abs() <= f64::EPSILON * 0.25 * sum.abs() {
            break;
        }
    }
    -EULER_GAMMA - ln(x) - sum
}

/// e^x E_n(x) for x > 1 from the continued fraction (A&S 5.1.22), modified Lentz method.
fn continued_fraction_scaled(n: u32, x: f64) -> f64 {
    if n == 0 {
        return f64::NAN;
    }
    if x.is_infinite() {
        return 0.0;
    }
    let tiny = f64::MIN_POSITIVE / f64::EPSILON;
    let nf = f64::from(n);
    let mut b = x + nf;
    let mut c = 1.0 / tiny;
    let mut d = 1.0 / b;
    let mut h = d;
    for i in 1..MAX_ITERATIONS {
        let fi = i as f64;
        let a = -fi * (nf - 1.0 + fi);
        b += 2.0;
        d = 1.0 / (a * d + b);
        c = b + a / c;
        let delta = c * d;
        h *= delta;
        if (delta - 1.0).abs() <= f64::EPSILON {
            break;
        }
    }
    h
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn special_values() {
        // Abramowitz & Stegun 1964, 5.1.23-5.1.24: E_n(0) = 1/(n-1), E_1(0) = inf
        assert_eq!(en(2, 0.0), 1.0);
        assert_eq!(en(3, 0.0), 0.5);
        assert!(e1(0.0).is_infinite());
        assert!(e1(-1.0).is_nan());
        assert!(en(0, 2.0).is_nan());
        // Abramowitz & Stegun 1964, Table 5.1: E_1(1) = 0.219383934395520
        assert!((e1(1.0) - 0.219_383_934_395_520_3).abs() < 1e-15);
    }
}
