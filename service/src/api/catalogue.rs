//! Catalogue service: datasets, species, levels, transitions.

use super::convert::{grid_spec_to_wire, selector, stamp};
use super::{AppState, deadline_of};
use crate::dataset::{CollisionData, Species};
use crate::engine::EngineError;
use crate::physics::constants::{ELECTRON_VOLT_J, INVERSE_CM_J};
use crate::physics::units::vacuum_wavelength_angstrom_from_cm1;
use crate::tables::source_range_k;
use ratewell_proto::pb::{self, catalogue_server::Catalogue};
use std::collections::BTreeSet;
use tonic::{Request, Response, Status};

/// Handler of the Catalogue service.
#[derive(Clone)]
pub struct CatalogueHandler(pub AppState);

#[tonic::async_trait]
impl Catalogue for CatalogueHandler {
    async fn list_datasets(
        &self,
        _request: Request<pb::ListDatasetsRequest>,
    ) -> Result<Response<pb::ListDatasetsResponse>, Status> {
        let default_grid = grid_spec_to_wire(&self.0.engine.config().default_grid);
        let datasets = self
            .0
            .engine
            .datasets()
            .iter()
            .map(|d| pb::DatasetSummary {
                stamp: Some(stamp(&d.stamp)),
                description: d.dataset.description.clone(),
                provenance: d.dataset.provenance.clone(),
                species: d.dataset.species.iter().map(|s| s.name.clone()).collect(),
                default_grid: Some(default_grid),
                loaded_at_unix_s: d.loaded_at_unix_s,
            })
            .collect();
        Ok(Response::new(pb::ListDatasetsResponse { datasets }))
    }

    async fn describe_species(
        &self,
        request: Request<pb::DescribeSpeciesRequest>,
    ) -> Result<Response<pb::DescribeSpeciesResponse>, Status> {
        let deadline = deadline_of(&request);
        let req = request.into_inner();
        self.0
            .run(deadline, move |engine| {
                let loaded = engine.select(&selector(req.dataset.as_ref(), "dataset")?)?;
                let species = loaded
                    .dataset
                    .species(&req.species)
                    .ok_or_else(|| crate::engine::unknown_species_error(&loaded, &req.species))?;
                let unit = energy_unit(req.energy_unit)?;
                Ok(describe(species, unit, stamp(&loaded.stamp)))
            })
            .await
            .map(Response::new)
    }
}

fn energy_unit(raw: i32) -> Result<pb::EnergyUnit, EngineError> {
    match pb::EnergyUnit::try_from(raw) {
        Ok(pb::EnergyUnit::Unspecified) => Ok(pb::EnergyUnit::InverseCentimetre),
        Ok(unit) => Ok(unit),
        Err(_) => Err(EngineError::invalid(
            "energy_unit",
            raw,
            "must be ENERGY_UNIT_INVERSE_CENTIMETRE (1), ENERGY_UNIT_ELECTRON_VOLT (2) or ENERGY_UNIT_JOULE (3)",
        )),
    }
}

fn convert_energy(cm1: f64, unit: pb::EnergyUnit) -> f64 {
    match unit {
        pb::EnergyUnit::ElectronVolt => cm1 * INVERSE_CM_J / ELECTRON_VOLT_J,
        pb::EnergyUnit::Joule => cm1 * INVERSE_CM_J,
        pb::EnergyUnit::InverseCentimetre | pb::EnergyUnit::Unspecified => cm1,
    }
}

fn describe(species: &Species, unit: pb::EnergyUnit, stamp: pb::DatasetStamp) -> pb::DescribeSpeciesResponse {
    let levels = species
        .levels
        .iter()
        .map(|l| pb::LevelInfo {
            index: l.index,
            label: l.label.clone(),
            statistical_weight: l.weight,
            energy: convert_energy(l.energy_cm1, unit),
            energy_unit: unit as i32,
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
            let source_kind = match collision.map(|c| &c.data) {
                Some(CollisionData::EffectiveTable { .. }) => pb::CollisionSource::EffectiveTable,
                Some(CollisionData::StrengthTable { .. }) => pb::CollisionSource::StrengthTable,
                Some(CollisionData::Estimate(_)) => pb::CollisionSource::Approximation,
                None => pb::CollisionSource::Unspecified,
            };
            // The same range the tables carry (and flag BEYOND_SOURCE by); 0..0 for none.
            let (t_min, t_max) = collision
                .and_then(|c| source_range_k(&c.data))
                .unwrap_or((0.0, 0.0));
            let mut sources: Vec<&str> = Vec::new();
            if let Some(r) = radiative {
                sources.push(&r.source);
            }
            if let Some(c) = collision {
                sources.push(&c.source);
            }
            pb::TransitionInfo {
                key: Some(pb::TransitionKey { upper, lower }),
                a_per_s: radiative.map_or(0.0, |r| r.a_per_s),
                oscillator_strength: radiative.and_then(|r| r.oscillator_strength).unwrap_or(0.0),
                wavelength_vacuum_angstrom: if delta_cm1 > 0.0 {
                    vacuum_wavelength_angstrom_from_cm1(delta_cm1)
                } else {
                    0.0
                },
                has_collision_data: collision.is_some(),
                collision_source: source_kind as i32,
                scaling_type: collision.map(|c| c.kind.as_str().to_owned()).unwrap_or_default(),
                source_t_min_k: t_min,
                source_t_max_k: t_max,
                source: sources.join("; "),
                uncertainty: collision
                    .and_then(|c| c.relative_uncertainty)
                    .or(radiative.and_then(|r| r.relative_uncertainty))
                    .unwrap_or(0.0),
            }
        })
        .collect();
    pb::DescribeSpeciesResponse {
        stamp: Some(stamp),
        species: species.name.clone(),
        element: species.element.clone(),
        nuclear_charge: species.nuclear_charge,
        ion_charge: species.ion_charge,
        levels,
        transitions,
    }
}
