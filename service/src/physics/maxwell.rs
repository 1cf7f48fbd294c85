//! Maxwellian average of a collision strength Omega(E_f) tabulated over the final (scattered)
//! electron energy E_f in Rydberg:
//!
//!   Upsilon(T) = integral_0^inf Omega(E_f) exp(-E_f/kT) d(E_f/kT).
//!
//! The integral is exact for the model that the table defines:
//! - between tabulated points Omega is linear in E_f (closed-form integral of (a + b x) e^-x,
//!   written as two positive endpoint weights so nothing cancels for tiny or huge segments);
//! - below the first point it is either constant down to threshold E_f = 0 (the default, usual
//!   for positive ions, whose Omega is finite at threshold) or linear down to zero at threshold
//!   (neutral targets);
//! - above the last point it follows the high-energy form of the transition type, matched to
//!   the last tabulated value (incident energy E_i = E_f + dE):
//!   - allowed and weak allowed: Omega = A ln(E_i/dE) + B (Bethe). With the weighted oscillator
//!     strength g_l f known, A = 4 g_l f / dE_Ry (the Bethe limit, Burgess & Tully 1992, from
//!     memory) and B matches the last point; without it, B = 0 and A matches the last point;
//!   - forbidden: Omega constant at its last value;
//!   - spin change: Omega = Omega_N (E_iN / E_i)^2.
//!
//! Tail integrals, with a = dE/kT, x_N = E_N/kT, t_N = x_N + a (integration by parts):
//! Bethe: e^-x_N [A (ln(E_iN/dE) + e^t_N E_1(t_N)) + B]; constant: Omega_N e^-x_N;
//! inverse square: Omega_N e^-x_N t_N e^t_N E_2(t_N).

use super::constants::KELVIN_PER_RYDBERG;
use super::elementary::{exp, exp_m1, ln, ln_1p};
use super::error::{
    PhysicsError, require_increasing, require_non_negative, require_positive, require_same_len,
};
use super::expint::en_scaled;
use super::transition::TransitionType;

/// How Omega continues from the first tabulated final energy down to threshold (E_f = 0).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum BelowFirstPoint {
    /// Omega constant at its first tabulated value (positive ions; the default).
    #[default]
    ConstantToThreshold,
    /// Omega linear from zero at threshold to its first tabulated value (neutral targets).
    LinearFromZeroAtThreshold,
}

/// The closed-form high-energy continuation beyond the last tabulated point.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum HighEnergyTail {
    /// Omega = slope ln(E_i/dE) + offset (Bethe form, allowed and weak-allowed types).
    Bethe {
        /// Coefficient A of ln(E_i/dE).
        slope: f64,
        /// Constant B.
        offset: f64,
    },
    /// Omega constant at the last tabulated value (forbidden type).
    Constant,
    /// Omega = Omega_N (E_iN / E_i)^2 (spin-change type).
    InverseSquare,
}

/// A validated collision-strength table with its threshold and tail treatment; evaluate the
/// effective collision strength at any temperature with [`Self::effective_collision_strength`].
#[derive(Debug, Clone, PartialEq)]
pub struct CollisionStrengthTable {
    final_energies_ry: Vec<f64>,
    omega: Vec<f64>,
    delta_e_ry: f64,
    below: BelowFirstPoint,
    tail: HighEnergyTail,
}

impl CollisionStrengthTable {
    /// Validate and build a table. `final_energies_ry`: final electron energies, Ry, finite,
    /// non-negative, strictly increasing; `omega`: collision strengths, finite, non-negative,
    /// same length (at least 1); `delta_e_ry`: transition energy, Ry, positive;
    /// `weighted_oscillator_strength`: g_l f_lu (non-negative), used by the allowed and
    /// weak-allowed tails only.
    pub fn new(
        final_energies_ry: &[f64],
        omega: &[f64],
        delta_e_ry: f64,
        kind: TransitionType,
        weighted_oscillator_strength: Option<f64>,
        below: BelowFirstPoint,
    ) -> Result<Self, PhysicsError> {
        require_same_len("final_energies_ry", final_energies_ry.len(), "omega", omega.len())?;
        if omega.is_empty() {
            return Err(PhysicsError::TooFewPoints {
                field: "omega",
                len: 0,
                min: 1,
            });
        }
        require_increasing(final_energies_ry, "final_energies_ry", "Ry", false)?;
        for (i, &w) in omega.iter().enumerate() {
            require_non_negative(w, "", || format!("omega[{i}]"))?;
        }
        require_positive(delta_e_ry, "Ry", || "delta_e_ry".to_owned())?;
        if let Some(gf) = weighted_oscillator_strength {
            require_non_negative(gf, "", || "weighted_oscillator_strength".to_owned())?;
        }
        let last_e = final_energies_ry[final_energies_ry.len() - 1];
        let last_omega = omega[omega.len() - 1];
        let tail = match kind {
            TransitionType::Forbidden => HighEnergyTail::Constant,
            TransitionType::SpinChange => HighEnergyTail::InverseSquare,
            TransitionType::Allowed | TransitionType::WeakAllowed => {
                let log_ratio = ln_1p(last_e / delta_e_ry);
                match weighted_oscillator_strength {
                    Some(gf) => {
                        let slope = 4.0 * gf / delta_e_ry;
                        HighEnergyTail::Bethe {
                            slope,
                            offset: last_omega - slope * log_ratio,
                        }
                    }
                    None if last_omega == 0.0 => HighEnergyTail::Bethe {
                        slope: 0.0,
                        offset: 0.0,
                    },
                    None if log_ratio > 0.0 => HighEnergyTail::Bethe {
                        slope: last_omega / log_ratio,
                        offset: 0.0,
                    },
                    None => {
                        return Err(PhysicsError::TailUndetermined {
                            reason: "allowed transition whose last point is at threshold (E_f = 0) and no oscillator strength: the ln(E) coefficient cannot be matched",
                        });
                    }
                }
            }
        };
        Ok(Self {
            final_energies_ry: final_energies_ry.to_vec(),
            omega: omega.to_vec(),
            delta_e_ry,
            below,
            tail,
        })
    }

    /// The high-energy continuation chosen for this table.
    pub fn tail(&self) -> HighEnergyTail {
        self.tail
    }

    /// The model collision strength at final energy `final_energy_ry` (Ry, >= 0): the same
    /// piecewise function that [`Self::effective_collision_strength`] integrates.
    pub fn omega_at(&self, final_energy_ry: f64) -> Result<f64, PhysicsError> {
        require_non_negative(final_energy_ry, "Ry", || "final_energy_ry".to_owned())?;
        let e = &self.final_energies_ry;
        let w = &self.omega;
        let n = e.len();
        if final_energy_ry <= e[0] {
            return Ok(match self.below {
                BelowFirstPoint::ConstantToThreshold => w[0],
                BelowFirstPoint::LinearFromZeroAtThreshold if e[0] > 0.0 => w[0] * final_energy_ry / e[0],
                BelowFirstPoint::LinearFromZeroAtThreshold => w[0],
            });
        }
        if final_energy_ry >= e[n - 1] {
            let incident_ratio = 1.0 + final_energy_ry / self.delta_e_ry;
            return Ok(match self.tail {
                HighEnergyTail::Bethe { slope, offset } => slope * ln(incident_ratio) + offset,
                HighEnergyTail::Constant => w[n - 1],
                HighEnergyTail::InverseSquare => {
                    let r = (e[n - 1] + self.delta_e_ry) / (final_energy_ry + self.delta_e_ry);
                    w[n - 1] * r * r
                }
            });
        }
        let i = e.partition_point(|&x| x <= final_energy_ry) - 1;
        let s = (final_energy_ry - e[i]) / (e[i + 1] - e[i]);
        Ok(w[i] * (1.0 - s) + w[i + 1] * s)
    }

    /// Effective collision strength Upsilon (dimensionless) at electron temperature `t_k`
    /// (K, > 0 and finite): the exact Maxwellian average of the model of this table.
    pub fn effective_collision_strength(&self, t_k: f64) -> Result<f64, PhysicsError> {
        require_positive(t_k, "K", || "temperature_k".to_owned())?;
        let kt_ry = t_k / KELVIN_PER_RYDBERG;
        let e = &self.final_energies_ry;
        let w = &self.omega;
        let n = e.len();

        let x_first = e[0] / kt_ry;
        let mut total = match self.below {
            BelowFirstPoint::ConstantToThreshold => w[0] * -exp_m1(-x_first),
            BelowFirstPoint::LinearFromZeroAtThreshold => w[0] * segment_weights(x_first).1,
        };
        for i in 0..n - 1 {
            let x0 = e[i] / kt_ry;
            let h = (e[i + 1] - e[i]) / kt_ry;
            let (w0, w1) = segment_weights(h);
            total += exp(-x0) * (w[i] * w0 + w[i + 1] * w1);
        }
        total += self.tail_integral(kt_ry);
        if total.is_finite() {
            Ok(total)
        } else {
            Err(PhysicsError::NonFinite {
                quantity: "effective collision strength",
                detail: format!("temperature_k = {t_k} K"),
            })
        }
    }

    /// Integral of the tail from the last point to infinity over x = E_f/kT.
    fn tail_integral(&self, kt_ry: f64) -> f64 {
        let n = self.final_energies_ry.len();
        let last_e = self.final_energies_ry[n - 1];
        let last_omega = self.omega[n - 1];
        let x_last = last_e / kt_ry;
        let t_last = (last_e + self.delta_e_ry) / kt_ry;
        let decay = exp(-x_last);
        if decay == 0.0 {
            return 0.0;
        }
        match self.tail {
            HighEnergyTail::Bethe { slope, offset } => {
                let log_ratio = ln_1p(last_e / self.delta_e_ry);
                decay * (slope * (log_ratio + en_scaled(1, t_last)) + offset)
            }
            HighEnergyTail::Constant => decay * last_omega,
            HighEnergyTail::InverseSquare => decay * last_omega * t_last * en_scaled(2, t_last),
        }
    }
}

/// Endpoint weights (w0, w1) of a linear segment of width h in x = E/kT, starting at x = 0:
/// integral_0^h (w0' (1 - u/h) + w1' u/h) e^-u du = w0' w0 + w1' w1, both weights >= 0.
/// w0 = (h - 1 + e^-h)/h, w1 = (1 - (1 + h) e^-h)/h; power series below h = 1/2 so that
/// nothing cancels, and the limits 1/h for h -> inf.
fn segment_weights(h: f64) -> (f64, f64) {
    if h <= 0.0 {
        return (0.0, 0.0);
    }
    if h < 0.5 {
        // p = sum_(k>=2) (-h)^k / k!,  g = sum_(k>=2) (k-1) (-h)^k / k!
        let mut t = -h; // (-h)^k / k! at k = 1
        let mut p = 0.0;
        let mut g = 0.0;
        for k in 2..40 {
            let kf = f64::from(k);
            t *= -h / kf;
            p += t;
            g += (kf - 1.0) * t;
            if t.abs() < 1e-18 * p.abs() {
                break;
            }
        }
        (p / h, g / h)
    } else {
        let em = exp(-h);
        let p = h + exp_m1(-h);
        let g = -exp_m1(-h) - h * em;
        (p / h, g / h)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn segment_weights_match_both_branches() {
        // common practice, no source: series and closed form agree where both are accurate
        for &h in &[0.3, 0.499_999, 0.5, 0.7] {
            let (a0, a1) = segment_weights(h);
            let em = (-h).exp();
            let b0 = (h - 1.0 + em) / h;
            let b1 = (1.0 - (1.0 + h) * em) / h;
            assert!((a0 / b0 - 1.0).abs() < 1e-13, "h={h}");
            assert!((a1 / b1 - 1.0).abs() < 1e-13, "h={h}");
            // the weights add up to integral_0^h e^-u du
            assert!(((a0 + a1) / (1.0 - em) - 1.0).abs() < 1e-14);
        }
    }

    #[test]
    fn rejects_bad_tables() {
        // common practice, no source: energies must increase, omega must be >= 0
        let bad = CollisionStrengthTable::new(
            &[0.0, 0.2, 0.1],
            &[1.0, 1.0, 1.0],
            0.1,
            TransitionType::Forbidden,
            None,
            BelowFirstPoint::default(),
        )
        .unwrap_err();
        assert_eq!(
            bad.to_string(),
            "final_energies_ry[2] = 0.1 Ry: must be > the previous value 0.2 Ry (strictly increasing)"
        );
        let bad = CollisionStrengthTable::new(
            &[0.0, 0.2],
            &[1.0, -1.0],
            0.1,
            TransitionType::Forbidden,
            None,
            BelowFirstPoint::default(),
        )
        .unwrap_err();
        assert_eq!(bad.to_string(), "omega[1] = -1: must be >= 0 and finite");
    }
}
