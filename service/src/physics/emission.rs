//! Line emission from level populations: emissivity per ion n_j A_ji h nu_ji, vacuum
//! wavelengths, line ratios, critical densities and the radiated power per ion.
//! Level energies are in cm^-1 above the ground level; populations are fractions of the ion.

use super::constants::INVERSE_CM_J;
use super::error::{PhysicsError, require_non_negative, require_positive, require_same_len};
use super::populations::{CollisionalRate, RadiativeRate};
use super::units::vacuum_wavelength_angstrom_from_cm1;

/// Joules per erg.
const J_PER_ERG: f64 = 1.0e-7;

/// Emission of one line per ion of the species.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct LineEmission {
    /// Upper level index.
    pub upper: usize,
    /// Lower level index.
    pub lower: usize,
    /// Photon energy E_upper - E_lower, cm^-1.
    pub delta_e_cm1: f64,
    /// Vacuum wavelength, Angstrom.
    pub wavelength_vacuum_angstrom: f64,
    /// Emissivity per ion n_u A h nu, W.
    pub emissivity_w_per_ion: f64,
    /// The same in erg s^-1.
    pub emissivity_erg_s_per_ion: f64,
}

/// Emissivity per ion of one line, W: `upper_fraction` n_u (0..=1) times `a_s` (s^-1) times
/// the photon energy `delta_e_cm1` (cm^-1, > 0).
pub fn line_emissivity_w_per_ion(
    upper_fraction: f64,
    a_s: f64,
    delta_e_cm1: f64,
) -> Result<f64, PhysicsError> {
    require_non_negative(upper_fraction, "", || "upper_fraction".to_owned())?;
    require_non_negative(a_s, "s^-1", || "a_s".to_owned())?;
    require_positive(delta_e_cm1, "cm^-1", || "delta_e_cm1".to_owned())?;
    Ok(upper_fraction * a_s * delta_e_cm1 * INVERSE_CM_J)
}

/// Convert an emissivity from W to erg s^-1.
pub fn w_to_erg_s(power_w: f64) -> f64 {
    power_w / J_PER_ERG
}

/// What one line's emissivity needs besides its upper level's population, worked out once
/// per species so that repeated solves only multiply: emissivity per ion =
/// fractions[upper] * `power_per_upper_fraction_w`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct LineTerm {
    /// Upper level index.
    pub upper: usize,
    /// Lower level index.
    pub lower: usize,
    /// Photon energy E_upper - E_lower, cm^-1.
    pub delta_e_cm1: f64,
    /// Vacuum wavelength, Angstrom.
    pub wavelength_vacuum_angstrom: f64,
    /// A h nu, W: the emissivity per ion if the whole ion were in the upper level.
    pub power_per_upper_fraction_w: f64,
}

impl LineTerm {
    /// Emissivity per ion, W, for these level populations (fractions of the ion).
    #[inline]
    pub fn emissivity_w_per_ion(&self, fractions: &[f64]) -> f64 {
        fractions[self.upper] * self.power_per_upper_fraction_w
    }
}

/// Sum and largest of a set of line emissivities per ion, W.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PowerSummary {
    /// Radiated power per ion: the sum of the emissivities.
    pub total_w: f64,
    /// The largest emissivity (0 for no lines).
    pub strongest_w: f64,
}

/// Lanes of [`line_powers_into`]'s sum: independent partial sums, so the additions need not
/// wait for each other (one chain of 20,000 dependent additions, at about four cycles each,
/// would take ~25 us per point at 3 GHz).
const POWER_SUM_LANES: usize = 4;

/// Writes the emissivity per ion (W) of every line of `terms` for the populations
/// `fractions` into `out` (cleared first, in the order of `terms`) and returns their sum and
/// the largest. The sum runs over four interleaved partial sums, added as (s0 + s1) + (s2 + s3)
/// and then the remainder: a fixed order, so the same inputs always give the same bits.
/// Every term's upper level must index `fractions` (as [`line_terms`] guarantees for the
/// levels it was given).
pub fn line_powers_into(terms: &[LineTerm], fractions: &[f64], out: &mut Vec<f64>) -> PowerSummary {
    out.clear();
    out.extend(terms.iter().map(|t| t.emissivity_w_per_ion(fractions)));
    let mut sums = [0.0; POWER_SUM_LANES];
    let mut maxima = [0.0f64; POWER_SUM_LANES];
    let chunks = out.chunks_exact(POWER_SUM_LANES);
    let rest = chunks.remainder();
    for chunk in chunks {
        for lane in 0..POWER_SUM_LANES {
            sums[lane] += chunk[lane];
            maxima[lane] = maxima[lane].max(chunk[lane]);
        }
    }
    let mut total_w = (sums[0] + sums[1]) + (sums[2] + sums[3]);
    let mut strongest_w = maxima[0].max(maxima[1]).max(maxima[2].max(maxima[3]));
    for &w in rest {
        total_w += w;
        strongest_w = strongest_w.max(w);
    }
    PowerSummary { total_w, strongest_w }
}

/// The [`LineTerm`] of every radiative transition, for level energies `level_energies_cm1`
/// (cm^-1 above the ground level, >= 0); each transition needs E_upper > E_lower, both levels
/// in range and A >= 0.
pub fn line_terms(
    level_energies_cm1: &[f64],
    radiative: &[RadiativeRate],
) -> Result<Vec<LineTerm>, PhysicsError> {
    let n = level_energies_cm1.len();
    for (j, &e) in level_energies_cm1.iter().enumerate() {
        require_non_negative(e, "cm^-1", || format!("level_energies_cm1[{j}]"))?;
    }
    radiative
        .iter()
        .enumerate()
        .map(|(i, r)| {
            for (name, level) in [("upper", r.upper), ("lower", r.lower)] {
                if level >= n {
                    return Err(PhysicsError::LevelOutOfRange {
                        field: format!("radiative[{i}].{name}"),
                        value: level,
                        n_levels: n,
                    });
                }
            }
            let delta_e_cm1 = level_energies_cm1[r.upper] - level_energies_cm1[r.lower];
            require_positive(delta_e_cm1, "cm^-1", || {
                format!("radiative[{i}] energy difference E_upper - E_lower")
            })?;
            require_non_negative(r.a_s, "s^-1", || format!("radiative[{i}].a_s"))?;
            Ok(LineTerm {
                upper: r.upper,
                lower: r.lower,
                delta_e_cm1,
                wavelength_vacuum_angstrom: vacuum_wavelength_angstrom_from_cm1(delta_e_cm1),
                power_per_upper_fraction_w: r.a_s * delta_e_cm1 * INVERSE_CM_J,
            })
        })
        .collect()
}

/// All line emissions for the given `fractions` (per level) and level energies
/// `level_energies_cm1` (cm^-1, same length); each transition needs E_upper > E_lower.
pub fn line_emissions(
    fractions: &[f64],
    level_energies_cm1: &[f64],
    radiative: &[RadiativeRate],
) -> Result<Vec<LineEmission>, PhysicsError> {
    require_same_len(
        "fractions",
        fractions.len(),
        "level_energies_cm1",
        level_energies_cm1.len(),
    )?;
    for (j, &f) in fractions.iter().enumerate() {
        require_non_negative(f, "", || format!("fractions[{j}]"))?;
    }
    Ok(line_terms(level_energies_cm1, radiative)?
        .iter()
        .map(|t| {
            let w = t.emissivity_w_per_ion(fractions);
            LineEmission {
                upper: t.upper,
                lower: t.lower,
                delta_e_cm1: t.delta_e_cm1,
                wavelength_vacuum_angstrom: t.wavelength_vacuum_angstrom,
                emissivity_w_per_ion: w,
                emissivity_erg_s_per_ion: w_to_erg_s(w),
            }
        })
        .collect())
}

/// Ratio of two emissivities (same units); the denominator must be > 0.
pub fn line_ratio(numerator: f64, denominator: f64) -> Result<f64, PhysicsError> {
    require_non_negative(numerator, "", || "numerator".to_owned())?;
    require_positive(denominator, "", || "denominator".to_owned())?;
    Ok(numerator / denominator)
}

/// Radiated power per ion, W: the sum of all line emissivities.
pub fn radiated_power_w_per_ion(lines: &[LineEmission]) -> f64 {
    lines.iter().map(|l| l.emissivity_w_per_ion).sum()
}

/// What [`critical_densities_cm3`] computes, as served with every answer.
pub const CRITICAL_DENSITY_DEFINITION: &str = "n_c(i) = sum_(j<i) A_ij / sum_(j<i) q_ij: downward radiative and collisional \
     (de-excitation) rates out of level i only; 0 for a level with no radiative \
     decay (the ground level), +inf for one with radiative decay but no downward collisional rate; \
     critical_densities_all_exits_per_cm3 holds sum_(j<i) A_ij / sum_(j!=i) q_ij (excitation out of i counted too, \
     the form of Osterbrock & Ferland 2006, eq. 3.30, whose tabulated values it reproduces)";

/// Critical density of every level, cm^-3, counting downward rates only (common practice, no
/// source; Osterbrock & Ferland 2006, eq. 3.30, from memory, count every collisional exit
/// j != i instead, served beside this as the all-exits ratio):
/// n_c(i) = sum_(j<i) A_ij / sum_(j<i) q_ij, the density at which collisional de-excitation of
/// level i equals its radiative decay. Only downward rates count: every radiative transition
/// out of i (to its lower level) and the de-excitation rate of every collisional transition
/// whose upper level is i; excitation out of i does not. `Some(0)` for a level with no
/// radiative decay (the ground level); `None` for a level that decays radiatively but has no
/// downward collisional rate (collisions never compete).
pub fn critical_densities_cm3(
    n_levels: usize,
    radiative: &[RadiativeRate],
    collisional: &[CollisionalRate],
) -> Result<Vec<Option<f64>>, PhysicsError> {
    critical_densities(n_levels, radiative, collisional, false)
}

/// The same ratio with every collisional exit of level i in the denominator,
/// sum_(j<i) A_ij / sum_(j!=i) q_ij: de-excitation and excitation out of i. Lower than
/// [`critical_densities_cm3`] wherever a level close above i is excited from it (a
/// fine-structure doublet); `Some(0)` and `None` as there, `None` also for a level with
/// radiative decay and no collisional exit at all.
pub fn critical_densities_all_exits_cm3(
    n_levels: usize,
    radiative: &[RadiativeRate],
    collisional: &[CollisionalRate],
) -> Result<Vec<Option<f64>>, PhysicsError> {
    critical_densities(n_levels, radiative, collisional, true)
}

fn critical_densities(
    n_levels: usize,
    radiative: &[RadiativeRate],
    collisional: &[CollisionalRate],
    count_excitation: bool,
) -> Result<Vec<Option<f64>>, PhysicsError> {
    let mut a_down = vec![0.0; n_levels];
    let mut q_out = vec![0.0; n_levels];
    let check = |list: &str, i: usize, name: &str, level: usize| {
        if level < n_levels {
            Ok(level)
        } else {
            Err(PhysicsError::LevelOutOfRange {
                field: format!("{list}[{i}].{name}"),
                value: level,
                n_levels,
            })
        }
    };
    for (i, r) in radiative.iter().enumerate() {
        let u = check("radiative", i, "upper", r.upper)?;
        check("radiative", i, "lower", r.lower)?;
        a_down[u] += require_non_negative(r.a_s, "s^-1", || format!("radiative[{i}].a_s"))?;
    }
    for (i, c) in collisional.iter().enumerate() {
        let u = check("collisional", i, "upper", c.upper)?;
        let l = check("collisional", i, "lower", c.lower)?;
        q_out[u] += require_non_negative(c.deexcitation_cm3_s, "cm^3 s^-1", || {
            format!("collisional[{i}].deexcitation_cm3_s")
        })?;
        let excitation = require_non_negative(c.excitation_cm3_s, "cm^3 s^-1", || {
            format!("collisional[{i}].excitation_cm3_s")
        })?;
        if count_excitation {
            q_out[l] += excitation;
        }
    }
    Ok(a_down
        .iter()
        .zip(&q_out)
        .map(|(&a, &q)| {
            if a == 0.0 {
                Some(0.0)
            } else if q > 0.0 {
                Some(a / q)
            } else {
                None
            }
        })
        .collect())
}
