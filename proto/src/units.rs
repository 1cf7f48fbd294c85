//! The one unit vocabulary of ratewell: the units a request or an answer names (temperatures,
//! densities, rate coefficients, powers, level energies), their symbols and spellings, their
//! wire values, and the conversions applied to served values. The server, the client library,
//! the CLI and the language bindings all use these, so an answer converted on either side is
//! the same to the last bit (for example q * 1e-6 and q / 1e6 differ in the last bit for about a
//! third of all values) and a unit is spelled the same everywhere.

use crate::constants::{ELECTRON_VOLT_J, INVERSE_CM_J, KELVIN_PER_EV};
use crate::pb;
use std::fmt;
use std::str::FromStr;

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

/// A unit name that is not one of the allowed spellings.
#[derive(Debug, Clone, PartialEq, Eq, thiserror::Error)]
#[error("{quantity} unit = {value:?}: must be one of {allowed}")]
pub struct UnknownUnit {
    /// Which quantity's unit ("temperature", "rate", ...).
    pub quantity: &'static str,
    /// The spelling given.
    pub value: String,
    /// The accepted symbols.
    pub allowed: &'static str,
}

/// A wire value that names no unit: unspecified (0) or a number the contract does not define.
#[derive(Debug, Clone, Copy, PartialEq, Eq, thiserror::Error)]
pub enum WireUnitError {
    /// The field was left at 0.
    #[error("unspecified")]
    Unspecified,
    /// A value the contract does not define.
    #[error("{0}: not a known value")]
    Unknown(i32),
}

/// Declares a unit enum with its symbols, spellings and wire values, in one table per unit.
macro_rules! unit_enum {
    (
        $(#[$meta:meta])* $name:ident, $quantity:literal, $wire:ident, allowed $allowed:literal {
            $( $(#[$vmeta:meta])* $variant:ident = $symbol:literal $(| $spelling:literal)* => $wire_variant:ident ),+ $(,)?
        }
    ) => {
        $(#[$meta])*
        #[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Hash)]
        pub enum $name {
            $( $(#[$vmeta])* $variant ),+
        }

        impl $name {
            /// Every unit of this quantity, the default first.
            pub const ALL: &'static [$name] = &[$($name::$variant),+];

            /// The unit's symbol, as written in messages, tables and JSON.
            pub fn symbol(self) -> &'static str {
                match self { $($name::$variant => $symbol),+ }
            }

            /// The wire enum value.
            pub fn to_wire(self) -> i32 {
                match self { $($name::$variant => pb::$wire::$wire_variant as i32),+ }
            }

            /// The unit of a wire enum value; unspecified and unknown values are refused, and
            /// the caller decides whether unspecified means a default.
            pub fn from_wire(value: i32) -> Result<Self, WireUnitError> {
                match pb::$wire::try_from(value) {
                    $(Ok(pb::$wire::$wire_variant) => Ok($name::$variant),)+
                    Ok(pb::$wire::Unspecified) => Err(WireUnitError::Unspecified),
                    Err(_) => Err(WireUnitError::Unknown(value)),
                }
            }
        }

        impl FromStr for $name {
            type Err = UnknownUnit;
            /// The symbol, or one of the other accepted spellings.
            fn from_str(s: &str) -> Result<Self, Self::Err> {
                match s {
                    $($symbol $(| $spelling)* => Ok($name::$variant),)+
                    _ => Err(UnknownUnit { quantity: $quantity, value: s.to_owned(), allowed: $allowed }),
                }
            }
        }

        impl fmt::Display for $name {
            fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
                f.write_str(self.symbol())
            }
        }
    };
}

unit_enum! {
    /// Unit of an electron temperature.
    TemperatureUnit, "temperature", TemperatureUnit, allowed "K, eV" {
        /// Kelvin.
        #[default]
        Kelvin = "K" | "k" | "kelvin" => Kelvin,
        /// Electronvolt (kT in eV).
        ElectronVolt = "eV" | "ev" => ElectronVolt,
    }
}

unit_enum! {
    /// Unit of a rate coefficient.
    RateUnit, "rate", RateUnit, allowed "cm3/s, m3/s" {
        /// cm^3 s^-1.
        #[default]
        CubicCentimetrePerSecond = "cm3/s" | "cm3" | "cm^3/s" => CubicCentimetrePerSecond,
        /// m^3 s^-1.
        CubicMetrePerSecond = "m3/s" | "m3" | "m^3/s" => CubicMetrePerSecond,
    }
}

unit_enum! {
    /// Unit of an electron number density.
    DensityUnit, "density", DensityUnit, allowed "cm-3, m-3" {
        /// cm^-3.
        #[default]
        PerCubicCentimetre = "cm-3" | "cm3" | "cm^-3" => PerCubicCentimetre,
        /// m^-3.
        PerCubicMetre = "m-3" | "m3" | "m^-3" => PerCubicMetre,
    }
}

unit_enum! {
    /// Unit of an emitted power (per ion, or per ion and unit volume for emissivities).
    PowerUnit, "power", PowerUnit, allowed "W, erg/s" {
        /// W (J s^-1).
        #[default]
        Watt = "W" | "w" => Watt,
        /// erg s^-1.
        ErgPerSecond = "erg/s" => ErgPerSecond,
    }
}

unit_enum! {
    /// Unit of level energies in answers.
    EnergyUnit, "energy", EnergyUnit, allowed "cm-1, eV, J" {
        /// cm^-1 (wavenumber).
        #[default]
        InverseCentimetre = "cm-1" | "cm^-1" => InverseCentimetre,
        /// eV.
        ElectronVolt = "eV" | "ev" => ElectronVolt,
        /// J.
        Joule = "J" => Joule,
    }
}

impl TemperatureUnit {
    /// A temperature in this unit converted to K.
    #[inline]
    pub fn to_kelvin(self, value: f64) -> f64 {
        match self {
            TemperatureUnit::Kelvin => value,
            TemperatureUnit::ElectronVolt => kelvin_from_electron_volt(value),
        }
    }
    /// A temperature in K converted to this unit.
    #[inline]
    pub fn from_kelvin(self, t_k: f64) -> f64 {
        match self {
            TemperatureUnit::Kelvin => t_k,
            TemperatureUnit::ElectronVolt => t_k / KELVIN_PER_EV,
        }
    }
}

impl RateUnit {
    /// A rate coefficient in cm^3 s^-1 converted to this unit.
    #[inline]
    pub fn from_cm3_s(self, q_cm3_s: f64) -> f64 {
        match self {
            RateUnit::CubicCentimetrePerSecond => q_cm3_s,
            RateUnit::CubicMetrePerSecond => m3_s_from_cm3_s(q_cm3_s),
        }
    }
}

impl DensityUnit {
    /// A density in this unit converted to cm^-3.
    #[inline]
    pub fn to_per_cm3(self, value: f64) -> f64 {
        match self {
            DensityUnit::PerCubicCentimetre => value,
            DensityUnit::PerCubicMetre => per_cm3_from_per_m3(value),
        }
    }
}

impl PowerUnit {
    /// Factor from W to this unit.
    #[inline]
    pub fn from_watt_factor(self) -> f64 {
        match self {
            PowerUnit::Watt => 1.0,
            PowerUnit::ErgPerSecond => 1e7,
        }
    }
}

impl EnergyUnit {
    /// An energy in cm^-1 converted to this unit (CODATA 2018 factors).
    #[inline]
    pub fn from_cm1(self, cm1: f64) -> f64 {
        match self {
            EnergyUnit::InverseCentimetre => cm1,
            EnergyUnit::ElectronVolt => cm1 * INVERSE_CM_J / ELECTRON_VOLT_J,
            EnergyUnit::Joule => cm1 * INVERSE_CM_J,
        }
    }
}

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
        // CODATA 2018: 1 cm^-1 = 1.239 841 984e-4 eV (h c, exact in the 2019 SI).
        let e = EnergyUnit::ElectronVolt.from_cm1(1.0);
        assert!((e / 1.239_841_984e-4 - 1.0).abs() < 1e-9, "{e}");
    }

    #[test]
    fn cubic_metre_is_a_millionth_of_the_cubic_centimetre_value() {
        // 1 m = 100 cm exactly (SI), so 1 cm^3 = 1e-6 m^3.
        let q = 3.5e-8;
        assert!((RateUnit::CubicMetrePerSecond.from_cm3_s(q) - 3.5e-14).abs() < 1e-28);
        assert_eq!(RateUnit::CubicCentimetrePerSecond.from_cm3_s(q), q);
        assert_eq!(DensityUnit::PerCubicMetre.to_per_cm3(1e6), 1.0);
    }

    #[test]
    fn spellings_parse_and_bad_ones_list_the_choices() {
        assert_eq!("eV".parse::<TemperatureUnit>(), Ok(TemperatureUnit::ElectronVolt));
        assert_eq!("K".parse::<TemperatureUnit>(), Ok(TemperatureUnit::Kelvin));
        assert_eq!("m3/s".parse::<RateUnit>(), Ok(RateUnit::CubicMetrePerSecond));
        assert_eq!(
            "cm^-3".parse::<DensityUnit>(),
            Ok(DensityUnit::PerCubicCentimetre)
        );
        let e = "F".parse::<TemperatureUnit>().unwrap_err().to_string();
        assert_eq!(e, "temperature unit = \"F\": must be one of K, eV");
        // Every symbol parses back to its unit.
        for u in TemperatureUnit::ALL {
            assert_eq!(u.symbol().parse::<TemperatureUnit>().as_ref(), Ok(u));
        }
        for u in EnergyUnit::ALL {
            assert_eq!(u.to_string().parse::<EnergyUnit>().as_ref(), Ok(u));
        }
    }

    #[test]
    fn wire_values_match_the_contract() {
        assert_eq!(TemperatureUnit::ElectronVolt.to_wire(), 2);
        assert_eq!(RateUnit::CubicMetrePerSecond.to_wire(), 2);
        assert_eq!(RateUnit::from_wire(1), Ok(RateUnit::CubicCentimetrePerSecond));
        assert_eq!(RateUnit::from_wire(0), Err(WireUnitError::Unspecified));
        assert_eq!(RateUnit::from_wire(9), Err(WireUnitError::Unknown(9)));
        assert_eq!(DensityUnit::PerCubicMetre.to_wire(), 2);
        assert_eq!(PowerUnit::ErgPerSecond.to_wire(), 2);
        assert_eq!(EnergyUnit::Joule.to_wire(), 3);
    }
}
