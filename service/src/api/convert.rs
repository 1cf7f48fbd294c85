//! Every conversion between wire messages and engine types lives here.

use crate::engine::compare::{CompareAnswer, CompareQuery};
use crate::engine::describe::{CollisionForm, SpeciesDescription};
use crate::engine::lookup::{LookupAnswer, LookupQuery};
use crate::engine::solve::{PointLayout, SolveAnswer, SolveQuery};
use crate::engine::units::{DensityUnit, EnergyUnit, PowerUnit, RateUnit, TemperatureUnit};
use crate::engine::{EngineError, GridSpec, Selector, Stamp};
use crate::physics::emission::CRITICAL_DENSITY_DEFINITION;
use ratewell_proto::pb;
use ratewell_proto::rule::{Direction, OutsidePolicy};
use ratewell_proto::units::WireUnitError;

/// The wire stamp of an engine stamp.
pub fn stamp(s: &Stamp) -> pb::DatasetStamp {
    pb::DatasetStamp {
        id: s.id.clone(),
        version: s.version.clone(),
        content_hash: s.content_hash.clone(),
        tables_digest: s.tables_digest.clone(),
    }
}

/// A selector from its wire form (a missing selector is an error naming `field`).
pub fn selector(sel: Option<&pb::DatasetSelector>, field: &str) -> Result<Selector, EngineError> {
    let sel = sel
        .ok_or_else(|| EngineError::invalid(field, "unset", "must name a dataset (id, optional version)"))?;
    if sel.id.is_empty() {
        return Err(EngineError::invalid(
            format!("{field}.id"),
            "\"\"",
            "must name a loaded dataset",
        ));
    }
    Ok(Selector {
        id: sel.id.clone(),
        version: (!sel.version.is_empty()).then(|| sel.version.clone()),
        expected_hash: (!sel.expected_content_hash.is_empty()).then(|| sel.expected_content_hash.clone()),
    })
}

/// A grid spec from its wire form; `None` when unset.
pub fn grid_spec(spec: Option<&pb::GridSpec>) -> Option<GridSpec> {
    spec.map(|g| GridSpec {
        t_min_k: g.t_min_k,
        t_max_k: g.t_max_k,
        points_per_decade: g.points_per_decade,
    })
}

/// The wire form of a grid spec.
pub fn grid_spec_to_wire(g: &GridSpec) -> pb::GridSpec {
    pb::GridSpec {
        t_min_k: g.t_min_k,
        t_max_k: g.t_max_k,
        points_per_decade: g.points_per_decade,
    }
}

fn species_name(name: &str) -> Result<String, EngineError> {
    if name.is_empty() {
        Err(EngineError::invalid(
            "species",
            "\"\"",
            "must name a species, e.g. \"O III\"",
        ))
    } else {
        Ok(name.to_owned())
    }
}

fn temperature_unit(raw: i32) -> Result<TemperatureUnit, EngineError> {
    TemperatureUnit::from_wire(raw).map_err(|_| {
        EngineError::invalid(
            "temperature_unit",
            raw,
            "must be TEMPERATURE_UNIT_KELVIN (1) or TEMPERATURE_UNIT_ELECTRON_VOLT (2): units are never implied",
        )
    })
}

fn density_unit(raw: i32) -> Result<DensityUnit, EngineError> {
    DensityUnit::from_wire(raw).map_err(|_| {
        EngineError::invalid(
            "density_unit",
            raw,
            "must be DENSITY_UNIT_PER_CUBIC_CENTIMETRE (1) or DENSITY_UNIT_PER_CUBIC_METRE (2)",
        )
    })
}

fn rate_unit(raw: i32) -> Result<RateUnit, EngineError> {
    RateUnit::from_wire(raw).map_err(|_| {
        EngineError::invalid(
            "rate_unit",
            raw,
            "must be RATE_UNIT_CUBIC_CENTIMETRE_PER_SECOND (1) or RATE_UNIT_CUBIC_METRE_PER_SECOND (2)",
        )
    })
}

fn power_unit(raw: i32) -> Result<PowerUnit, EngineError> {
    PowerUnit::from_wire(raw).map_err(|_| {
        EngineError::invalid(
            "power_unit",
            raw,
            "must be POWER_UNIT_WATT (1) or POWER_UNIT_ERG_PER_SECOND (2)",
        )
    })
}

fn direction(raw: i32) -> Result<Direction, EngineError> {
    match pb::Direction::try_from(raw) {
        Ok(pb::Direction::Excitation) => Ok(Direction::Excitation),
        Ok(pb::Direction::Deexcitation) => Ok(Direction::Deexcitation),
        Ok(pb::Direction::Both) => Ok(Direction::Both),
        Ok(pb::Direction::Unspecified) | Err(_) => Err(EngineError::invalid(
            "direction",
            raw,
            "must be DIRECTION_EXCITATION (1), DIRECTION_DEEXCITATION (2) or DIRECTION_BOTH (3)",
        )),
    }
}

/// The grid policy; unspecified means refuse.
pub fn outside_policy(raw: i32) -> Result<OutsidePolicy, EngineError> {
    match pb::OutsideGrid::try_from(raw) {
        Ok(pb::OutsideGrid::Unspecified | pb::OutsideGrid::Refuse) => Ok(OutsidePolicy::Refuse),
        Ok(pb::OutsideGrid::Extrapolate) => Ok(OutsidePolicy::Extrapolate),
        Err(_) => Err(EngineError::invalid(
            "outside_grid",
            raw,
            "must be OUTSIDE_GRID_REFUSE (1) or OUTSIDE_GRID_EXTRAPOLATE (2)",
        )),
    }
}

/// A lookup query from its wire form.
pub fn lookup_query(req: &pb::LookupRatesRequest) -> Result<LookupQuery, EngineError> {
    Ok(LookupQuery {
        selector: selector(req.dataset.as_ref(), "dataset")?,
        species: species_name(&req.species)?,
        transitions: req.transitions.iter().map(|k| (k.upper, k.lower)).collect(),
        temperatures: req.temperatures.clone(),
        temperature_unit: temperature_unit(req.temperature_unit)?,
        direction: direction(req.direction)?,
        rate_unit: rate_unit(req.rate_unit)?,
        outside: outside_policy(req.outside_grid)?,
        grid: grid_spec(req.grid.as_ref()),
    })
}

/// The wire form of a lookup answer.
pub fn lookup_answer(a: LookupAnswer) -> pb::LookupRatesResponse {
    pb::LookupRatesResponse {
        stamp: Some(stamp(&a.stamp)),
        species: a.species,
        transitions: a
            .transitions
            .iter()
            .map(|&(upper, lower)| pb::TransitionKey { upper, lower })
            .collect(),
        temperature_count: a.temperature_count as u32,
        rate_unit: a.rate_unit.to_wire(),
        excitation: a.excitation,
        deexcitation: a.deexcitation,
        flags: a.flags,
        cautions: a.cautions,
    }
}

/// A solve query from its wire form.
pub fn solve_query(req: &pb::SolvePopulationsRequest) -> Result<SolveQuery, EngineError> {
    Ok(SolveQuery {
        selector: selector(req.dataset.as_ref(), "dataset")?,
        species: species_name(&req.species)?,
        temperatures: req.temperatures.clone(),
        temperature_unit: temperature_unit(req.temperature_unit)?,
        densities: req.densities.clone(),
        density_unit: density_unit(req.density_unit)?,
        layout: if req.grid {
            PointLayout::Grid
        } else {
            PointLayout::Pairs
        },
        outside: outside_policy(req.outside_grid)?,
        power_unit: power_unit(req.power_unit)?,
        grid: grid_spec(req.table_grid.as_ref()),
        min_line_fraction: req.min_line_fraction,
    })
}

/// The wire form of a solve answer.
pub fn solve_answer(a: SolveAnswer) -> pb::SolvePopulationsResponse {
    let critical = a
        .points
        .iter()
        .flat_map(|p| p.critical_densities_per_cm3.iter().copied())
        .collect();
    let critical_all_exits = a
        .points
        .iter()
        .flat_map(|p| p.critical_densities_all_exits_per_cm3.iter().copied())
        .collect();
    pb::SolvePopulationsResponse {
        stamp: Some(stamp(&a.stamp)),
        species: a.species,
        power_unit: a.power_unit.to_wire(),
        level_count: a.level_count as u32,
        critical_densities_per_cm3: critical,
        critical_density_definition: CRITICAL_DENSITY_DEFINITION.to_owned(),
        critical_densities_all_exits_per_cm3: critical_all_exits,
        points: a
            .points
            .into_iter()
            .map(|p| pb::PopulationPoint {
                temperature_k: p.temperature_k,
                density_per_cm3: p.density_per_cm3,
                fractions: p.fractions,
                lines: p
                    .lines
                    .iter()
                    .map(|l| pb::LineEmission {
                        key: Some(pb::TransitionKey {
                            upper: l.upper,
                            lower: l.lower,
                        }),
                        wavelength_vacuum_angstrom: l.wavelength_vacuum_angstrom,
                        emissivity: l.emissivity,
                    })
                    .collect(),
                radiated_power: p.radiated_power,
                residual: p.residual,
                flags: p.flags,
            })
            .collect(),
        cautions: a.cautions,
    }
}

/// A comparison query from its wire form.
pub fn compare_query(req: &pb::CompareDatasetsRequest) -> Result<CompareQuery, EngineError> {
    Ok(CompareQuery {
        first: selector(req.first.as_ref(), "first")?,
        second: selector(req.second.as_ref(), "second")?,
        species: req.species.clone(),
        grid: grid_spec(req.grid.as_ref()),
    })
}

/// The wire form of a comparison answer.
pub fn compare_answer(a: CompareAnswer) -> pb::CompareDatasetsResponse {
    pb::CompareDatasetsResponse {
        first: Some(stamp(&a.first)),
        second: Some(stamp(&a.second)),
        differences: a
            .differences
            .into_iter()
            .map(|d| pb::TransitionDifference {
                species: d.species,
                key: Some(pb::TransitionKey {
                    upper: d.upper,
                    lower: d.lower,
                }),
                max_relative_difference: d.max_relative_difference,
                at_temperature_k: d.at_temperature_k,
            })
            .collect(),
        only_in_first: a.only_in_first,
        only_in_second: a.only_in_second,
        level_mismatches: a.level_mismatches,
    }
}

/// The asked energy unit of a species description; unspecified means cm^-1.
pub fn energy_unit(raw: i32) -> Result<EnergyUnit, EngineError> {
    match EnergyUnit::from_wire(raw) {
        Ok(unit) => Ok(unit),
        Err(WireUnitError::Unspecified) => Ok(EnergyUnit::InverseCentimetre),
        Err(WireUnitError::Unknown(_)) => Err(EngineError::invalid(
            "energy_unit",
            raw,
            "must be ENERGY_UNIT_INVERSE_CENTIMETRE (1), ENERGY_UNIT_ELECTRON_VOLT (2) or ENERGY_UNIT_JOULE (3)",
        )),
    }
}

/// A species description on the wire.
pub fn species_description_to_wire(d: SpeciesDescription) -> pb::DescribeSpeciesResponse {
    let unit = d.energy_unit.to_wire();
    pb::DescribeSpeciesResponse {
        stamp: Some(stamp(&d.stamp)),
        species: d.species,
        element: d.element,
        nuclear_charge: d.nuclear_charge,
        ion_charge: d.ion_charge,
        levels: d
            .levels
            .into_iter()
            .map(|l| pb::LevelInfo {
                index: l.index,
                label: l.label,
                statistical_weight: l.weight,
                energy: l.energy,
                energy_unit: unit,
            })
            .collect(),
        transitions: d
            .transitions
            .into_iter()
            .map(|t| pb::TransitionInfo {
                key: Some(pb::TransitionKey {
                    upper: t.upper,
                    lower: t.lower,
                }),
                a_per_s: t.a_per_s,
                oscillator_strength: t.oscillator_strength,
                wavelength_vacuum_angstrom: t.wavelength_vacuum_angstrom,
                has_collision_data: t.collision.is_some(),
                collision_source: match t.collision {
                    Some(CollisionForm::EffectiveTable) => pb::CollisionSource::EffectiveTable,
                    Some(CollisionForm::StrengthTable) => pb::CollisionSource::StrengthTable,
                    Some(CollisionForm::Approximation) => pb::CollisionSource::Approximation,
                    None => pb::CollisionSource::Unspecified,
                } as i32,
                scaling_type: t.scaling_type,
                source_t_min_k: t.source_range_k.0,
                source_t_max_k: t.source_range_k.1,
                source: t.source,
                uncertainty: t.uncertainty,
            })
            .collect(),
    }
}
