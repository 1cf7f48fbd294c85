//! Explicit units at the client boundary: the contract crate's one vocabulary
//! ([`ratewell_proto::units`]: temperatures in K or eV, rate coefficients in cm^3 s^-1 or
//! m^3 s^-1, densities in cm^-3 or m^-3, powers in W or erg s^-1, energies in cm^-1, eV or J),
//! whose conversions are the server's own, so a value evaluated locally and one looked up
//! remotely agree bit for bit in every unit; plus the client's own checks of inputs.

use crate::error::ClientError;
pub use ratewell_proto::units::{
    DensityUnit, EnergyUnit, PowerUnit, RateUnit, TemperatureUnit, UnknownUnit, WireUnitError,
};

/// The rate unit an answer names; unspecified means cm^3 s^-1 (the server's default).
pub(crate) fn answer_rate_unit(value: i32) -> Result<RateUnit, ClientError> {
    match RateUnit::from_wire(value) {
        Ok(unit) => Ok(unit),
        Err(WireUnitError::Unspecified) => Ok(RateUnit::CubicCentimetrePerSecond),
        Err(WireUnitError::Unknown(_)) => Err(ClientError::Malformed {
            operation: "LookupRates",
            message: format!("rate_unit = {value}: not a known RateUnit"),
        }),
    }
}

/// The symbol of the energy unit an answer names (unspecified means cm^-1; "?" for a value
/// the contract does not define).
pub fn energy_unit_symbol(value: i32) -> &'static str {
    match EnergyUnit::from_wire(value) {
        Ok(unit) => unit.symbol(),
        Err(WireUnitError::Unspecified) => EnergyUnit::InverseCentimetre.symbol(),
        Err(WireUnitError::Unknown(_)) => "?",
    }
}

/// Checks that every temperature is finite and > 0 in its own unit, naming the first bad one.
pub fn check_temperatures(values: &[f64], unit: TemperatureUnit) -> Result<(), ClientError> {
    if values.is_empty() {
        return Err(ClientError::invalid(
            "temperatures",
            "[] (empty)",
            "at least one temperature is needed",
        ));
    }
    check_positive("temperatures", values, unit.symbol())
}

/// Checks that every density is finite and > 0, naming the first bad one.
pub fn check_densities(values: &[f64], unit: DensityUnit) -> Result<(), ClientError> {
    if values.is_empty() {
        return Err(ClientError::invalid(
            "densities",
            "[] (empty)",
            "at least one density is needed",
        ));
    }
    check_positive("densities", values, unit.symbol())
}

fn check_positive(name: &str, values: &[f64], symbol: &str) -> Result<(), ClientError> {
    match values.iter().position(|v| !v.is_finite() || *v <= 0.0) {
        Some(i) => Err(ClientError::invalid(
            format!("{name}[{i}]"),
            format!("{} {symbol}", values[i]),
            "must be finite and > 0",
        )),
        None => Ok(()),
    }
}

/// Converts temperatures to K after checking them in their own unit.
pub fn temperatures_to_k(values: &[f64], unit: TemperatureUnit) -> Result<Vec<f64>, ClientError> {
    check_temperatures(values, unit)?;
    Ok(values.iter().map(|&v| unit.to_kelvin(v)).collect())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn bad_temperatures_name_index_value_and_unit() {
        let err = temperatures_to_k(&[5000.0, 1e4, 2e4, -5.0], TemperatureUnit::Kelvin)
            .unwrap_err()
            .to_string();
        assert_eq!(err, "temperatures[3] = -5 K: must be finite and > 0");
        let err = check_temperatures(&[f64::NAN], TemperatureUnit::ElectronVolt)
            .unwrap_err()
            .to_string();
        assert_eq!(err, "temperatures[0] = NaN eV: must be finite and > 0");
        assert!(check_temperatures(&[], TemperatureUnit::Kelvin).is_err());
        let err = check_densities(&[1e10, 0.0], DensityUnit::PerCubicCentimetre)
            .unwrap_err()
            .to_string();
        assert_eq!(err, "densities[1] = 0 cm-3: must be finite and > 0");
    }

    #[test]
    fn answers_without_a_rate_unit_are_in_cubic_centimetres() {
        assert_eq!(answer_rate_unit(0).unwrap(), RateUnit::CubicCentimetrePerSecond);
        assert_eq!(answer_rate_unit(2).unwrap(), RateUnit::CubicMetrePerSecond);
        assert!(answer_rate_unit(9).is_err());
        assert_eq!(energy_unit_symbol(0), "cm-1");
        assert_eq!(energy_unit_symbol(3), "J");
        assert_eq!(energy_unit_symbol(77), "?");
    }
}
