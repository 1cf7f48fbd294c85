//! The kernel loop every width shares, and the portable entry (whatever the compilation target
//! guarantees: SSE2 on x86_64).

use super::{BLOCK, Kernel};
use crate::rule::cubic::ln_upsilon_cubic;
use crate::rule::flags::value_flags;
use crate::rule::grid::Location;
use crate::rule::math::exp;
use crate::rule::outputs::{Direction, RateOutputs};

impl Kernel<'_> {
    /// The kernel compiled for the portable target.
    #[inline(always)]
    pub(super) fn run(self, locations: &[Location], out: &mut RateOutputs<'_>) {
        match out.direction {
            Direction::Deexcitation => self.lanes::<false, true, false>(locations, out),
            Direction::Excitation => self.lanes::<true, false, false>(locations, out),
            Direction::Both => self.lanes::<true, true, false>(locations, out),
        }
    }

    /// Blocks of locations in two passes: the cubic and the flags per value, then the
    /// exponentials over contiguous blocks (branch-free, so they vectorise). Each step is the
    /// scalar rule's arithmetic in the same order, so every value equals `RateTable::write_at`'s.
    /// `AVX` is true only when called from [`Self::run_avx2`] or [`Self::run_avx512`].
    #[inline(always)]
    pub(super) fn lanes<const EXC: bool, const DEEXC: bool, const AVX: bool>(
        self,
        locations: &[Location],
        out: &mut RateOutputs<'_>,
    ) {
        let n = locations.len();
        let flags = &mut out.flags[..n];
        let exc: &mut [f64] = if EXC { &mut out.excitation[..n] } else { &mut [] };
        let deexc: &mut [f64] = if DEEXC {
            &mut out.deexcitation[..n]
        } else {
            &mut []
        };
        let mut ln_q_ul = [0.0; BLOCK];
        let mut ln_q_lu = [0.0; BLOCK];
        // A table has at least one interval (two knots); saying so lets the compiler drop the
        // bounds checks on the knot lookups.
        if self.knots.len() < 2 {
            return;
        }
        for (start, block) in (0..n).step_by(BLOCK).zip(locations.chunks(BLOCK)) {
            let m = block.len();
            let end = start + m;
            let mut done = 0;
            #[cfg(target_arch = "x86_64")]
            if AVX {
                // SAFETY: AVX is true only inside run_avx2 and run_avx512, which run only on
                // processors with AVX2.
                done = unsafe { self.cubic_avx::<EXC>(block, &mut ln_q_ul, &mut ln_q_lu) };
            }
            for (k, loc) in block.iter().enumerate().skip(done) {
                let ln_ups = ln_upsilon_cubic(self.knots, self.step, loc.interval, loc.frac, loc.side);
                let l = ln_ups + self.ln_prefactor_ul - 0.5 * loc.ln_t;
                ln_q_ul[k] = l;
                if EXC {
                    ln_q_lu[k] = l + self.ln_weight_ratio - self.excitation_energy_k * loc.inv_t;
                }
            }
            for (loc, flag) in block.iter().zip(&mut flags[start..end]) {
                *flag = value_flags(
                    self.base_flags,
                    loc.side,
                    loc.t_k,
                    self.source_lo_k,
                    self.source_hi_k,
                );
            }
            if DEEXC {
                for (o, &l) in deexc[start..end].iter_mut().zip(&ln_q_ul[..m]) {
                    *o = exp(l);
                }
            }
            if EXC {
                for (o, &l) in exc[start..end].iter_mut().zip(&ln_q_lu[..m]) {
                    *o = exp(l);
                }
            }
        }
    }
}

/// Replaces every value x by [`exp`]`(x)`.
#[inline(always)]
pub(super) fn exp_each(values: &mut [f64]) {
    for v in values {
        *v = exp(*v);
    }
}
