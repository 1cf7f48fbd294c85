//! Burgess & Tully (1992, A&A 254, 436) scaling of effective collision strengths, written from
//! memory of the paper. With u = kT/dE (T and dE/k in K) and scaling parameter C:
//!
//! | type | x (scaled temperature)        | y (scaled Upsilon)   | known y(1)               |
//! |------|-------------------------------|----------------------|--------------------------|
//! | 1    | 1 - ln C / ln(u + C)          | Upsilon / ln(u + e)  | 4 g_l f / dE_Ry (Bethe)  |
//! | 2    | u / (u + C)                   | Upsilon              | none (Born limit)        |
//! | 3    | u / (u + C)                   | (u + 1) Upsilon      | none (see below)         |
//! | 4    | 1 - ln C / ln(u + C)          | Upsilon / ln(u + C)  | 4 g_l f / dE_Ry (Bethe)  |
//!
//! x runs from 0 (T -> 0) to 1 (T -> inf). Types 1 and 4 need C > 1 (otherwise ln(u + C)
//! crosses zero and x is not monotone in T); types 2 and 3 need C > 0.
//!
//! Type 3 limit: for a spin-change transition Omega falls as E^-2, so at high T
//! Upsilon -> (1/kT) integral Omega dE_f and y(1) = (1/dE) integral Omega dE_f, which is
//! positive but not known from the oscillator strength; we add no limit point (our derivation;
//! a fixed y(1) = 0 would force Upsilon to fall faster than 1/T, against the E^-2 law).
//!
//! Interpolation: [`ScaledUpsilon`] runs a PCHIP through the scaled points (plus the x = 1
//! limit point for types 1 and 4 when g_l f is given). Beyond the first and last node y is
//! continued as y_end exp((y'_end / y_end)(x - x_end)): it matches value and slope at the node
//! (no kink, so tables built on it interpolate smoothly), stays positive, and, since x is
//! bounded by 0 and 1, stays bounded. With a flat end this is the constant-y continuation:
//! below the lowest tabulated T Upsilon tends to a constant as T -> 0 (types 1-3); above the
//! highest T without a limit point it gives the high-T law of each type: Bethe ln(u + e)
//! growth (types 1, 4), constant (type 2), 1/(u + 1) fall (type 3). Our choice.

use super::constants::KELVIN_PER_RYDBERG;
use super::elementary::{exp_m1, ln, ln_1p};
use super::error::{
    PhysicsError, require_increasing, require_non_negative, require_positive, require_same_len,
};
use super::pchip::Pchip;
use super::transition::TransitionType;

/// Default scaling parameter C for a type: e for types 1 and 4 (then the type-1 x and y
/// denominators coincide at ln(u + e)), 1 for types 2 and 3 (x = 1/2 at kT = dE). Our choice;
/// Burgess & Tully choose C per transition, so callers may override it.
pub fn default_scaling_parameter(kind: TransitionType) -> f64 {
    if kind.is_dipole_allowed() {
        std::f64::consts::E
    } else {
        1.0
    }
}

/// The Burgess & Tully transform for one transition: type, transition energy and C.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct BurgessTullyScaling {
    kind: TransitionType,
    delta_e_k: f64,
    c: f64,
}

impl BurgessTullyScaling {
    /// Build the transform; `delta_e_k` = dE/k (K, > 0); `c` the scaling parameter (types 1 and
    /// 4: > 1; types 2 and 3: > 0), or `None` for [`default_scaling_parameter`].
    pub fn new(kind: TransitionType, delta_e_k: f64, c: Option<f64>) -> Result<Self, PhysicsError> {
        require_positive(delta_e_k, "K", || "delta_e_k".to_owned())?;
        let c = c.unwrap_or_else(|| default_scaling_parameter(kind));
        if kind.is_dipole_allowed() {
            if !(c.is_finite() && c > 1.0) {
                return Err(PhysicsError::OutOfRange {
                    field: "scaling_parameter".to_owned(),
                    value: c,
                    unit: "",
                    allowed: "> 1 and finite for types 1 and 4",
                });
            }
        } else {
            require_positive(c, "", || "scaling_parameter".to_owned())?;
        }
        Ok(Self { kind, delta_e_k, c })
    }

    /// The transition type.
    pub fn kind(&self) -> TransitionType {
        self.kind
    }

    /// The scaling parameter C in use.
    pub fn scaling_parameter(&self) -> f64 {
        self.c
    }

    /// Transition energy dE/k, K.
    pub fn delta_e_k(&self) -> f64 {
        self.delta_e_k
    }

    /// Scaled temperature x in [0, 1) for temperature `t_k` (K, > 0).
    pub fn scaled_temperature(&self, t_k: f64) -> Result<f64, PhysicsError> {
        require_positive(t_k, "K", || "temperature_k".to_owned())?;
        let u = t_k / self.delta_e_k;
        Ok(if self.kind.is_dipole_allowed() {
            // 1 - ln C / ln(u + C) written as ln(1 + u/C) / ln(u + C): no cancellation at small u
            ln_1p(u / self.c) / ln(u + self.c)
        } else {
            u / (u + self.c)
        })
    }

    /// Temperature, K, whose scaled temperature is `x` (0 <= x < 1).
    pub fn temperature_from_scaled(&self, x: f64) -> Result<f64, PhysicsError> {
        if !(x.is_finite() && (0.0..1.0).contains(&x)) {
            return Err(PhysicsError::OutOfRange {
                field: "scaled_temperature".to_owned(),
                value: x,
                unit: "",
                allowed: ">= 0 and < 1",
            });
        }
        let u = if self.kind.is_dipole_allowed() {
            // ln(u + C) = ln C / (1 - x)  =>  u = C (exp(ln C x / (1 - x)) - 1)
            self.c * exp_m1(ln(self.c) * x / (1.0 - x))
        } else {
            self.c * x / (1.0 - x)
        };
        Ok(u * self.delta_e_k)
    }

    /// The factor F(T) with y = Upsilon / F: ln(u + e) (type 1), 1 (type 2), 1/(u + 1)
    /// (type 3), ln(u + C) (type 4).
    fn upsilon_factor(&self, t_k: f64) -> f64 {
        let u = t_k / self.delta_e_k;
        match self.kind {
            TransitionType::Allowed => ln(u + std::f64::consts::E),
            TransitionType::Forbidden => 1.0,
            TransitionType::SpinChange => 1.0 / (u + 1.0),
            TransitionType::WeakAllowed => ln(u + self.c),
        }
    }

    /// Scaled effective collision strength y for `upsilon` (>= 0) at `t_k` (K, > 0).
    pub fn scaled_upsilon(&self, upsilon: f64, t_k: f64) -> Result<f64, PhysicsError> {
        require_non_negative(upsilon, "", || "upsilon".to_owned())?;
        require_positive(t_k, "K", || "temperature_k".to_owned())?;
        Ok(upsilon / self.upsilon_factor(t_k))
    }

    /// Effective collision strength from the scaled value `y` (>= 0) at `t_k` (K, > 0).
    pub fn upsilon_from_scaled(&self, y: f64, t_k: f64) -> Result<f64, PhysicsError> {
        require_non_negative(y, "", || "scaled_upsilon".to_owned())?;
        require_positive(t_k, "K", || "temperature_k".to_owned())?;
        Ok(y * self.upsilon_factor(t_k))
    }

    /// The known scaled value at x = 1, if any: 4 g_l f / dE_Ry for types 1 and 4 given the
    /// weighted oscillator strength g_l f (Bethe limit), none otherwise.
    pub fn high_temperature_limit(&self, weighted_oscillator_strength: Option<f64>) -> Option<f64> {
        if self.kind.is_dipole_allowed() {
            weighted_oscillator_strength.map(|gf| 4.0 * gf * KELVIN_PER_RYDBERG / self.delta_e_k)
        } else {
            None
        }
    }
}

/// Where an evaluated temperature lies relative to the source data of a [`ScaledUpsilon`].
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Coverage {
    /// Within [lowest, highest] tabulated temperature: interpolated.
    Inside,
    /// Below the lowest tabulated temperature: extrapolated (smooth continuation of y).
    BelowData,
    /// Above the highest tabulated temperature, interpolated toward the known x = 1 limit.
    AboveDataTowardLimit,
    /// Above the highest tabulated temperature with no known limit: extrapolated (smooth
    /// continuation of y).
    AboveData,
}

/// An effective collision strength together with where it came from.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ScaledEvaluation {
    /// Effective collision strength, dimensionless.
    pub upsilon: f64,
    /// Interpolated or extrapolated.
    pub coverage: Coverage,
}

/// Interpolator of Upsilon(T) built from sparse points through the Burgess & Tully scaled
/// plane (PCHIP in x, y), with the high-temperature limit point added where it is known.
#[derive(Debug, Clone, PartialEq)]
pub struct ScaledUpsilon {
    scaling: BurgessTullyScaling,
    curve: Pchip,
    x_data_min: f64,
    x_data_max: f64,
    has_limit: bool,
}

impl ScaledUpsilon {
    /// Build from `temperatures_k` (K, > 0, strictly increasing) and `upsilon` (>= 0, same
    /// length >= 1); `weighted_oscillator_strength` g_l f (>= 0) adds the x = 1 point for
    /// types 1 and 4 and is ignored for types 2 and 3.
    pub fn new(
        scaling: BurgessTullyScaling,
        temperatures_k: &[f64],
        upsilon: &[f64],
        weighted_oscillator_strength: Option<f64>,
    ) -> Result<Self, PhysicsError> {
        require_same_len("temperatures_k", temperatures_k.len(), "upsilon", upsilon.len())?;
        if upsilon.is_empty() {
            return Err(PhysicsError::TooFewPoints {
                field: "upsilon",
                len: 0,
                min: 1,
            });
        }
        require_increasing(temperatures_k, "temperatures_k", "K", true)?;
        if let Some(gf) = weighted_oscillator_strength {
            require_non_negative(gf, "", || "weighted_oscillator_strength".to_owned())?;
        }
        let mut xs = Vec::with_capacity(upsilon.len() + 1);
        let mut ys = Vec::with_capacity(upsilon.len() + 1);
        for (i, (&t, &u)) in temperatures_k.iter().zip(upsilon).enumerate() {
            require_non_negative(u, "", || format!("upsilon[{i}]"))?;
            let x = scaling.scaled_temperature(t)?;
            if xs.last().is_some_and(|&prev| x <= prev) {
                return Err(PhysicsError::OutOfRange {
                    field: format!("temperatures_k[{i}]"),
                    value: t,
                    unit: "K",
                    allowed: "far enough from the previous temperature to scale to a distinct x",
                });
            }
            xs.push(x);
            ys.push(scaling.scaled_upsilon(u, t)?);
        }
        let x_data_min = xs[0];
        let x_data_max = xs[xs.len() - 1];
        let limit = scaling.high_temperature_limit(weighted_oscillator_strength);
        let has_limit = match limit {
            Some(y1) if x_data_max < 1.0 => {
                xs.push(1.0);
                ys.push(y1);
                true
            }
            _ => false,
        };
        Ok(Self {
            scaling,
            curve: Pchip::new(&xs, &ys)?,
            x_data_min,
            x_data_max,
            has_limit,
        })
    }

    /// The transform in use.
    pub fn scaling(&self) -> BurgessTullyScaling {
        self.scaling
    }

    /// Effective collision strength at `t_k` (K, > 0) and whether it was interpolated.
    pub fn evaluate(&self, t_k: f64) -> Result<ScaledEvaluation, PhysicsError> {
        let x = self.scaling.scaled_temperature(t_k)?;
        let coverage = if x < self.x_data_min {
            Coverage::BelowData
        } else if x <= self.x_data_max {
            Coverage::Inside
        } else if self.has_limit {
            Coverage::AboveDataTowardLimit
        } else {
            Coverage::AboveData
        };
        let y = self.curve.evaluate_continued(x).max(0.0);
        Ok(ScaledEvaluation {
            upsilon: self.scaling.upsilon_from_scaled(y, t_k)?,
            coverage,
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn rejects_c_not_above_one_for_allowed() {
        // derived in the module doc: ln(u + C) must stay positive for all u >= 0
        let err = BurgessTullyScaling::new(TransitionType::Allowed, 1.0e4, Some(0.5)).unwrap_err();
        assert!(
            err.to_string()
                .starts_with("scaling_parameter = 0.5: must be > 1")
        );
        assert!(BurgessTullyScaling::new(TransitionType::Forbidden, 1.0e4, Some(0.5)).is_ok());
    }
}
