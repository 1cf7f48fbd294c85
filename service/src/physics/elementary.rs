//! Elementary functions with the same bits on every platform, compiler target and build
//! profile: e^x and ln x are the evaluation rule's own ([`ratewell_proto::rule::exp`],
//! [`ratewell_proto::rule::ln`]: plain IEEE arithmetic, no maths library), and everything else
//! here is built from them with the basic IEEE operations (+, -, *, /, sqrt), each correctly
//! rounded by IEEE 754 and never fused or reordered by the compiler.
//!
//! The platform's `exp`, `ln`, `exp_m1`, `ln_1p`, `powf` and `log10` may differ in the last
//! bit between maths libraries (and between the code paths one library picks per processor),
//! and `powi` with a constant argument is folded at compile time by a different algorithm
//! than the run-time routine (measured: `0.2f64.powi(4)` is 0x3f5a36e2eb1c432e folded in a
//! release build and 0x3f5a36e2eb1c4330 computed in a debug one). Table precompute uses this
//! module instead, so a dataset's tables have the same bits wherever they are built.

pub use ratewell_proto::rule::{exp, ln};

/// ln 10 rounded to double, and the rounding remainder ln 10 - LN_10_HI to double precision
/// (-2.1707562233822494506e-16, from Python's `decimal` module at 60 digits).
const LN_10_HI: f64 = std::f64::consts::LN_10;
const LN_10_LO: f64 = -2.170_756_223_382_249_4e-16;

/// e^x - 1, accurate near x = 0 (Kahan's method: with u = e^x rounded, (u - 1) x / ln u
/// cancels the rounding error of u; Goldberg 1991, "What every computer scientist should know
/// about floating-point arithmetic", ACM Comput. Surv. 23, 5, theorem 4 and its companion for
/// expm1). A few ulps in the tests against mpmath.
pub fn exp_m1(x: f64) -> f64 {
    let u = exp(x);
    if u == 1.0 {
        // |x| below half an ulp of 1: e^x - 1 = x to double precision.
        return x;
    }
    let um1 = u - 1.0;
    if um1 == -1.0 || !u.is_finite() || x.abs() > 1.0 {
        // Far from 0 nothing cancels (and u may have overflowed or underflowed).
        return um1;
    }
    um1 * x / ln(u)
}

/// ln(1 + x), accurate near x = 0 (Kahan's method: with u = 1 + x rounded,
/// x ln(u) / (u - 1) cancels the rounding error of u; Goldberg 1991, theorem 4). A few ulps
/// in the tests against mpmath. NaN for x < -1.
pub fn ln_1p(x: f64) -> f64 {
    let u = 1.0 + x;
    if u == 1.0 {
        x
    } else if !u.is_finite() || x.abs() > 1.0 {
        ln(u)
    } else {
        ln(u) * x / (u - 1.0)
    }
}

/// 10^y; exact for the integers 0 to 22. The product y ln 10 is formed exactly as a double-double (Dekker's product, which uses
/// only IEEE multiplication and addition), so the result is e^(y ln 10) to the accuracy of
/// [`exp`] plus one rounding, for |y| up to 300.
pub fn exp10(y: f64) -> f64 {
    if y.fract() == 0.0 && (0.0..=22.0).contains(&y) {
        return integer_power_of_ten(y as u32);
    }
    let (product, error) = two_product(y, LN_10_HI);
    let correction = error + y * LN_10_LO;
    let e = exp(product);
    e + e * correction
}

/// log10 x: exact for the integer powers of ten 10^0 to 10^22 (which doubles hold exactly), so
/// grids given in round numbers start exactly at an integer; otherwise ln x log10(e) (an error
/// of one or two ulps, the same bits everywhere).
pub fn log10(x: f64) -> f64 {
    let approx = ln(x) * std::f64::consts::LOG10_E;
    let nearest = approx.round();
    if (0.0..=22.0).contains(&nearest) && integer_power_of_ten(nearest as u32) == x {
        nearest
    } else {
        approx
    }
}

/// 10^n for 0 <= n <= 22, exact (every product is an exactly representable integer).
fn integer_power_of_ten(n: u32) -> f64 {
    (0..n).fold(1.0, |p, _| p * 10.0)
}

/// x^4 as (x^2)^2, two correctly rounded multiplications.
pub fn pow4(x: f64) -> f64 {
    let x2 = x * x;
    x2 * x2
}

/// x^(1/4) as sqrt(sqrt(x)), two correctly rounded square roots.
pub fn fourth_root(x: f64) -> f64 {
    x.sqrt().sqrt()
}

/// a b as the exact sum hi + lo (Dekker 1971, Numer. Math. 18, 224: Veltkamp splitting into
/// 26-bit halves, whose partial products are exact). Valid while |a b| stays far from overflow.
fn two_product(a: f64, b: f64) -> (f64, f64) {
    const SPLITTER: f64 = 134_217_729.0; // 2^27 + 1
    let split = |v: f64| {
        let c = SPLITTER * v;
        let hi = c - (c - v);
        (hi, v - hi)
    };
    let p = a * b;
    let (ah, al) = split(a);
    let (bh, bl) = split(b);
    let e = ((ah * bh - p) + ah * bl + al * bh) + al * bl;
    (p, e)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn dekker_product_is_exact() {
        // common practice, no source: (1 + 2^-30)^2 = 1 + 2^-29 + 2^-60, whose last term a
        // double near 1 cannot hold; the product's error term must carry it exactly.
        let a = 1.0 + 2f64.powi(-30);
        let (p, e) = two_product(a, a);
        assert_eq!(p, 1.0 + 2f64.powi(-29));
        assert_eq!(e, 2f64.powi(-60));
    }

    #[test]
    fn powers_of_ten_are_exact() {
        // common practice, no source: integers up to 2^53 and 10^22 = 2^22 5^22 (5^22 < 2^53)
        // are exact doubles
        for n in 0..=22 {
            let p = integer_power_of_ten(n);
            assert_eq!(log10(p), f64::from(n), "10^{n}");
        }
        assert_eq!(integer_power_of_ten(22), 1e22);
        assert!((log10(5000.0) - 3.698_970_004_336_018_8).abs() < 1e-15);
        assert_eq!(exp10(0.0), 1.0);
    }
}
