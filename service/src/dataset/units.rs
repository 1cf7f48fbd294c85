//! Units accepted in dataset files and their conversion to the canonical ones
//! (level energies in cm^-1, temperatures in K, collision energies in Rydberg).
//!
//! Conversion factors come from `ratewell_proto::constants` (CODATA 2018); a value already in
//! the canonical unit is passed through untouched, so its bits are preserved.

use ratewell_proto::constants::{
    ELECTRON_VOLT_J, INVERSE_CM_J, KELVIN_PER_EV, KELVIN_PER_INVERSE_CM, RYDBERG_J,
};

/// A unit of energy allowed in dataset files.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum EnergyUnit {
    /// Wavenumber, written `"cm-1"`.
    InverseCm,
    /// Electronvolt, written `"eV"`.
    ElectronVolt,
    /// Joule, written `"J"`.
    Joule,
    /// Rydberg (h c R_inf), written `"Ry"`.
    Rydberg,
}

/// The spellings of [`EnergyUnit`] accepted in files, for error messages.
pub const ENERGY_UNITS: &str = "\"cm-1\", \"eV\", \"J\", \"Ry\"";
/// The spellings of [`TemperatureUnit`] accepted in files, for error messages.
pub const TEMPERATURE_UNITS: &str = "\"K\", \"eV\"";

impl EnergyUnit {
    /// Parse the file spelling (exact, case-sensitive).
    pub fn parse(text: &str) -> Option<Self> {
        match text {
            "cm-1" => Some(EnergyUnit::InverseCm),
            "eV" => Some(EnergyUnit::ElectronVolt),
            "J" => Some(EnergyUnit::Joule),
            "Ry" => Some(EnergyUnit::Rydberg),
            _ => None,
        }
    }

    /// The file spelling.
    pub fn as_str(self) -> &'static str {
        match self {
            EnergyUnit::InverseCm => "cm-1",
            EnergyUnit::ElectronVolt => "eV",
            EnergyUnit::Joule => "J",
            EnergyUnit::Rydberg => "Ry",
        }
    }

    /// Convert `value` in this unit to cm^-1.
    pub fn to_cm1(self, value: f64) -> f64 {
        match self {
            EnergyUnit::InverseCm => value,
            EnergyUnit::ElectronVolt => value * ELECTRON_VOLT_J / INVERSE_CM_J,
            EnergyUnit::Joule => value / INVERSE_CM_J,
            EnergyUnit::Rydberg => value * RYDBERG_J / INVERSE_CM_J,
        }
    }

    /// Convert `value` in this unit to Rydberg.
    pub fn to_ry(self, value: f64) -> f64 {
        match self {
            // The physics' own conversion, so a threshold made here and one made while
            // building tables are the same number to the last bit.
            EnergyUnit::InverseCm => crate::physics::units::cm1_to_ry(value),
            EnergyUnit::ElectronVolt => value * ELECTRON_VOLT_J / RYDBERG_J,
            EnergyUnit::Joule => value / RYDBERG_J,
            EnergyUnit::Rydberg => value,
        }
    }
}

/// A unit of temperature allowed in dataset files.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum TemperatureUnit {
    /// Kelvin, written `"K"`.
    Kelvin,
    /// Electronvolt (k T in eV), written `"eV"`.
    ElectronVolt,
}

impl TemperatureUnit {
    /// Parse the file spelling (exact, case-sensitive).
    pub fn parse(text: &str) -> Option<Self> {
        match text {
            "K" => Some(TemperatureUnit::Kelvin),
            "eV" => Some(TemperatureUnit::ElectronVolt),
            _ => None,
        }
    }

    /// The file spelling.
    pub fn as_str(self) -> &'static str {
        match self {
            TemperatureUnit::Kelvin => "K",
            TemperatureUnit::ElectronVolt => "eV",
        }
    }

    /// Convert `value` in this unit to kelvin.
    pub fn to_k(self, value: f64) -> f64 {
        match self {
            TemperatureUnit::Kelvin => value,
            TemperatureUnit::ElectronVolt => value * KELVIN_PER_EV,
        }
    }
}

/// Temperature equivalent E/k, in K, of an energy in cm^-1.
pub fn cm1_to_k(energy_cm1: f64) -> f64 {
    energy_cm1 * KELVIN_PER_INVERSE_CM
}

/// An energy in cm^-1 expressed in Rydberg.
pub fn cm1_to_ry(energy_cm1: f64) -> f64 {
    EnergyUnit::InverseCm.to_ry(energy_cm1)
}
