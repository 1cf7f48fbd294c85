//! Checks the meaning of raw file values (ranges, units, level indices, duplicates, sources)
//! and builds the canonical model from them. Every problem of a file is reported; a species is
//! built only when its file has none.
//!
//! [`manifest`] checks `dataset.toml`; `species` the header, sources and levels of a species
//! file and its radiative transitions; `collision` the collision data. This module holds the
//! checks they share.

mod collision;
pub mod manifest;
mod species;

use std::collections::{BTreeMap, BTreeSet};

use super::format::{RawSpecies, RawUnits};
use super::model::{CollisionalTransition, Level, RadiativeTransition, Species};
use super::reader::{Loc, Sink, Val};
use super::units::{ENERGY_UNITS, EnergyUnit, TEMPERATURE_UNITS, TemperatureUnit};

pub(crate) use manifest::check_manifest;
pub use manifest::{is_valid_id, parse_version};

/// Largest nuclear charge accepted (covers invented demo elements beyond the periodic table).
pub const MAX_NUCLEAR_CHARGE: u32 = 200;

/// Check one species file and build its species; `None` when the file has problems.
pub(crate) fn build_species(sink: &mut Sink<'_>, raw: RawSpecies) -> Option<Species> {
    let header = species::check_header(sink, &raw);
    let sources = species::check_sources(sink, &raw.sources);
    let species_source = resolve_source(sink, raw.source.as_ref(), &sources);
    let defaults = check_units(sink, &raw.units);

    let levels = species::build_levels(sink, &raw.header, &raw.levels, &sources, &defaults);
    let radiative = species::build_radiative(sink, &raw.radiative, &levels, &sources);
    let collisions =
        collision::build_collisions(sink, &raw.collisions, &levels, &radiative, &sources, &defaults);

    if sink.has_problems() {
        return None;
    }
    let (name, element, nuclear_charge, ion_charge) = header?;
    let mut levels: Vec<Level> = levels.built.into_values().collect();
    levels.sort_by_key(|l| l.index);
    let mut radiative: Vec<RadiativeTransition> = radiative.into_values().collect();
    radiative.sort_by_key(|t| (t.upper, t.lower));
    let mut collisions: Vec<CollisionalTransition> = collisions;
    collisions.sort_by_key(|t| (t.upper, t.lower));
    Some(Species {
        name,
        element,
        nuclear_charge,
        ion_charge,
        source: species_source?,
        levels,
        radiative,
        collisions,
    })
}

/// Resolve a `source` value: `"@key"` looks up `[sources]`, anything else is the text itself.
fn resolve_source(
    sink: &mut Sink<'_>,
    value: Option<&Val<String>>,
    sources: &BTreeMap<String, String>,
) -> Option<String> {
    let value = value?;
    let text = value.value.trim();
    if text.is_empty() {
        sink.report(
            &value.loc,
            "got an empty string, every block must name where its data come from",
        );
        return None;
    }
    match text.strip_prefix('@') {
        Some(key) => match sources.get(key) {
            Some(found) => Some(found.clone()),
            None => {
                let known: Vec<&str> = sources.keys().map(String::as_str).collect();
                sink.report(
                    &value.loc,
                    format!(
                        "got {:?}, no key {key:?} in [sources] (known: {})",
                        value.value,
                        known.join(", ")
                    ),
                );
                None
            }
        },
        None => Some(value.value.clone()),
    }
}

/// File-wide default units after parsing.
#[derive(Debug, Default)]
struct Defaults {
    energy: Option<EnergyUnit>,
    temperature: Option<TemperatureUnit>,
    collision_energy: Option<EnergyUnit>,
}

fn check_units(sink: &mut Sink<'_>, raw: &RawUnits) -> Defaults {
    Defaults {
        energy: raw.energy.as_ref().and_then(|u| energy_unit(sink, u)),
        temperature: raw.temperature.as_ref().and_then(|u| temperature_unit(sink, u)),
        collision_energy: raw.collision_energy.as_ref().and_then(|u| energy_unit(sink, u)),
    }
}

fn energy_unit(sink: &mut Sink<'_>, unit: &Val<String>) -> Option<EnergyUnit> {
    let parsed = EnergyUnit::parse(&unit.value);
    if parsed.is_none() {
        sink.report(
            &unit.loc,
            format!("got {:?}, must be one of {ENERGY_UNITS}", unit.value),
        );
    }
    parsed
}

fn temperature_unit(sink: &mut Sink<'_>, unit: &Val<String>) -> Option<TemperatureUnit> {
    let parsed = TemperatureUnit::parse(&unit.value);
    if parsed.is_none() {
        sink.report(
            &unit.loc,
            format!("got {:?}, must be one of {TEMPERATURE_UNITS}", unit.value),
        );
    }
    parsed
}

/// A finite value in the allowed range, else a problem naming value, unit and range.
fn in_range(sink: &mut Sink<'_>, value: &Val<f64>, unit: &str, allow_zero: bool) -> Option<f64> {
    let v = value.value;
    let ok = v.is_finite() && (v > 0.0 || (allow_zero && v == 0.0));
    if !ok {
        let shown = if unit.is_empty() {
            format!("{v}")
        } else {
            format!("{v} {unit}")
        };
        let rule = if allow_zero {
            "finite and >= 0"
        } else {
            "finite and > 0"
        };
        sink.report(&value.loc, format!("got {shown}, must be {rule}"));
    }
    ok.then_some(v)
}

fn optional_in_range(sink: &mut Sink<'_>, value: Option<&Val<f64>>, allow_zero: bool) -> Option<f64> {
    value.and_then(|v| in_range(sink, v, "", allow_zero))
}

/// The levels of a file: those that passed every check, and every index that was defined.
struct Levels {
    built: BTreeMap<u32, Level>,
    defined: BTreeSet<u32>,
}

/// Check an (upper, lower) pair against the levels; `None` after reporting when it is bad.
fn check_pair(
    sink: &mut Sink<'_>,
    block: &Loc,
    upper: Option<&Val<i64>>,
    lower: Option<&Val<i64>>,
    levels: &Levels,
) -> Option<(u32, u32)> {
    let known = |v: &Val<i64>, sink: &mut Sink<'_>| -> Option<u32> {
        let index = u32::try_from(v.value).ok();
        match index {
            Some(i) if levels.built.contains_key(&i) => Some(i),
            // defined but itself invalid: already reported, say nothing more
            Some(i) if levels.defined.contains(&i) => None,
            _ => {
                if !levels.defined.is_empty() {
                    let max = levels.defined.iter().next_back().copied().unwrap_or(0);
                    sink.report(
                        &v.loc,
                        format!("got {}, no level with this index (levels are 1..={max})", v.value),
                    );
                }
                None
            }
        }
    };
    let (upper, lower) = (upper?, lower?);
    let (u, l) = (known(upper, sink), known(lower, sink));
    let (u, l) = (u?, l?);
    if u == l {
        sink.report(
            &block.clone(),
            format!("got upper = lower = {u}, a transition joins two different levels"),
        );
        return None;
    }
    let (eu, el) = (levels.built[&u].energy_cm1, levels.built[&l].energy_cm1);
    if eu <= el {
        sink.report(
            &upper.loc,
            format!(
                "got upper level {u} at {eu} cm-1, not above lower level {l} at {el} cm-1; the upper level must have the higher energy"
            ),
        );
        return None;
    }
    Some((u, l))
}
