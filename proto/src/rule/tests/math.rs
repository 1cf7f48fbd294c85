//! The rule's exponential and logarithm against the platform's maths library.

use super::{spread, ulps};
use crate::rule::{exp, ln};

#[test]
fn exp_agrees_with_the_platform_library_to_one_ulp() {
    // Reference: the platform maths library's exp (glibc's is correctly rounded in nearly
    // all cases, from memory), an implementation independent of ours. Ours is within 1 ulp.
    let mut worst = 0;
    for x in spread(400_000, -40.0, 5.0).chain(spread(200_000, -745.0, 709.7)) {
        let (ours, theirs) = (exp(x), x.exp());
        if theirs >= f64::MIN_POSITIVE {
            worst = worst.max(ulps(ours, theirs));
        } else {
            // Subnormal results: absolute error within one subnormal step.
            assert!((ours - theirs).abs() <= 5e-324, "exp({x}) = {ours} vs {theirs}");
        }
    }
    assert!(worst <= 1, "worst exp error {worst} ulp");
    // Exact and limiting cases (IEEE 754 special values; e^0 = 1 exactly).
    assert_eq!(exp(0.0), 1.0);
    assert_eq!(exp(710.0), f64::INFINITY);
    assert_eq!(exp(f64::INFINITY), f64::INFINITY);
    assert_eq!(exp(-746.0), 0.0);
    assert_eq!(exp(f64::NEG_INFINITY), 0.0);
    assert!(exp(f64::NAN).is_nan());
    assert!(exp(709.7).is_finite());
    assert!(exp(-744.0) > 0.0);
}

#[test]
fn ln_agrees_with_the_platform_library_to_one_ulp() {
    // Reference: the platform maths library's ln, independent of ours.
    let mut worst = 0;
    let samples = spread(300_000, -30.0, 30.0)
        .map(|e| 10f64.powf(e))
        .chain(spread(200_000, 0.5, 2.0))
        .chain([
            1.0,
            2.0,
            10.0,
            f64::MAX,
            f64::MIN_POSITIVE,
            5e-324,
            1e-310,
            1.0 + f64::EPSILON,
        ]);
    for x in samples {
        let (ours, theirs) = (ln(x), x.ln());
        if theirs == 0.0 {
            assert_eq!(ours, 0.0);
        } else {
            worst = worst.max(ulps(ours, theirs));
        }
    }
    assert!(worst <= 1, "worst ln error {worst} ulp");
    assert_eq!(ln(0.0), f64::NEG_INFINITY);
    assert_eq!(ln(f64::INFINITY), f64::INFINITY);
    assert!(ln(-1.0).is_nan() && ln(f64::NAN).is_nan());
}
