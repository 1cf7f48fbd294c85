//! Tests of the evaluation rule; helpers shared by them.

mod batch;
mod kernels;
mod math;
mod scalar;

use super::{LogGrid, RateTable, TableHeader};

/// An invented transition: weights 2 and 4, dE/k = 20,000 K, source data over [1e3, 1e5] K.
fn header() -> TableHeader {
    TableHeader {
        upper: 2,
        lower: 1,
        g_lower: 2.0,
        g_upper: 4.0,
        excitation_energy_k: 2.0e4,
        source_t_min_k: 1e3,
        source_t_max_k: 1e5,
        approximate: false,
    }
}

/// The bit patterns of a slice, for exact comparisons with readable failure output.
fn bits(v: &[f64]) -> Vec<u64> {
    v.iter().map(|x| x.to_bits()).collect()
}

/// Distance in units in the last place between two finite doubles of the same sign.
fn ulps(a: f64, b: f64) -> u64 {
    (a.to_bits() as i64 - b.to_bits() as i64).unsigned_abs()
}

/// A deterministic spread of doubles in [lo, hi] (Numerical Recipes LCG; no rand needed).
fn spread(n: usize, lo: f64, hi: f64) -> impl Iterator<Item = f64> {
    let mut state = 12345u64;
    (0..n).map(move |_| {
        state = state
            .wrapping_mul(6364136223846793005)
            .wrapping_add(1442695040888963407);
        lo + (hi - lo) * ((state >> 11) as f64 / (1u64 << 53) as f64)
    })
}

/// `count` tables on grid `g` with different shapes, energies and flags (invented).
fn varied_tables(g: LogGrid, count: u32) -> Vec<RateTable> {
    (0..count)
        .map(|k| {
            let mut h = header();
            h.upper = 2 + k;
            h.approximate = k % 7 == 0;
            h.excitation_energy_k = 1.0e3 * f64::from(1 + k % 40);
            let y = (0..g.knots())
                .map(|i| (0.3 * i as f64 + 0.1 * f64::from(k)).cos() - 1.0)
                .collect();
            RateTable::from_knots(h, g, y).unwrap()
        })
        .collect()
}
