//! The kernels compiled for AVX2 and AVX-512F: the shared loop with the cubic done four values
//! at a time by explicit AVX instructions, operation for operation as the scalar rule.

use super::portable::exp_each;
use super::{BLOCK, Kernel};
use crate::rule::grid::{Location, Side};
use crate::rule::outputs::{Direction, RateOutputs};

impl Kernel<'_> {
    /// The kernel compiled for AVX2, with the cubic done four values at a time by explicit
    /// AVX instructions (the same operations in the same order as the scalar rule, so the
    /// same bits; no fused multiply-add).
    #[target_feature(enable = "avx2")]
    pub(super) unsafe fn run_avx2(self, locations: &[Location], out: &mut RateOutputs<'_>) {
        match out.direction {
            Direction::Deexcitation => self.lanes::<false, true, true>(locations, out),
            Direction::Excitation => self.lanes::<true, false, true>(locations, out),
            Direction::Both => self.lanes::<true, true, true>(locations, out),
        }
    }

    /// The same kernel compiled for AVX-512F (and AVX2, for the explicit cubic): the
    /// exponentials run eight lanes wide, with the same operations, so the same bits.
    #[target_feature(enable = "avx2,avx512f")]
    pub(super) unsafe fn run_avx512(self, locations: &[Location], out: &mut RateOutputs<'_>) {
        match out.direction {
            Direction::Deexcitation => self.lanes::<false, true, true>(locations, out),
            Direction::Excitation => self.lanes::<true, false, true>(locations, out),
            Direction::Both => self.lanes::<true, true, true>(locations, out),
        }
    }

    /// ln q_ul (and with `EXC` ln q_lu) for the first multiple of four locations of `block`,
    /// four at a time: each interval's two knots with their slopes are loaded whole and
    /// transposed, the coefficients made from them, then the cubic,
    /// its continuations and the selects run as in
    /// [`ln_upsilon_cubic`](crate::rule::cubic::ln_upsilon_cubic), operation for
    /// operation. Returns how many locations were done.
    #[target_feature(enable = "avx2")]
    #[inline]
    pub(super) unsafe fn cubic_avx<const EXC: bool>(
        &self,
        block: &[Location],
        ln_q_ul: &mut [f64; BLOCK],
        ln_q_lu: &mut [f64; BLOCK],
    ) -> usize {
        use std::arch::x86_64::*;
        let last = self.knots.len() - 2;
        // Knots i and i+1 of interval i with their slopes: [y_i, s_i, y_i+1, s_i+1].
        let row = |loc: &Location| {
            let i = loc.interval.min(last);
            let pair = &self.knots[i..i + 2];
            // SAFETY: two knot pairs are four contiguous f64.
            unsafe { _mm256_loadu_pd(pair.as_ptr().cast::<f64>()) }
        };
        // The four sides as bytes widened to 64-bit lanes, compared with one side's code.
        let sides = |l: &[Location]| {
            let code = |loc: &Location| i32::from(loc.side as u8);
            let packed = code(&l[0]) | code(&l[1]) << 8 | code(&l[2]) << 16 | code(&l[3]) << 24;
            _mm256_cvtepu8_epi64(_mm_cvtsi32_si128(packed))
        };
        let below_code = _mm256_set1_epi64x(i64::from(Side::Below as u8));
        let inside_code = _mm256_set1_epi64x(i64::from(Side::Inside as u8));
        let one = _mm256_set1_pd(1.0);
        let two = _mm256_set1_pd(2.0);
        let three = _mm256_set1_pd(3.0);
        let minus_two = _mm256_set1_pd(-2.0);
        let step = _mm256_set1_pd(self.step);
        let half = _mm256_set1_pd(0.5);
        let prefactor = _mm256_set1_pd(self.ln_prefactor_ul);
        let ratio = _mm256_set1_pd(self.ln_weight_ratio);
        let energy = _mm256_set1_pd(self.excitation_energy_k);
        let quads = block.len() / 4;
        for (q, l) in block.chunks_exact(4).enumerate() {
            // The coefficients as `hermite_coefficients` makes them, operation for operation.
            let (r0, r1, r2, r3) = (row(&l[0]), row(&l[1]), row(&l[2]), row(&l[3]));
            let t0 = _mm256_unpacklo_pd(r0, r1);
            let t1 = _mm256_unpackhi_pd(r0, r1);
            let t2 = _mm256_unpacklo_pd(r2, r3);
            let t3 = _mm256_unpackhi_pd(r2, r3);
            let y0 = _mm256_permute2f128_pd::<0x20>(t0, t2);
            let y1 = _mm256_permute2f128_pd::<0x31>(t0, t2);
            let s0 = _mm256_permute2f128_pd::<0x20>(t1, t3);
            let s1 = _mm256_permute2f128_pd::<0x31>(t1, t3);
            let m0 = _mm256_mul_pd(s0, step);
            let m1 = _mm256_mul_pd(s1, step);
            let dy = _mm256_sub_pd(y1, y0);
            let a = y0;
            let b = m0;
            // 3 dy - 2 m0 - m1
            let c = _mm256_sub_pd(
                _mm256_sub_pd(_mm256_mul_pd(three, dy), _mm256_mul_pd(two, m0)),
                m1,
            );
            // -2 dy + m0 + m1
            let d = _mm256_add_pd(_mm256_add_pd(_mm256_mul_pd(minus_two, dy), m0), m1);
            let f = _mm256_set_pd(l[3].frac, l[2].frac, l[1].frac, l[0].frac);
            // a + f (b + f (c + f d))
            let inside = _mm256_add_pd(
                a,
                _mm256_mul_pd(
                    f,
                    _mm256_add_pd(b, _mm256_mul_pd(f, _mm256_add_pd(c, _mm256_mul_pd(f, d)))),
                ),
            );
            // a + f b
            let below = _mm256_add_pd(a, _mm256_mul_pd(f, b));
            // (a + b + c + d) + (f - 1) (b + 2c + 3d)
            let end_value = _mm256_add_pd(_mm256_add_pd(_mm256_add_pd(a, b), c), d);
            let end_slope = _mm256_add_pd(_mm256_add_pd(b, _mm256_mul_pd(two, c)), _mm256_mul_pd(three, d));
            let above = _mm256_add_pd(end_value, _mm256_mul_pd(_mm256_sub_pd(f, one), end_slope));
            let side = sides(l);
            let is_below = _mm256_castsi256_pd(_mm256_cmpeq_epi64(side, below_code));
            let is_inside = _mm256_castsi256_pd(_mm256_cmpeq_epi64(side, inside_code));
            let outside = _mm256_blendv_pd(above, below, is_below);
            let ln_ups = _mm256_blendv_pd(outside, inside, is_inside);
            let ln_t = _mm256_set_pd(l[3].ln_t, l[2].ln_t, l[1].ln_t, l[0].ln_t);
            let lq = _mm256_sub_pd(_mm256_add_pd(ln_ups, prefactor), _mm256_mul_pd(half, ln_t));
            // SAFETY: 4 q + 4 <= block.len() <= BLOCK, so the four slots exist.
            unsafe { _mm256_storeu_pd(ln_q_ul.as_mut_ptr().add(4 * q), lq) };
            if EXC {
                let inv_t = _mm256_set_pd(l[3].inv_t, l[2].inv_t, l[1].inv_t, l[0].inv_t);
                let le = _mm256_sub_pd(_mm256_add_pd(lq, ratio), _mm256_mul_pd(energy, inv_t));
                // SAFETY: as above.
                unsafe { _mm256_storeu_pd(ln_q_lu.as_mut_ptr().add(4 * q), le) };
            }
        }
        4 * quads
    }
}

/// [`exp_each`] compiled for AVX2.
#[target_feature(enable = "avx2")]
pub(super) unsafe fn exp_each_avx2(values: &mut [f64]) {
    exp_each(values);
}

/// [`exp_each`] compiled for AVX-512F.
#[target_feature(enable = "avx2,avx512f")]
pub(super) unsafe fn exp_each_avx512(values: &mut [f64]) {
    exp_each(values);
}
