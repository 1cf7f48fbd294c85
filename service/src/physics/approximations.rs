//! Approximate effective collision strengths for transitions without computed data. Every
//! result is an [`Approximate`] value that carries its [`ApproximationMethod`], so the flag
//! travels with the number and cannot be dropped silently.
//!
//! - Van Regemorter (1962, ApJ 136, 906), allowed lines: Upsilon = (8 pi / sqrt 3) g_l f
//!   (Ry / dE) P(dE/kT), with the effective Gaunt factor P(y) = (sqrt 3 / 2 pi) e^y E_1(y)
//!   (the Bethe-approximation form). For positive ions P tends to 0.2 at large y (the paper's
//!   large-y value for ions, from memory); we join the two smoothly with a p-norm,
//!   P = (P_Bethe^4 + 0.2^4)^(1/4), which follows the paper's ion table within 5 % (from
//!   memory) and, unlike a sharp max(0.2, P_Bethe), has no kink, so rate tables built from it
//!   interpolate to better than 1e-3 (our choice). Neutral targets have no floor.
//! - Semi-classical estimate (order of magnitude only): the electron must come within a
//!   radius rho of the target; for a target of net charge Z the attractive Coulomb field
//!   enlarges the cross-section to sigma = pi rho^2 (1 + Z e^2 / (4 pi eps0 rho E)), E the
//!   incident kinetic energy (classical closest approach with angular momentum conserved).
//!   With Omega = g_l (E/Ry) sigma / (pi a0^2), r = rho/a0 and e^2/(4 pi eps0 a0) = 2 Ry,
//!   Omega(E) is proportional to f(E) = r^2 E/Ry + 2 Z r. The cross-section fixes only the
//!   energy dependence: the scale is a collision strength s of order unity at threshold,
//!   Omega(E) = s f(E) / f(dE), so Omega(dE) = s whatever the radius (the absolute
//!   geometric-plus-focusing value overestimates real forbidden-line collision strengths by
//!   5-10x for singly charged ions; our choice). Since f is linear in E, the Maxwell average is
//!   Upsilon = s f(kT + dE) / f(dE) in closed form: nearly constant for ions, where focusing
//!   dominates, and growing like kT/dE for neutral targets.

use super::constants::KELVIN_PER_RYDBERG;
use super::elementary::{fourth_root, pow4};
use super::error::{PhysicsError, require_non_negative, require_positive};
use super::expint::e1_scaled;

/// Which approximation produced a value.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum ApproximationMethod {
    /// Van Regemorter (1962) effective-Gaunt-factor formula.
    VanRegemorter,
    /// Geometric cross-section with Coulomb focusing (order of magnitude).
    SemiClassical,
}

/// A value produced by an approximation; `method` says which, and must be reported with it.
#[must_use = "an approximate value must be reported together with its method"]
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Approximate {
    /// The approximate value (a collision strength or effective collision strength).
    pub value: f64,
    /// The approximation that produced it.
    pub method: ApproximationMethod,
}

/// Whether the target is a neutral atom or a positive ion (changes Van Regemorter's P).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum TargetCharge {
    /// Neutral atom: P(y) = (sqrt 3 / 2 pi) e^y E_1(y), no floor.
    Neutral,
    /// Positive ion: P(y) = (P_Bethe^4 + 0.2^4)^(1/4), P_Bethe = (sqrt 3 / 2 pi) e^y E_1(y).
    PositiveIon,
}

/// Large-y limit of Van Regemorter's effective Gaunt factor for positive ions.
pub const VAN_REGEMORTER_ION_FLOOR: f64 = 0.2;

/// Exponent of the smooth join between the Bethe form and the ion floor.
pub const VAN_REGEMORTER_JOIN_POWER: i32 = 4;
// The join below is written out for this power (x^4 and x^(1/4)).
const _: () = assert!(VAN_REGEMORTER_JOIN_POWER == 4);

/// Van Regemorter's effective Gaunt factor P(y) at y = dE/kT (> 0); NaN for y <= 0 or NaN.
pub fn van_regemorter_gaunt_factor(y: f64, target: TargetCharge) -> f64 {
    if y.is_nan() || y <= 0.0 {
        return f64::NAN;
    }
    let bethe = 3.0_f64.sqrt() / (2.0 * std::f64::consts::PI) * e1_scaled(y);
    match target {
        TargetCharge::Neutral => bethe,
        // The join power is 4: x^4 and x^(1/4) as two products and two square roots, the
        // same bits in every build (a folded powi(4) of a constant differs in the last bit).
        TargetCharge::PositiveIon => fourth_root(pow4(bethe) + pow4(VAN_REGEMORTER_ION_FLOOR)),
    }
}

/// Van Regemorter effective collision strength from the weighted absorption oscillator
/// strength `weighted_oscillator_strength` = g_l f_lu (>= 0), the transition energy
/// `delta_e_ry` (Ry, > 0) and the temperature `t_k` (K, > 0).
pub fn van_regemorter_upsilon(
    weighted_oscillator_strength: f64,
    delta_e_ry: f64,
    t_k: f64,
    target: TargetCharge,
) -> Result<Approximate, PhysicsError> {
    require_non_negative(weighted_oscillator_strength, "", || {
        "weighted_oscillator_strength".to_owned()
    })?;
    require_positive(delta_e_ry, "Ry", || "delta_e_ry".to_owned())?;
    require_positive(t_k, "K", || "temperature_k".to_owned())?;
    let y = delta_e_ry * KELVIN_PER_RYDBERG / t_k;
    let prefactor = 8.0 * std::f64::consts::PI / 3.0_f64.sqrt();
    Ok(Approximate {
        value: prefactor * weighted_oscillator_strength / delta_e_ry * van_regemorter_gaunt_factor(y, target),
        method: ApproximationMethod::VanRegemorter,
    })
}

/// Hydrogenic mean radius of a bound level, in Bohr radii: `<r> = (3/2) n*^2 / Z_c` with the
/// effective quantum number n* = Z_c sqrt(Ry / E_b) (l = 0 value; for l > 0 the mean radius is
/// smaller by (1 - l(l+1)/(3 n*^2))). `binding_energy_ry` E_b (Ry, > 0); `core_charge` Z_c
/// (> 0) is the charge seen by the bound electron, net ion charge + 1.
pub fn hydrogenic_mean_radius_bohr(binding_energy_ry: f64, core_charge: f64) -> Result<f64, PhysicsError> {
    require_positive(binding_energy_ry, "Ry", || "binding_energy_ry".to_owned())?;
    require_positive(core_charge, "", || "core_charge".to_owned())?;
    Ok(1.5 * core_charge / binding_energy_ry)
}

/// Parameters of the semi-classical estimate for one transition.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SemiClassicalEstimate {
    delta_e_ry: f64,
    radius_bohr: f64,
    ion_charge: f64,
    strength: f64,
}

impl SemiClassicalEstimate {
    /// Default dimensionless strength s: the collision strength at threshold.
    pub const DEFAULT_STRENGTH: f64 = 1.0;

    /// Validate: `delta_e_ry` (Ry, > 0), `radius_bohr` interaction radius (a0, > 0; see
    /// [`hydrogenic_mean_radius_bohr`]), `ion_charge` net charge Z of the target (>= 0, 0 for
    /// neutral), `strength` s (> 0, order unity), the collision strength at threshold.
    pub fn new(
        delta_e_ry: f64,
        radius_bohr: f64,
        ion_charge: f64,
        strength: f64,
    ) -> Result<Self, PhysicsError> {
        require_positive(delta_e_ry, "Ry", || "delta_e_ry".to_owned())?;
        require_positive(radius_bohr, "a0", || "radius_bohr".to_owned())?;
        require_non_negative(ion_charge, "", || "ion_charge".to_owned())?;
        require_positive(strength, "", || "strength".to_owned())?;
        Ok(Self {
            delta_e_ry,
            radius_bohr,
            ion_charge,
            strength,
        })
    }

    /// Collision strength at final electron energy `final_energy_ry` (Ry, >= 0).
    pub fn collision_strength(&self, final_energy_ry: f64) -> Result<Approximate, PhysicsError> {
        require_non_negative(final_energy_ry, "Ry", || "final_energy_ry".to_owned())?;
        Ok(self.omega_with_mean_incident(final_energy_ry + self.delta_e_ry))
    }

    /// Effective collision strength at `t_k` (K, > 0): the exact Maxwell average of
    /// [`Self::collision_strength`] (the mean incident energy is kT + dE).
    pub fn effective_collision_strength(&self, t_k: f64) -> Result<Approximate, PhysicsError> {
        require_positive(t_k, "K", || "temperature_k".to_owned())?;
        Ok(self.omega_with_mean_incident(t_k / KELVIN_PER_RYDBERG + self.delta_e_ry))
    }

    /// s f(E) / f(dE) with f(E) = r^2 E/Ry + 2 Z r: linear in E, so it serves for both Omega
    /// and its Maxwell average.
    fn omega_with_mean_incident(&self, incident_ry: f64) -> Approximate {
        let r = self.radius_bohr;
        let focusing = 2.0 * self.ion_charge * r;
        let shape = |e: f64| r * r * e + focusing;
        Approximate {
            value: self.strength * shape(incident_ry) / shape(self.delta_e_ry),
            method: ApproximationMethod::SemiClassical,
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn flags_and_rejects() {
        // common practice, no source: approximations are flagged; bad input is refused
        let v = van_regemorter_upsilon(0.1, 0.5, 1.0e4, TargetCharge::PositiveIon).unwrap();
        assert_eq!(v.method, ApproximationMethod::VanRegemorter);
        assert!(van_regemorter_upsilon(0.1, 0.0, 1.0e4, TargetCharge::Neutral).is_err());
        assert!(SemiClassicalEstimate::new(0.1, 1.0, -1.0, 1.0).is_err());
        assert!(van_regemorter_gaunt_factor(0.0, TargetCharge::Neutral).is_nan());
    }
}
