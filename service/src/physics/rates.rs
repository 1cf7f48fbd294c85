//! Electron-impact rate coefficients from effective collision strengths:
//! q_ul = C Upsilon / (g_u sqrt(T)) and, by detailed balance,
//! q_lu = (g_u / g_l) q_ul exp(-dE/kT), with C from
//! [`super::constants::rate_prefactor_cm3_s_k_half`] (about 8.629e-6 cm^3 s^-1 K^1/2).

use super::constants::rate_prefactor_cm3_s_k_half;
use super::error::{PhysicsError, require_non_negative, require_positive};

/// De-excitation rate coefficient q_ul, cm^3 s^-1, from the effective collision strength
/// `upsilon` (dimensionless, >= 0), the upper statistical weight `g_upper` (> 0) and the
/// electron temperature `t_k` (K, > 0).
pub fn deexcitation_rate_cm3_s(upsilon: f64, g_upper: f64, t_k: f64) -> Result<f64, PhysicsError> {
    require_non_negative(upsilon, "", || "upsilon".to_owned())?;
    require_positive(g_upper, "", || "g_upper".to_owned())?;
    require_positive(t_k, "K", || "temperature_k".to_owned())?;
    Ok(rate_prefactor_cm3_s_k_half() * upsilon / (g_upper * t_k.sqrt()))
}

/// Excitation rate coefficient q_lu, cm^3 s^-1, by detailed balance from the same `upsilon`;
/// `delta_e_k` is the transition energy as a temperature dE/k (K, >= 0), `t_k` in K (> 0).
pub fn excitation_rate_cm3_s(
    upsilon: f64,
    g_lower: f64,
    g_upper: f64,
    delta_e_k: f64,
    t_k: f64,
) -> Result<f64, PhysicsError> {
    require_positive(g_lower, "", || "g_lower".to_owned())?;
    require_non_negative(delta_e_k, "K", || "delta_e_k".to_owned())?;
    let q_ul = deexcitation_rate_cm3_s(upsilon, g_upper, t_k)?;
    Ok((g_upper / g_lower) * q_ul * boltzmann_factor(delta_e_k, t_k))
}

/// Boltzmann factor exp(-dE/kT) for `delta_e_k` = dE/k (K) and `t_k` (K); no validation.
pub fn boltzmann_factor(delta_e_k: f64, t_k: f64) -> f64 {
    (-delta_e_k / t_k).exp()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn rejects_bad_input_with_named_field() {
        // common practice, no source: temperatures must be positive
        let err = deexcitation_rate_cm3_s(1.0, 2.0, -5.0).unwrap_err();
        assert_eq!(err.to_string(), "temperature_k = -5 K: must be > 0 and finite");
        assert!(excitation_rate_cm3_s(1.0, 0.0, 2.0, 1.0, 1.0e4).is_err());
        assert!(excitation_rate_cm3_s(f64::NAN, 1.0, 2.0, 1.0, 1.0e4).is_err());
    }
}
