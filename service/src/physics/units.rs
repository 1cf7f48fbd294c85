//! Unit conversions. Each function converts one quantity between two units named in its name;
//! all factors derive from the CODATA 2018 constants in [`super::constants`].
//!
//! Temperature equivalents (`*_to_k`, `k_to_*`) convert an energy E to E/k in kelvin.

use super::constants::{
    ELECTRON_VOLT_J, INVERSE_CM_J, KELVIN_PER_EV, KELVIN_PER_INVERSE_CM, KELVIN_PER_RYDBERG, RYDBERG_J,
};

/// Centimetres per metre.
const CM_PER_M: f64 = 100.0;

/// Temperature equivalent of an energy in eV: T = E / k, K.
pub fn ev_to_k(energy_ev: f64) -> f64 {
    energy_ev * KELVIN_PER_EV
}

/// Energy kT in eV of a temperature in K.
pub fn k_to_ev(t_k: f64) -> f64 {
    t_k / KELVIN_PER_EV
}

/// Temperature equivalent of an energy in cm^-1: T = h c sigma / k, K.
pub fn cm1_to_k(energy_cm1: f64) -> f64 {
    energy_cm1 * KELVIN_PER_INVERSE_CM
}

/// Energy kT in cm^-1 of a temperature in K.
pub fn k_to_cm1(t_k: f64) -> f64 {
    t_k / KELVIN_PER_INVERSE_CM
}

/// Temperature equivalent of an energy in Rydberg, K.
pub fn ry_to_k(energy_ry: f64) -> f64 {
    energy_ry * KELVIN_PER_RYDBERG
}

/// Energy kT in Rydberg of a temperature in K.
pub fn k_to_ry(t_k: f64) -> f64 {
    t_k / KELVIN_PER_RYDBERG
}

/// Number density: cm^-3 to m^-3.
pub fn per_cm3_to_per_m3(n_cm3: f64) -> f64 {
    n_cm3 * CM_PER_M.powi(3)
}

/// Number density: m^-3 to cm^-3.
pub fn per_m3_to_per_cm3(n_m3: f64) -> f64 {
    n_m3 / CM_PER_M.powi(3)
}

/// Rate coefficient: cm^3 s^-1 to m^3 s^-1.
pub fn cm3_s_to_m3_s(q_cm3_s: f64) -> f64 {
    q_cm3_s / CM_PER_M.powi(3)
}

/// Rate coefficient: m^3 s^-1 to cm^3 s^-1.
pub fn m3_s_to_cm3_s(q_m3_s: f64) -> f64 {
    q_m3_s * CM_PER_M.powi(3)
}

/// Energy: cm^-1 to J.
pub fn cm1_to_j(energy_cm1: f64) -> f64 {
    energy_cm1 * INVERSE_CM_J
}

/// Energy: J to cm^-1.
pub fn j_to_cm1(energy_j: f64) -> f64 {
    energy_j / INVERSE_CM_J
}

/// Energy: eV to J.
pub fn ev_to_j(energy_ev: f64) -> f64 {
    energy_ev * ELECTRON_VOLT_J
}

/// Energy: J to eV.
pub fn j_to_ev(energy_j: f64) -> f64 {
    energy_j / ELECTRON_VOLT_J
}

/// Energy: Rydberg to J.
pub fn ry_to_j(energy_ry: f64) -> f64 {
    energy_ry * RYDBERG_J
}

/// Energy: J to Rydberg.
pub fn j_to_ry(energy_j: f64) -> f64 {
    energy_j / RYDBERG_J
}

/// Energy: cm^-1 to eV.
pub fn cm1_to_ev(energy_cm1: f64) -> f64 {
    energy_cm1 * (INVERSE_CM_J / ELECTRON_VOLT_J)
}

/// Energy: eV to cm^-1.
pub fn ev_to_cm1(energy_ev: f64) -> f64 {
    energy_ev * (ELECTRON_VOLT_J / INVERSE_CM_J)
}

/// Energy: cm^-1 to Rydberg.
pub fn cm1_to_ry(energy_cm1: f64) -> f64 {
    energy_cm1 * (INVERSE_CM_J / RYDBERG_J)
}

/// Energy: Rydberg to cm^-1.
pub fn ry_to_cm1(energy_ry: f64) -> f64 {
    energy_ry * (RYDBERG_J / INVERSE_CM_J)
}

/// Energy: eV to Rydberg.
pub fn ev_to_ry(energy_ev: f64) -> f64 {
    energy_ev * (ELECTRON_VOLT_J / RYDBERG_J)
}

/// Energy: Rydberg to eV.
pub fn ry_to_ev(energy_ry: f64) -> f64 {
    energy_ry * (RYDBERG_J / ELECTRON_VOLT_J)
}

/// Vacuum wavelength in Angstrom of a photon whose energy is `delta_e_cm1` (cm^-1):
/// lambda = 1 / sigma. Returns infinity for a zero energy difference.
pub fn vacuum_wavelength_angstrom_from_cm1(delta_e_cm1: f64) -> f64 {
    1.0e8 / delta_e_cm1
}

/// Vacuum wavelength in nm of a photon whose energy is `delta_e_cm1` (cm^-1).
pub fn vacuum_wavelength_nm_from_cm1(delta_e_cm1: f64) -> f64 {
    1.0e7 / delta_e_cm1
}

/// Vacuum wavelength in Angstrom of a photon of energy `delta_e_ev` (eV): lambda = h c / E.
pub fn vacuum_wavelength_angstrom_from_ev(delta_e_ev: f64) -> f64 {
    vacuum_wavelength_angstrom_from_cm1(ev_to_cm1(delta_e_ev))
}

/// Vacuum wavelength in nm of a photon of energy `delta_e_ev` (eV).
pub fn vacuum_wavelength_nm_from_ev(delta_e_ev: f64) -> f64 {
    vacuum_wavelength_nm_from_cm1(ev_to_cm1(delta_e_ev))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn conversions_invert_each_other() {
        // common practice, no source: a conversion followed by its inverse is the identity
        for &x in &[1.0e-3, 1.0, 12345.678, 1.0e7] {
            type Conversion = fn(f64) -> f64;
            let pairs: [(Conversion, Conversion); 10] = [
                (ev_to_k, k_to_ev),
                (cm1_to_k, k_to_cm1),
                (ry_to_k, k_to_ry),
                (per_cm3_to_per_m3, per_m3_to_per_cm3),
                (cm3_s_to_m3_s, m3_s_to_cm3_s),
                (cm1_to_j, j_to_cm1),
                (ev_to_j, j_to_ev),
                (ry_to_j, j_to_ry),
                (cm1_to_ev, ev_to_cm1),
                (ev_to_ry, ry_to_ev),
            ];
            for (f, g) in pairs {
                assert!((g(f(x)) / x - 1.0).abs() < 4.0 * f64::EPSILON);
            }
            assert!((ry_to_cm1(cm1_to_ry(x)) / x - 1.0).abs() < 4.0 * f64::EPSILON);
        }
    }
}
