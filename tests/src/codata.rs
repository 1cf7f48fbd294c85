//! Physical constants the tests compute their expectations from, typed in from the CODATA 2018
//! recommended values (Tiesinga et al. 2021, Rev. Mod. Phys. 93, 025010); the first four are
//! exact in the 2019 SI. Kept apart from the server's own constants on purpose.

/// Planck constant h, J s (exact).
pub const PLANCK_J_S: f64 = 6.626_070_15e-34;
/// Speed of light in vacuum c, m s^-1 (exact).
pub const SPEED_OF_LIGHT_M_S: f64 = 299_792_458.0;
/// Boltzmann constant k, J K^-1 (exact).
pub const BOLTZMANN_J_PER_K: f64 = 1.380_649e-23;
/// Elementary charge e, C (exact).
pub const ELEMENTARY_CHARGE_C: f64 = 1.602_176_634e-19;

/// Second radiation constant c2 = h c / k in cm K: the temperature equivalent of 1 cm^-1.
pub fn kelvin_per_inverse_cm() -> f64 {
    PLANCK_J_S * SPEED_OF_LIGHT_M_S * 100.0 / BOLTZMANN_J_PER_K
}

/// e / k in K: the temperature equivalent of 1 eV.
pub fn kelvin_per_ev() -> f64 {
    ELEMENTARY_CHARGE_C / BOLTZMANN_J_PER_K
}

/// Photon energy h c / lambda, J, of a vacuum wavelength in Angstrom.
pub fn photon_energy_j(wavelength_angstrom: f64) -> f64 {
    PLANCK_J_S * SPEED_OF_LIGHT_M_S / (wavelength_angstrom * 1e-10)
}

/// The rate-coefficient constant as printed in Osterbrock & Ferland (2006), eq. 3.20 (equation
/// number from memory):
/// q_ul = 8.629e-6 Upsilon / (g_u sqrt(T)) cm^3 s^-1 with T in K (four significant digits).
pub const OSTERBROCK_FERLAND_Q_CONSTANT: f64 = 8.629e-6;
