//! Physical constants (CODATA 2018 recommended values, SI) and the rate-coefficient prefactor
//! derived from them. Nothing here is pasted from a textbook: derived values are computed.

/// Planck constant h, J s (exact in SI since 2019; CODATA 2018).
pub const PLANCK_J_S: f64 = 6.626_070_15e-34;
/// Boltzmann constant k, J K^-1 (exact; CODATA 2018).
pub const BOLTZMANN_J_PER_K: f64 = 1.380_649e-23;
/// Elementary charge e, C (exact; CODATA 2018).
pub const ELEMENTARY_CHARGE_C: f64 = 1.602_176_634e-19;
/// Speed of light in vacuum c, m s^-1 (exact).
pub const SPEED_OF_LIGHT_M_S: f64 = 299_792_458.0;
/// Electron mass m_e, kg (CODATA 2018).
pub const ELECTRON_MASS_KG: f64 = 9.109_383_701_5e-31;
/// Rydberg constant R_inf, m^-1 (CODATA 2018).
pub const RYDBERG_PER_M: f64 = 10_973_731.568_160;
/// Bohr radius a_0, m (CODATA 2018).
pub const BOHR_RADIUS_M: f64 = 5.291_772_109_03e-11;
/// Fine-structure constant alpha (CODATA 2018).
pub const FINE_STRUCTURE: f64 = 7.297_352_569_3e-3;

/// Rydberg energy h c R_inf, J.
pub const RYDBERG_J: f64 = PLANCK_J_S * SPEED_OF_LIGHT_M_S * RYDBERG_PER_M;
/// One electronvolt, J.
pub const ELECTRON_VOLT_J: f64 = ELEMENTARY_CHARGE_C;
/// Energy of 1 cm^-1 (h c times 100 m^-1), J.
pub const INVERSE_CM_J: f64 = PLANCK_J_S * SPEED_OF_LIGHT_M_S * 100.0;
/// Temperature equivalent of 1 eV (e / k), K.
pub const KELVIN_PER_EV: f64 = ELECTRON_VOLT_J / BOLTZMANN_J_PER_K;
/// Temperature equivalent of 1 cm^-1 (h c / k, the second radiation constant c2), K.
pub const KELVIN_PER_INVERSE_CM: f64 = INVERSE_CM_J / BOLTZMANN_J_PER_K;
/// Temperature equivalent of 1 Rydberg, K.
pub const KELVIN_PER_RYDBERG: f64 = RYDBERG_J / BOLTZMANN_J_PER_K;

/// Prefactor of the de-excitation rate coefficient, cm^3 s^-1 K^1/2:
/// q_ul = C Upsilon / (g_u sqrt(T)) with C = h^2 / ((2 pi m_e)^(3/2) k^(1/2)), converted from
/// m^3 to cm^3. Evaluates to about 8.629e-6.
pub fn rate_prefactor_cm3_s_k_half() -> f64 {
    let two_pi_me = 2.0 * std::f64::consts::PI * ELECTRON_MASS_KG;
    let si = PLANCK_J_S * PLANCK_J_S / (two_pi_me * two_pi_me.sqrt()) / BOLTZMANN_J_PER_K.sqrt();
    si * 1.0e6
}
