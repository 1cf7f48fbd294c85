//! The error type of the physics layer. Every message names the field (with its index), the
//! value and the allowed range, e.g. `temperature_k[3] = -5 K: must be > 0 and finite`.

use thiserror::Error;

/// Why a physics computation refused its input or could not produce a result.
#[derive(Debug, Clone, PartialEq, Error)]
pub enum PhysicsError {
    /// A number lies outside its allowed range (or is NaN/infinite).
    #[error("{field} = {value}{}: must be {allowed}", spaced(.unit))]
    OutOfRange {
        /// Field path including any index, e.g. `omega[4]` or `radiative[2].a_s`.
        field: String,
        /// The offending value.
        value: f64,
        /// Unit of the value (empty for dimensionless quantities).
        unit: &'static str,
        /// The allowed range in words, e.g. `> 0 and finite`.
        allowed: &'static str,
    },
    /// A sequence that must be strictly increasing is not.
    #[error("{field} = {value}{}: must be > the previous value {previous}{} (strictly increasing)", spaced(.unit), spaced(.unit))]
    NotIncreasing {
        /// Field path including the index of the offending element.
        field: String,
        /// The offending value.
        value: f64,
        /// The value before it.
        previous: f64,
        /// Unit of both values.
        unit: &'static str,
    },
    /// Two arrays that must pair up element by element have different lengths.
    #[error("{field} has {len} entries but {other_field} has {other_len}: lengths must match")]
    LengthMismatch {
        /// First array.
        field: &'static str,
        /// Its length.
        len: usize,
        /// Second array.
        other_field: &'static str,
        /// Its length.
        other_len: usize,
    },
    /// An array is too short for the computation.
    #[error("{field} has {len} entries: at least {min} needed")]
    TooFewPoints {
        /// The array.
        field: &'static str,
        /// Its length.
        len: usize,
        /// Minimum length.
        min: usize,
    },
    /// A level index is not below the number of levels.
    #[error("{field} = {value}: must be a level index < {n_levels}")]
    LevelOutOfRange {
        /// Field path, e.g. `collisional[7].upper`.
        field: String,
        /// The offending index.
        value: usize,
        /// Number of levels in the system.
        n_levels: usize,
    },
    /// A transition connects a level with itself.
    #[error("{field}: upper and lower are both level {level}: must differ")]
    SameLevel {
        /// Field path, e.g. `radiative[3]`.
        field: String,
        /// The repeated level index.
        level: usize,
    },
    /// A level other than the ground level has no process that depopulates it.
    #[error(
        "level {level} has no radiative decay and no collisional rate out of it at n_e = {ne_cm3} cm^-3: no steady state exists"
    )]
    NoDepopulation {
        /// Index of the level.
        level: usize,
        /// Electron density, cm^-3.
        ne_cm3: f64,
    },
    /// The statistical-equilibrium matrix is singular (a group of levels is closed off).
    #[error(
        "statistical-equilibrium matrix is singular at n_e = {ne_cm3} cm^-3: some group of levels is not connected to the rest"
    )]
    SingularSystem {
        /// Electron density, cm^-3.
        ne_cm3: f64,
    },
    /// A solved population came out negative by more than round-off.
    #[error("population[{level}] = {value}: negative beyond the round-off tolerance {tolerance}")]
    NegativePopulation {
        /// Index of the level.
        level: usize,
        /// The negative fractional population.
        value: f64,
        /// The tolerance that was exceeded.
        tolerance: f64,
    },
    /// The high-energy continuation of a collision-strength table cannot be fixed from the data.
    #[error("high-energy tail of omega: {reason}")]
    TailUndetermined {
        /// What is missing, in words.
        reason: &'static str,
    },
    /// The computation overflowed or produced NaN for valid-looking input.
    #[error("{quantity} is not finite for this input ({detail})")]
    NonFinite {
        /// The quantity that failed.
        quantity: &'static str,
        /// The input that led there.
        detail: String,
    },
}

/// A unit with a leading space, or nothing for a dimensionless quantity.
fn spaced(unit: &str) -> String {
    if unit.is_empty() {
        String::new()
    } else {
        format!(" {unit}")
    }
}

/// Require `value` finite and `> 0`; `field` builds the field path only on error.
pub(crate) fn require_positive(
    value: f64,
    unit: &'static str,
    field: impl FnOnce() -> String,
) -> Result<f64, PhysicsError> {
    if value.is_finite() && value > 0.0 {
        Ok(value)
    } else {
        Err(PhysicsError::OutOfRange {
            field: field(),
            value,
            unit,
            allowed: "> 0 and finite",
        })
    }
}

/// Require `value` finite and `>= 0`; `field` builds the field path only on error.
pub(crate) fn require_non_negative(
    value: f64,
    unit: &'static str,
    field: impl FnOnce() -> String,
) -> Result<f64, PhysicsError> {
    if value.is_finite() && value >= 0.0 {
        Ok(value)
    } else {
        Err(PhysicsError::OutOfRange {
            field: field(),
            value,
            unit,
            allowed: ">= 0 and finite",
        })
    }
}

/// Require every element of `values` finite, `>= 0` (or `> 0` when `strictly`) and strictly
/// increasing; errors name `name[i]`.
pub(crate) fn require_increasing(
    values: &[f64],
    name: &'static str,
    unit: &'static str,
    strictly_positive: bool,
) -> Result<(), PhysicsError> {
    for (i, &v) in values.iter().enumerate() {
        if strictly_positive {
            require_positive(v, unit, || format!("{name}[{i}]"))?;
        } else {
            require_non_negative(v, unit, || format!("{name}[{i}]"))?;
        }
        if i > 0 && v <= values[i - 1] {
            return Err(PhysicsError::NotIncreasing {
                field: format!("{name}[{i}]"),
                value: v,
                previous: values[i - 1],
                unit,
            });
        }
    }
    Ok(())
}

/// Require two paired arrays to have equal lengths.
pub(crate) fn require_same_len(
    field: &'static str,
    len: usize,
    other_field: &'static str,
    other_len: usize,
) -> Result<(), PhysicsError> {
    if len == other_len {
        Ok(())
    } else {
        Err(PhysicsError::LengthMismatch {
            field,
            len,
            other_field,
            other_len,
        })
    }
}
