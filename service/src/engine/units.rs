//! Units named at the engine's boundary, and the conversions to the canonical units the core
//! computes in (K, cm^-3, cm^3 s^-1, W).

/// Unit of temperatures in a request.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum TemperatureUnit {
    /// Kelvin.
    #[default]
    Kelvin,
    /// Electronvolt (kT).
    ElectronVolt,
}

impl TemperatureUnit {
    /// Symbol for messages.
    pub fn symbol(self) -> &'static str {
        match self {
            Self::Kelvin => "K",
            Self::ElectronVolt => "eV",
        }
    }
    /// Converts a temperature in this unit to K.
    pub fn to_kelvin(self, value: f64) -> f64 {
        match self {
            Self::Kelvin => value,
            Self::ElectronVolt => ratewell_proto::units::kelvin_from_electron_volt(value),
        }
    }
}

/// Unit of electron densities.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum DensityUnit {
    /// cm^-3.
    #[default]
    PerCubicCentimetre,
    /// m^-3.
    PerCubicMetre,
}

impl DensityUnit {
    /// Symbol for messages.
    pub fn symbol(self) -> &'static str {
        match self {
            Self::PerCubicCentimetre => "cm^-3",
            Self::PerCubicMetre => "m^-3",
        }
    }
    /// Converts a density in this unit to cm^-3.
    pub fn to_per_cm3(self, value: f64) -> f64 {
        match self {
            Self::PerCubicCentimetre => value,
            Self::PerCubicMetre => ratewell_proto::units::per_cm3_from_per_m3(value),
        }
    }
}

/// Unit of rate coefficients in an answer.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum RateUnit {
    /// cm^3 s^-1.
    #[default]
    CubicCentimetrePerSecond,
    /// m^3 s^-1.
    CubicMetrePerSecond,
}

/// Unit of emitted power in an answer.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum PowerUnit {
    /// W.
    #[default]
    Watt,
    /// erg s^-1.
    ErgPerSecond,
}

impl PowerUnit {
    /// Factor from W to this unit.
    pub fn from_watt_factor(self) -> f64 {
        match self {
            Self::Watt => 1.0,
            Self::ErgPerSecond => 1e7,
        }
    }
}
