//! The rule's exponential and logarithm: plain IEEE double arithmetic, no branches, no library
//! calls, so the bits do not depend on the platform and loops over them vectorise.

/// e^x in plain IEEE double arithmetic: the same bits on every platform and compiler target,
/// and no branches, so loops over it vectorise. Relative error below 1 ulp in the tests
/// against the platform's maths library; overflows to +inf above ln(f64::MAX), underflows
/// through subnormals to 0, and passes NaN through.
///
/// Method (Cody & Waite 1980 argument reduction): x = k ln 2 + r with |r| <= ln 2 / 2, with
/// ln 2 split into a part whose products with k are exact and a small remainder; e^r by its
/// Taylor polynomial to degree 13 (truncation below 1e-17 relative); then 2^k applied as two
/// exact powers of two so results down to the smallest subnormal come out right.
#[inline(always)]
pub fn exp(x: f64) -> f64 {
    const LN2_HI: f64 = 0.6931471803691238; // low 21 mantissa bits zero
    const LN2_LO: f64 = 1.9082149292705877e-10; // ln 2 - LN2_HI
    const INV_LN2: f64 = std::f64::consts::LOG2_E;
    // 1.5 * 2^52: adding it rounds a value below 2^51 to an integer held in the low mantissa bits.
    const SHIFT: f64 = 6_755_399_441_055_744.0;
    // Taylor coefficients 1/n!, n = 2..13 (rounded once, at compile time).
    const C2: f64 = 1.0 / 2.0;
    const C3: f64 = C2 / 3.0;
    const C4: f64 = C3 / 4.0;
    const C5: f64 = C4 / 5.0;
    const C6: f64 = C5 / 6.0;
    const C7: f64 = C6 / 7.0;
    const C8: f64 = C7 / 8.0;
    const C9: f64 = C8 / 9.0;
    const C10: f64 = C9 / 10.0;
    const C11: f64 = C10 / 11.0;
    const C12: f64 = C11 / 12.0;
    const C13: f64 = C12 / 13.0;
    // Beyond these e^x is +inf or 0 anyway; clamping keeps k in range (NaN passes through).
    let x = x.clamp(-746.0, 710.0);
    let shifted = x * INV_LN2 + SHIFT;
    let k = shifted.to_bits() as i64 - SHIFT.to_bits() as i64;
    let kf = shifted - SHIFT;
    let hi = x - kf * LN2_HI;
    let r = hi - kf * LN2_LO;
    // Horner's rule, innermost first: q = C2 + r (C3 + r (... + r C13)). Written as a loop
    // over the coefficients (unrolled by the compiler) rather than one nested expression,
    // which rustfmt takes about a minute to lay out; the operations and their order are the
    // same.
    let mut q = C13;
    for c in [C12, C11, C10, C9, C8, C7, C6, C5, C4, C3, C2] {
        q = c + r * q;
    }
    let p = 1.0 + (r + (r * r) * q);
    // 2^k = 2^k1 * 2^k2 with both halves normal for k in [-1076, 1024]: k1 = floor(k / 2)
    // taken with a logical shift of the positive k + 2048 (cheaper in SIMD than an
    // arithmetic shift), k2 = k - k1.
    let k1 = (((k + 2048) as u64) >> 1) as i64 - 1024;
    let k2 = k - k1;
    let s1 = f64::from_bits(((k1 + 1023) as u64) << 52);
    let s2 = f64::from_bits(((k2 + 1023) as u64) << 52);
    p * s1 * s2
}

/// ln x in plain IEEE double arithmetic: the same bits on every platform, no branches, so it
/// vectorises. Error below 1 ulp in the tests against the platform's maths library. ln(0) =
/// -inf, ln(+inf) = +inf, negative or NaN input gives NaN; subnormal input is handled.
///
/// Method: x = 2^k (1 + f) with 1 + f in [sqrt(2)/2, sqrt(2)); with s = f / (2 + f),
/// ln(1 + f) = 2 atanh(s) = f - f^2/2 + s (f^2/2 + R(s^2)), R the odd atanh series beyond its
/// first term as a degree-7 polynomial in s^2 whose coefficients are the published minimax
/// fit of the 4.3 BSD / Sun freely distributable maths library (error below 2^-58.45 on the
/// interval, from its documentation).
#[inline(always)]
pub fn ln(x: f64) -> f64 {
    const LN2_HI: f64 = 0.6931471803691238;
    const LN2_LO: f64 = 1.9082149292705877e-10;
    const LG1: f64 = 0.6666666666666735;
    const LG2: f64 = 0.3999999999940942;
    const LG3: f64 = 0.2857142874366239;
    const LG4: f64 = 0.22222198432149784;
    const LG5: f64 = 0.1818357216161805;
    const LG6: f64 = 0.15313837699209373;
    const LG7: f64 = 0.14798198605116586;
    const TWO_54: f64 = 18_014_398_509_481_984.0;
    // Subnormals are scaled into the normal range first.
    let subnormal = x < f64::MIN_POSITIVE;
    let scaled = if subnormal { x * TWO_54 } else { x };
    let bits = scaled.to_bits();
    // Move the mantissa into [sqrt(2)/2, sqrt(2)) and count the exponent k accordingly
    // (0x3fe6a09e is the high word of sqrt(2)/2).
    let high = (bits >> 32) + (0x3ff0_0000 - 0x3fe6_a09e);
    let k = (high >> 20) as i64 - 0x3ff - if subnormal { 54 } else { 0 };
    let high = (high & 0x000f_ffff) + 0x3fe6_a09e;
    let m = f64::from_bits((high << 32) | (bits & 0xffff_ffff));
    let f = m - 1.0;
    let hfsq = 0.5 * f * f;
    let s = f / (2.0 + f);
    let z = s * s;
    let w = z * z;
    let t1 = w * (LG2 + w * (LG4 + w * LG6));
    let t2 = z * (LG1 + w * (LG3 + w * (LG5 + w * LG7)));
    let r = t2 + t1;
    let dk = k as f64;
    let y = s * (hfsq + r) + dk * LN2_LO - hfsq + f + dk * LN2_HI;
    if x > 0.0 && x < f64::INFINITY {
        y
    } else if x == 0.0 {
        f64::NEG_INFINITY
    } else if x == f64::INFINITY {
        x
    } else {
        f64::NAN
    }
}
