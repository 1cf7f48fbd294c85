//! Units named at the engine's boundary: the contract crate's one vocabulary
//! ([`ratewell_proto::units`]), with the conversions to the canonical units the core computes in
//! (K, cm^-3, cm^3 s^-1, W).

pub use ratewell_proto::units::{DensityUnit, EnergyUnit, PowerUnit, RateUnit, TemperatureUnit};
