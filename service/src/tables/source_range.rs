//! The source range of a transition's collision data: the temperatures at which its
//! effective collision strength comes from the data themselves rather than from a
//! continuation rule. One definition, used by the table headers (and so by the
//! BEYOND_SOURCE flag of every value) and by the species description.
//!
//! - Effective collision strengths Upsilon(T): the first to the last tabulated temperature.
//!   Outside, Upsilon is continued in the Burgess & Tully scaled plane.
//! - Collision strengths Omega(E_f) on scattered-electron energies E_1 < ... < E_N: Upsilon(T)
//!   averages Omega over the Maxwellian weight e^(-E_f/kT) d(E_f/kT), of which
//!   1 - e^(-E_1/kT) falls below the first energy (where Omega is continued to threshold) and
//!   e^(-E_N/kT) above the last (where the high-energy form of the type continues it). The
//!   range is where each of the two is at most e^-5 (0.67 %):
//!   kT >= E_1 / (-ln(1 - e^-5)) (about 148 E_1) and kT <= E_N / 5. A table that starts at
//!   threshold (E_1 = 0, or an incident energy equal to the transition energy) puts no weight
//!   below its data, so its range has no lower limit and starts at [`LOWEST_GRID_T_K`], the
//!   lowest temperature any table grid can start at. When no temperature meets both
//!   conditions (data spanning a factor below about 740 in energy), the range is the single
//!   temperature where the weight outside the data is smallest, (E_N - E_1) / (k ln(E_N/E_1)).
//! - Approximation formulas: none (their values are flagged APPROXIMATE instead).

use crate::dataset::CollisionData;
use crate::physics::constants::KELVIN_PER_RYDBERG;
use crate::physics::elementary::{exp, ln, ln_1p};

/// Fraction of the Maxwellian weight allowed outside the tabulated energies at each end: e^-5.
pub const OUTSIDE_WEIGHT_E_FOLDS: f64 = 5.0;

/// The lowest temperature a table grid can start at (log10 T_min >= -3 in the evaluation
/// rule's grids), K: the lower end of a range with no lower limit.
pub const LOWEST_GRID_T_K: f64 = 1e-3;

/// The source range (K) of collision data, or `None` for an approximation formula.
pub fn source_range_k(data: &CollisionData) -> Option<(f64, f64)> {
    match data {
        CollisionData::EffectiveTable { temperatures_k, .. } => {
            Some((temperatures_k[0], temperatures_k[temperatures_k.len() - 1]))
        }
        CollisionData::StrengthTable {
            scattered_energies_ry,
            ..
        } => Some(strength_table_range_k(
            scattered_energies_ry[0],
            scattered_energies_ry[scattered_energies_ry.len() - 1],
        )),
        CollisionData::Estimate(_) => None,
    }
}

/// The range for a collision-strength table from E_1 to E_N (Ry, 0 <= E_1 <= E_N).
fn strength_table_range_k(first_ry: f64, last_ry: f64) -> (f64, f64) {
    let high = last_ry * KELVIN_PER_RYDBERG / OUTSIDE_WEIGHT_E_FOLDS;
    if first_ry <= 0.0 {
        return (LOWEST_GRID_T_K, high.max(LOWEST_GRID_T_K));
    }
    // 1 - e^(-E_1/kT) <= e^-5  <=>  E_1/kT <= -ln(1 - e^-5).
    let below_limit = -ln_1p(-exp(-OUTSIDE_WEIGHT_E_FOLDS));
    let low = (first_ry * KELVIN_PER_RYDBERG / below_limit).max(LOWEST_GRID_T_K);
    if low <= high {
        (low, high)
    } else if last_ry > first_ry {
        let best = (last_ry - first_ry) * KELVIN_PER_RYDBERG / ln(last_ry / first_ry);
        (best, best)
    } else {
        let at = first_ry * KELVIN_PER_RYDBERG;
        (at, at)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use ratewell_proto::rule::LogGrid;

    fn strength(energies: &[f64]) -> CollisionData {
        CollisionData::StrengthTable {
            scattered_energies_ry: energies.to_vec(),
            omega: vec![1.0; energies.len()],
        }
    }

    #[test]
    fn the_lowest_grid_temperature_is_the_rules_limit() {
        // The rule accepts log10 T_min = -3 and refuses anything lower.
        assert!(LogGrid::new(LOWEST_GRID_T_K.log10(), 0.1, 10).is_ok());
        assert!(LogGrid::new(-3.000_001, 0.1, 10).is_err());
    }

    #[test]
    fn threshold_tables_have_no_lower_limit_and_never_collapse() {
        // Two points from threshold: the range used to collapse to one temperature.
        let (lo, hi) = source_range_k(&strength(&[0.0, 0.2])).unwrap();
        assert_eq!(lo, LOWEST_GRID_T_K);
        assert!((hi - 0.2 * KELVIN_PER_RYDBERG / 5.0).abs() < 1e-9 * hi);
    }

    #[test]
    fn the_weight_outside_the_data_is_e_minus_5_at_both_ends() {
        // The defining conditions, checked by evaluating the weights at the range's ends.
        let (e1, en) = (0.001, 3.0);
        let (lo, hi) = source_range_k(&strength(&[e1, 0.1, en])).unwrap();
        let kt = |t: f64| t / KELVIN_PER_RYDBERG;
        let below = 1.0 - (-e1 / kt(lo)).exp();
        let above = (-en / kt(hi)).exp();
        let target = (-5.0f64).exp();
        assert!((below / target - 1.0).abs() < 1e-12, "{below}");
        assert!((above / target - 1.0).abs() < 1e-12, "{above}");
    }

    #[test]
    fn too_short_a_table_gives_its_best_covered_temperature() {
        // Weight outside = 1 - e^(-a/T) + e^(-b/T) is smallest where a e^(-a/T) = b e^(-b/T),
        // i.e. T = (b - a) / ln(b / a) (calculus).
        let (lo, hi) = source_range_k(&strength(&[0.1, 0.5])).unwrap();
        assert_eq!(lo, hi);
        let expected = 0.4 * KELVIN_PER_RYDBERG / 5f64.ln();
        assert!((lo / expected - 1.0).abs() < 1e-14);
    }
}
