//! The batched kernels: one table's values at many locations, compiled for each instruction set
//! the processor may have and picked at run time. Every width does the same IEEE operations in
//! the same order (no fused multiply-add), so all give the same bits.

mod portable;
#[cfg(target_arch = "x86_64")]
mod x86_64;

use super::grid::Location;
use super::outputs::RateOutputs;

/// Temperatures per block of the batched kernels (sized to stay in L1 cache).
pub(super) const BLOCK: usize = 256;

/// Instruction sets a batched kernel can be compiled for. Every width does the same IEEE
/// operations in the same order (no fused multiply-add), so all give the same bits; wider
/// ones only do more values per instruction.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(super) enum KernelWidth {
    /// Whatever the compilation target guarantees (SSE2 on x86_64).
    Portable,
    /// AVX2: the cubic by explicit 4-lane instructions, the exponentials 4 lanes wide.
    #[cfg(target_arch = "x86_64")]
    Avx2,
    /// AVX-512F: the cubic as for AVX2, the exponentials 8 lanes wide.
    #[cfg(target_arch = "x86_64")]
    Avx512,
}

impl KernelWidth {
    /// Every width this processor can run, narrowest first.
    #[cfg(test)]
    pub(super) fn available() -> Vec<Self> {
        #[allow(unused_mut)] // only x86_64 has more than one width
        let mut widths = vec![Self::Portable];
        #[cfg(target_arch = "x86_64")]
        {
            if std::arch::is_x86_feature_detected!("avx2") {
                widths.push(Self::Avx2);
                if std::arch::is_x86_feature_detected!("avx512f") {
                    widths.push(Self::Avx512);
                }
            }
        }
        widths
    }

    /// Replaces every value x by [`exp`](super::math::exp)`(x)`, compiled for this width (same
    /// bits at every width).
    pub(super) fn exp_in_place(self, values: &mut [f64]) {
        match self {
            Self::Portable => portable::exp_each(values),
            // SAFETY: a width is only offered when the processor reports its instruction sets.
            #[cfg(target_arch = "x86_64")]
            Self::Avx2 => unsafe { x86_64::exp_each_avx2(values) },
            // SAFETY: as above.
            #[cfg(target_arch = "x86_64")]
            Self::Avx512 => unsafe { x86_64::exp_each_avx512(values) },
        }
    }

    /// The widest width this processor can run (detection is cached by the standard library).
    #[inline]
    pub(super) fn widest() -> Self {
        #[cfg(target_arch = "x86_64")]
        {
            if std::arch::is_x86_feature_detected!("avx2") {
                if std::arch::is_x86_feature_detected!("avx512f") {
                    return Self::Avx512;
                }
                return Self::Avx2;
            }
        }
        Self::Portable
    }
}

/// What the batched kernel needs of one table, copied out so the loop reads locals.
#[derive(Clone, Copy)]
pub(super) struct Kernel<'a> {
    pub(in crate::rule) knots: &'a [[f64; 2]],
    pub(in crate::rule) step: f64,
    pub(in crate::rule) ln_prefactor_ul: f64,
    pub(in crate::rule) ln_weight_ratio: f64,
    pub(in crate::rule) excitation_energy_k: f64,
    pub(in crate::rule) base_flags: u32,
    pub(in crate::rule) source_lo_k: f64,
    pub(in crate::rule) source_hi_k: f64,
}

impl Kernel<'_> {
    /// Writes the values at every location into `out` (lengths checked by the caller) with the
    /// kernel compiled for `width`, which must be one the processor has (as
    /// [`KernelWidth::widest`] and the tests' `KernelWidth::available` give).
    pub(super) fn run_width(self, width: KernelWidth, locations: &[Location], out: &mut RateOutputs<'_>) {
        match width {
            KernelWidth::Portable => self.run(locations, out),
            // SAFETY: `width` comes from KernelWidth::widest or ::available, which offer a
            // width only when the processor reports its instruction sets.
            #[cfg(target_arch = "x86_64")]
            KernelWidth::Avx2 => unsafe { self.run_avx2(locations, out) },
            // SAFETY: as above.
            #[cfg(target_arch = "x86_64")]
            KernelWidth::Avx512 => unsafe { self.run_avx512(locations, out) },
        }
    }
}
