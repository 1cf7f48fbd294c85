//! The unit conversions applied to served values. Server and client both call these, so an
//! answer converted on either side is the same to the last bit (for example q * 1e-6 and
//! q / 1e6 differ in the last bit for about a third of all values).

use crate::constants::KELVIN_PER_EV;

/// m^3 s^-1 per cm^3 s^-1.
pub const M3_PER_CM3: f64 = 1e-6;

/// A temperature kT in eV as a temperature in K.
#[inline]
pub fn kelvin_from_electron_volt(t_ev: f64) -> f64 {
    t_ev * KELVIN_PER_EV
}

/// A rate coefficient in cm^3 s^-1 as m^3 s^-1.
#[inline]
pub fn m3_s_from_cm3_s(q_cm3_s: f64) -> f64 {
    q_cm3_s * M3_PER_CM3
}

/// A density in m^-3 as cm^-3.
#[inline]
pub fn per_cm3_from_per_m3(n_m3: f64) -> f64 {
    n_m3 * M3_PER_CM3
}
