//! Explicit units at the client boundary: temperatures in K or eV, rate coefficients in
//! cm^3 s^-1 or m^3 s^-1, densities in cm^-3 or m^-3, powers in W or erg s^-1.
//! Conversions use the same expressions the server is asked to use, so a value evaluated
//! locally and one looked up remotely agree bit for bit in every unit.

use crate::error::ClientError;
use ratewell_proto::constants::KELVIN_PER_EV;
use ratewell_proto::pb;
use std::fmt;
use std::str::FromStr;

/// Unit of an electron temperature.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum TemperatureUnit {
    /// Kelvin.
    #[default]
    Kelvin,
    /// Electronvolt (kT in eV).
    ElectronVolt,
}

impl TemperatureUnit {
    /// A temperature in this unit converted to K.
    pub fn to_kelvin(self, value: f64) -> f64 {
        match self {
            TemperatureUnit::Kelvin => value,
            TemperatureUnit::ElectronVolt => ratewell_proto::units::kelvin_from_electron_volt(value),
        }
    }
    /// A temperature in K converted to this unit.
    pub fn from_kelvin(self, t_k: f64) -> f64 {
        match self {
            TemperatureUnit::Kelvin => t_k,
            TemperatureUnit::ElectronVolt => t_k / KELVIN_PER_EV,
        }
    }
    /// Short symbol ("K", "eV").
    pub fn symbol(self) -> &'static str {
        match self {
            TemperatureUnit::Kelvin => "K",
            TemperatureUnit::ElectronVolt => "eV",
        }
    }
    /// The wire enum value.
    pub fn to_wire(self) -> i32 {
        match self {
            TemperatureUnit::Kelvin => pb::TemperatureUnit::Kelvin as i32,
            TemperatureUnit::ElectronVolt => pb::TemperatureUnit::ElectronVolt as i32,
        }
    }
}

/// Unit of a rate coefficient.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum RateUnit {
    /// cm^3 s^-1.
    #[default]
    CubicCentimetrePerSecond,
    /// m^3 s^-1.
    CubicMetrePerSecond,
}

impl RateUnit {
    /// A rate coefficient in cm^3 s^-1 converted to this unit.
    #[inline]
    pub fn from_cm3_s(self, q_cm3_s: f64) -> f64 {
        match self {
            RateUnit::CubicCentimetrePerSecond => q_cm3_s,
            RateUnit::CubicMetrePerSecond => ratewell_proto::units::m3_s_from_cm3_s(q_cm3_s),
        }
    }
    /// Short symbol ("cm3/s", "m3/s").
    pub fn symbol(self) -> &'static str {
        match self {
            RateUnit::CubicCentimetrePerSecond => "cm3/s",
            RateUnit::CubicMetrePerSecond => "m3/s",
        }
    }
    /// The wire enum value.
    pub fn to_wire(self) -> i32 {
        match self {
            RateUnit::CubicCentimetrePerSecond => pb::RateUnit::CubicCentimetrePerSecond as i32,
            RateUnit::CubicMetrePerSecond => pb::RateUnit::CubicMetrePerSecond as i32,
        }
    }
    /// From the wire enum value; unspecified means cm^3 s^-1 (the server's default).
    pub fn from_wire(value: i32) -> Result<Self, ClientError> {
        match pb::RateUnit::try_from(value) {
            Ok(pb::RateUnit::Unspecified | pb::RateUnit::CubicCentimetrePerSecond) => {
                Ok(RateUnit::CubicCentimetrePerSecond)
            }
            Ok(pb::RateUnit::CubicMetrePerSecond) => Ok(RateUnit::CubicMetrePerSecond),
            Err(_) => Err(ClientError::Malformed {
                operation: "LookupRates",
                message: format!("rate_unit = {value}: not a known RateUnit"),
            }),
        }
    }
}

/// Unit of an electron number density.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum DensityUnit {
    /// cm^-3.
    #[default]
    PerCubicCentimetre,
    /// m^-3.
    PerCubicMetre,
}

impl DensityUnit {
    /// Short symbol ("cm-3", "m-3").
    pub fn symbol(self) -> &'static str {
        match self {
            DensityUnit::PerCubicCentimetre => "cm-3",
            DensityUnit::PerCubicMetre => "m-3",
        }
    }
    /// The wire enum value.
    pub fn to_wire(self) -> i32 {
        match self {
            DensityUnit::PerCubicCentimetre => pb::DensityUnit::PerCubicCentimetre as i32,
            DensityUnit::PerCubicMetre => pb::DensityUnit::PerCubicMetre as i32,
        }
    }
}

/// Unit of an emitted power.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum PowerUnit {
    /// W (J s^-1).
    #[default]
    Watt,
    /// erg s^-1.
    ErgPerSecond,
}

impl PowerUnit {
    /// Short symbol ("W", "erg/s").
    pub fn symbol(self) -> &'static str {
        match self {
            PowerUnit::Watt => "W",
            PowerUnit::ErgPerSecond => "erg/s",
        }
    }
    /// The wire enum value.
    pub fn to_wire(self) -> i32 {
        match self {
            PowerUnit::Watt => pb::PowerUnit::Watt as i32,
            PowerUnit::ErgPerSecond => pb::PowerUnit::ErgPerSecond as i32,
        }
    }
}

/// Unit of level energies in answers.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum EnergyUnit {
    /// cm^-1 (wavenumber).
    #[default]
    InverseCentimetre,
    /// eV.
    ElectronVolt,
    /// J.
    Joule,
}

impl EnergyUnit {
    /// Short symbol ("cm-1", "eV", "J").
    pub fn symbol(self) -> &'static str {
        match self {
            EnergyUnit::InverseCentimetre => "cm-1",
            EnergyUnit::ElectronVolt => "eV",
            EnergyUnit::Joule => "J",
        }
    }
    /// The wire enum value.
    pub fn to_wire(self) -> i32 {
        match self {
            EnergyUnit::InverseCentimetre => pb::EnergyUnit::InverseCentimetre as i32,
            EnergyUnit::ElectronVolt => pb::EnergyUnit::ElectronVolt as i32,
            EnergyUnit::Joule => pb::EnergyUnit::Joule as i32,
        }
    }
    /// The symbol of a wire enum value (unspecified means cm^-1).
    pub fn wire_symbol(value: i32) -> &'static str {
        match pb::EnergyUnit::try_from(value) {
            Ok(pb::EnergyUnit::ElectronVolt) => "eV",
            Ok(pb::EnergyUnit::Joule) => "J",
            Ok(pb::EnergyUnit::InverseCentimetre | pb::EnergyUnit::Unspecified) => "cm-1",
            Err(_) => "?",
        }
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

/// Parse error for unit names.
fn unknown_unit(field: &str, value: &str, allowed: &str) -> ClientError {
    ClientError::invalid(field, format!("{value:?}"), format!("must be one of {allowed}"))
}

impl FromStr for TemperatureUnit {
    type Err = ClientError;
    fn from_str(s: &str) -> Result<Self, Self::Err> {
        match s {
            "K" | "k" | "kelvin" => Ok(TemperatureUnit::Kelvin),
            "eV" | "ev" => Ok(TemperatureUnit::ElectronVolt),
            _ => Err(unknown_unit("temperature unit", s, "K, eV")),
        }
    }
}

impl FromStr for RateUnit {
    type Err = ClientError;
    fn from_str(s: &str) -> Result<Self, Self::Err> {
        match s {
            "cm3/s" | "cm3" => Ok(RateUnit::CubicCentimetrePerSecond),
            "m3/s" | "m3" => Ok(RateUnit::CubicMetrePerSecond),
            _ => Err(unknown_unit("rate unit", s, "cm3/s, m3/s")),
        }
    }
}

impl FromStr for DensityUnit {
    type Err = ClientError;
    fn from_str(s: &str) -> Result<Self, Self::Err> {
        match s {
            "cm-3" | "cm3" => Ok(DensityUnit::PerCubicCentimetre),
            "m-3" | "m3" => Ok(DensityUnit::PerCubicMetre),
            _ => Err(unknown_unit("density unit", s, "cm-3, m-3")),
        }
    }
}

impl FromStr for PowerUnit {
    type Err = ClientError;
    fn from_str(s: &str) -> Result<Self, Self::Err> {
        match s {
            "W" | "w" => Ok(PowerUnit::Watt),
            "erg/s" => Ok(PowerUnit::ErgPerSecond),
            _ => Err(unknown_unit("power unit", s, "W, erg/s")),
        }
    }
}

impl FromStr for EnergyUnit {
    type Err = ClientError;
    fn from_str(s: &str) -> Result<Self, Self::Err> {
        match s {
            "cm-1" => Ok(EnergyUnit::InverseCentimetre),
            "eV" | "ev" => Ok(EnergyUnit::ElectronVolt),
            "J" => Ok(EnergyUnit::Joule),
            _ => Err(unknown_unit("energy unit", s, "cm-1, eV, J")),
        }
    }
}

macro_rules! display_symbol {
    ($($t:ty),*) => {$(
        impl fmt::Display for $t {
            fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
                f.write_str(self.symbol())
            }
        }
    )*};
}
display_symbol!(TemperatureUnit, RateUnit, DensityUnit, PowerUnit, EnergyUnit);

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn electronvolt_converts_with_the_codata_ratio() {
        // CODATA 2018: electron volt-kelvin relationship 1 eV = 1.160 451 812 e4 K (exact).
        let t = TemperatureUnit::ElectronVolt.to_kelvin(1.0);
        assert!((t - 1.160_451_812e4).abs() < 1e-5, "{t}");
        assert_eq!(TemperatureUnit::Kelvin.to_kelvin(5000.0), 5000.0);
        let back = TemperatureUnit::ElectronVolt.from_kelvin(t);
        assert!((back - 1.0).abs() < 1e-15);
    }

    #[test]
    fn cubic_metre_is_a_millionth_of_the_cubic_centimetre_value() {
        // 1 m = 100 cm exactly (SI), so 1 cm^3 = 1e-6 m^3.
        let q = 3.5e-8;
        assert!((RateUnit::CubicMetrePerSecond.from_cm3_s(q) - 3.5e-14).abs() < 1e-28);
        assert_eq!(RateUnit::CubicCentimetrePerSecond.from_cm3_s(q), q);
    }

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
    fn unit_names_parse_and_bad_ones_list_the_choices() {
        assert_eq!(
            "eV".parse::<TemperatureUnit>().unwrap(),
            TemperatureUnit::ElectronVolt
        );
        assert_eq!("K".parse::<TemperatureUnit>().unwrap(), TemperatureUnit::Kelvin);
        assert_eq!("m3/s".parse::<RateUnit>().unwrap(), RateUnit::CubicMetrePerSecond);
        let e = "F".parse::<TemperatureUnit>().unwrap_err().to_string();
        assert_eq!(e, "temperature unit = \"F\": must be one of K, eV");
    }

    #[test]
    fn wire_values_match_the_contract() {
        assert_eq!(TemperatureUnit::ElectronVolt.to_wire(), 2);
        assert_eq!(RateUnit::CubicMetrePerSecond.to_wire(), 2);
        assert_eq!(
            RateUnit::from_wire(0).unwrap(),
            RateUnit::CubicCentimetrePerSecond
        );
        assert!(RateUnit::from_wire(9).is_err());
        assert_eq!(DensityUnit::PerCubicMetre.to_wire(), 2);
        assert_eq!(PowerUnit::ErgPerSecond.to_wire(), 2);
    }
}
