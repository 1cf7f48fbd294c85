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
//! Interpolation ([`ScaledUpsilon`]), our choices:
//! - Inside the data (lowest to highest tabulated T) a PCHIP runs through the data points
//!   only, against x, in a plane where a constant Upsilon is a straight line, so flat data stay
//!   flat to rounding: y itself for types 1, 2 and 4 (a constant Upsilon has
//!   y = Upsilon (1 - x) for type 1 with C = e, y = Upsilon (1 - x) / ln C for type 4 and
//!   y = Upsilon for type 2), Upsilon itself for type 3 (whose y = (u + 1) Upsilon of a
//!   constant is 1 / (1 - x)-shaped for C = 1, which a cubic would bend by up to ~1e-3 between
//!   points).
//! - Below the lowest tabulated T the interpolated quantity q is continued as
//!   q_1 exp((q'_1 / q_1)(x - x_1)): value and slope match at the node (no kink, so tables
//!   built on it interpolate smoothly), it stays positive and, x being bounded by 0, bounded;
//!   a flat end gives a constant Upsilon as T -> 0.
//! - Above the highest tabulated T the scaled y carries the high-temperature law of the type:
//!   y is continued the same way from the last node (value and slope of y matched there), so
//!   a flat end of y gives the Bethe ln(u + e) growth (types 1, 4), a constant (type 2) or the
//!   1/(u + 1) fall (type 3). Where the x = 1 limit y(1) is known (types 1 and 4 with g_l f)
//!   that continuation E(x) is blended into it: y = (1 - w) E(x) + w y(1) with
//!   w = ((x - x_N)/(1 - x_N))^2, which keeps value and slope at the last node, reaches the
//!   limit at x = 1 and stays positive. The limit never moves the data's own interpolant.

use super::constants::KELVIN_PER_RYDBERG;
use super::elementary::{exp, exp_m1, ln, ln_1p};
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

/// Which quantity the interpolant runs through inside the data.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Ordinate {
    /// The scaled effective collision strength y (types 1, 2, 4).
    Scaled,
    /// Upsilon itself (type 3).
    Upsilon,
}

/// Interpolator of Upsilon(T) built from sparse points through the Burgess & Tully scaled
/// temperature x (see the module documentation for the planes and continuations).
#[derive(Debug, Clone, PartialEq)]
pub struct ScaledUpsilon {
    scaling: BurgessTullyScaling,
    ordinate: Ordinate,
    curve: Pchip,
    x_data_min: f64,
    x_data_max: f64,
    /// y and dy/dx at the last data node.
    y_last: f64,
    y_slope_last: f64,
    /// y(1), when known.
    limit: Option<f64>,
}

impl ScaledUpsilon {
    /// Build from `temperatures_k` (K, > 0, strictly increasing) and `upsilon` (>= 0, same
    /// length >= 1); `weighted_oscillator_strength` g_l f (>= 0) gives the x = 1 limit for
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
        let ordinate = if scaling.kind() == TransitionType::SpinChange {
            Ordinate::Upsilon
        } else {
            Ordinate::Scaled
        };
        let mut xs = Vec::with_capacity(upsilon.len());
        let mut qs = Vec::with_capacity(upsilon.len());
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
            qs.push(match ordinate {
                Ordinate::Scaled => scaling.scaled_upsilon(u, t)?,
                Ordinate::Upsilon => u,
            });
        }
        let curve = Pchip::new(&xs, &qs)?;
        let n = xs.len();
        let (x_last, q_last, q_slope_last) = (xs[n - 1], qs[n - 1], curve.end_slopes().1);
        let (y_last, y_slope_last) = match ordinate {
            Ordinate::Scaled => (q_last, q_slope_last),
            Ordinate::Upsilon => {
                // y = (u + 1) Upsilon with u = C x / (1 - x): dy/dx = (u + 1) q' + q C / (1 - x)^2.
                let t_last = temperatures_k[n - 1];
                let u = t_last / scaling.delta_e_k();
                let c = scaling.scaling_parameter();
                let y = scaling.scaled_upsilon(q_last, t_last)?;
                (
                    y,
                    (u + 1.0) * q_slope_last + q_last * c / ((1.0 - x_last) * (1.0 - x_last)),
                )
            }
        };
        Ok(Self {
            scaling,
            ordinate,
            curve,
            x_data_min: xs[0],
            x_data_max: x_last,
            y_last,
            y_slope_last,
            limit: scaling.high_temperature_limit(weighted_oscillator_strength),
        })
    }

    /// The transform in use.
    pub fn scaling(&self) -> BurgessTullyScaling {
        self.scaling
    }

    /// Effective collision strength at `t_k` (K, > 0) and whether it was interpolated.
    pub fn evaluate(&self, t_k: f64) -> Result<ScaledEvaluation, PhysicsError> {
        let x = self.scaling.scaled_temperature(t_k)?;
        if x <= self.x_data_max {
            let coverage = if x < self.x_data_min {
                Coverage::BelowData
            } else {
                Coverage::Inside
            };
            let q = self.curve.evaluate_continued(x).max(0.0);
            let upsilon = match self.ordinate {
                Ordinate::Scaled => self.scaling.upsilon_from_scaled(q, t_k)?,
                Ordinate::Upsilon => q,
            };
            return Ok(ScaledEvaluation { upsilon, coverage });
        }
        let continued = if self.y_last > 0.0 {
            self.y_last * exp((self.y_slope_last / self.y_last) * (x - self.x_data_max))
        } else {
            self.y_last
        };
        let (y, coverage) = match self.limit {
            Some(limit) => {
                let s = (x - self.x_data_max) / (1.0 - self.x_data_max);
                let w = s * s;
                ((1.0 - w) * continued + w * limit, Coverage::AboveDataTowardLimit)
            }
            None => (continued, Coverage::AboveData),
        };
        Ok(ScaledEvaluation {
            upsilon: self.scaling.upsilon_from_scaled(y.max(0.0), t_k)?,
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
