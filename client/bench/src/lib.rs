//! Shared pieces of ratewell's client-side benchmarks: the INVENTED table sets that the
//! criterion benches (`benches/`) and the side-by-side driver (`ratewell-bench`) measure.

pub mod invented;
