//! What a species holds, as the species description answers it: levels with energies in the
//! asked unit, and every level pair with radiative or collision data, with its A value,
//! wavelength, data form, source range (the one the tables carry and flag BEYOND_SOURCE by)
//! and sources.

use super::units::EnergyUnit;
use super::{Engine, EngineError, Selector, Stamp, unknown_species_error};
use crate::dataset::{CollisionData, Species};
use crate::physics::units::vacuum_wavelength_angstrom_from_cm1;
use crate::tables::source_range_k;
use std::collections::BTreeSet;

/// One level.
#[derive(Debug, Clone, PartialEq)]
pub struct LevelDescription {
    /// 1-based index.
    pub index: u32,
    /// Configuration and term label.
    pub label: String,
    /// Statistical weight.
    pub weight: f64,
    /// Energy above the ground level, in the description's unit.
    pub energy: f64,
}

/// Where a transition's collision data come from.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum CollisionForm {
    /// Effective collision strengths Upsilon(T).
    EffectiveTable,
    /// Collision strengths Omega(E), averaged over a Maxwellian by the service.
    StrengthTable,
    /// An approximation formula.
    Approximation,
}

/// One level pair with radiative or collision data.
#[derive(Debug, Clone, PartialEq)]
pub struct TransitionDescription {
    /// Upper level (1-based).
    pub upper: u32,
    /// Lower level (1-based).
    pub lower: u32,
    /// Einstein A, s^-1 (0 without radiative data).
    pub a_per_s: f64,
    /// Absorption oscillator strength (0 when not given).
    pub oscillator_strength: f64,
    /// Vacuum wavelength, Angstrom (0 for a pair of equal energies).
    pub wavelength_vacuum_angstrom: f64,
    /// Form of the collision data, `None` without any.
    pub collision: Option<CollisionForm>,
    /// Transition type of the collision data ("allowed", ...), empty without any.
    pub scaling_type: String,
    /// Source range of the collision data, K; (0, 0) for none.
    pub source_range_k: (f64, f64),
    /// The sources of the radiative and collision data, "; "-joined.
    pub source: String,
    /// Relative uncertainty (collision data's, else the radiative line's; 0 when not given).
    pub uncertainty: f64,
}

/// A species as described.
#[derive(Debug, Clone, PartialEq)]
pub struct SpeciesDescription {
    /// Dataset the description came from.
    pub stamp: Stamp,
    /// Species name.
    pub species: String,
    /// Element symbol.
    pub element: String,
    /// Nuclear charge Z.
    pub nuclear_charge: u32,
    /// Ion charge (spectroscopic charge - 1).
    pub ion_charge: u32,
    /// Unit of the level energies.
    pub energy_unit: EnergyUnit,
    /// Levels, by index.
    pub levels: Vec<LevelDescription>,
    /// Level pairs, by (upper, lower).
    pub transitions: Vec<TransitionDescription>,
}

impl Engine {
    /// The description of `species` in the selected dataset, level energies in `unit`.
    pub fn describe_species(
        &self,
        selector: &Selector,
        species: &str,
        unit: EnergyUnit,
    ) -> Result<SpeciesDescription, EngineError> {
        let loaded = self.select(selector)?;
        let found = loaded
            .dataset
            .species(species)
            .ok_or_else(|| unknown_species_error(&loaded, species))?;
        Ok(describe(found, unit, loaded.stamp.clone()))
    }
}

fn describe(species: &Species, unit: EnergyUnit, stamp: Stamp) -> SpeciesDescription {
    let levels = species
        .levels
        .iter()
        .map(|l| LevelDescription {
            index: l.index,
            label: l.label.clone(),
            weight: l.weight,
            energy: unit.from_cm1(l.energy_cm1),
        })
        .collect();
    let pairs: BTreeSet<(u32, u32)> = species
        .radiative
        .iter()
        .map(|r| (r.upper, r.lower))
        .chain(species.collisions.iter().map(|c| (c.upper, c.lower)))
        .collect();
    let transitions = pairs
        .into_iter()
        .map(|(upper, lower)| {
            let radiative = species.radiative_transition(upper, lower);
            let collision = species.collisional_transition(upper, lower);
            let delta_cm1 = species.transition_energy_cm1(upper, lower).unwrap_or(0.0);
            let mut sources: Vec<&str> = Vec::new();
            if let Some(r) = radiative {
                sources.push(&r.source);
            }
            if let Some(c) = collision
                && !sources.contains(&c.source.as_str())
            {
                sources.push(&c.source);
            }
            TransitionDescription {
                upper,
                lower,
                a_per_s: radiative.map_or(0.0, |r| r.a_per_s),
                oscillator_strength: radiative.and_then(|r| r.oscillator_strength).unwrap_or(0.0),
                wavelength_vacuum_angstrom: if delta_cm1 > 0.0 {
                    vacuum_wavelength_angstrom_from_cm1(delta_cm1)
                } else {
                    0.0
                },
                collision: collision.map(|c| match c.data {
                    CollisionData::EffectiveTable { .. } => CollisionForm::EffectiveTable,
                    CollisionData::StrengthTable { .. } => CollisionForm::StrengthTable,
                    CollisionData::Estimate(_) => CollisionForm::Approximation,
                }),
                scaling_type: collision.map(|c| c.kind.as_str().to_owned()).unwrap_or_default(),
                source_range_k: collision
                    .and_then(|c| source_range_k(&c.data))
                    .unwrap_or((0.0, 0.0)),
                source: sources.join("; "),
                uncertainty: collision
                    .and_then(|c| c.relative_uncertainty)
                    .or(radiative.and_then(|r| r.relative_uncertainty))
                    .unwrap_or(0.0),
            }
        })
        .collect();
    SpeciesDescription {
        stamp,
        species: species.name.clone(),
        element: species.element.clone(),
        nuclear_charge: species.nuclear_charge,
        ion_charge: species.ion_charge,
        energy_unit: unit,
        levels,
        transitions,
    }
}
