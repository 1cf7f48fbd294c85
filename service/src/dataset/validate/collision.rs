//! Collision data: which of the three forms a block uses, and the checks of each form.

use std::collections::BTreeMap;

use super::{
    Defaults, Levels, check_pair, energy_unit, in_range, optional_in_range, resolve_source, temperature_unit,
};
use crate::dataset::format::RawCollision;
use crate::dataset::model::{
    CollisionData, CollisionalTransition, EstimateMethod, RadiativeTransition, TRANSITION_TYPES,
    TransitionType,
};
use crate::dataset::reader::{Loc, Sink, Val};
use crate::dataset::units::{self, ENERGY_UNITS};

pub(super) fn build_collisions(
    sink: &mut Sink<'_>,
    raw: &[RawCollision],
    levels: &Levels,
    radiative: &BTreeMap<(u32, u32), RadiativeTransition>,
    sources: &BTreeMap<String, String>,
    defaults: &Defaults,
) -> Vec<CollisionalTransition> {
    let mut out = Vec::new();
    let mut lines: BTreeMap<(u32, u32), usize> = BTreeMap::new();
    for c in raw {
        let pair = check_pair(sink, &c.loc, c.upper.as_ref(), c.lower.as_ref(), levels);
        let pair = pair.and_then(|p| {
            if let Some(first) = lines.get(&p) {
                sink.report(
                    &c.loc,
                    format!(
                        "got collision {} - {} again, already given on line {first}",
                        p.0, p.1
                    ),
                );
                return None;
            }
            lines.insert(p, c.loc.line);
            Some(p)
        });
        let kind = c.kind.as_ref().and_then(|k| {
            let parsed = TransitionType::parse(&k.value);
            if parsed.is_none() {
                sink.report(
                    &k.loc,
                    format!("got {:?}, must be one of {TRANSITION_TYPES}", k.value),
                );
            }
            parsed
        });
        let uncertainty = optional_in_range(sink, c.relative_uncertainty.as_ref(), true);
        let uncertainty_ok = c.relative_uncertainty.is_none() || uncertainty.is_some();
        let source = resolve_source(sink, c.source.as_ref(), sources);
        let data = collision_data(sink, c, pair, kind, levels, radiative, defaults);
        if let (Some((upper, lower)), Some(kind), Some(data), Some(source), true) =
            (pair, kind, data, source, uncertainty_ok)
        {
            out.push(CollisionalTransition {
                upper,
                lower,
                kind,
                data,
                source,
                relative_uncertainty: uncertainty,
            });
        }
    }
    out
}

/// Relative distance below the transition energy within which an incident energy counts as
/// the threshold itself (unit-conversion rounding is about 1e-16).
const THRESHOLD_RELATIVE_SLACK: f64 = 1e-9;

/// Keys that belong to each data form, for "wrong form" messages.
const UPSILON_KEYS: [&str; 2] = ["temperatures", "temperature_unit"];
const OMEGA_KEYS: [&str; 3] = ["energies", "energy_unit", "energy_kind"];
const ESTIMATE_KEYS: [&str; 2] = ["oscillator_strength", "strength"];

fn present_keys(c: &RawCollision) -> Vec<(&'static str, &Loc)> {
    [
        ("temperatures", c.temperatures.as_ref().map(|v| &v.loc)),
        ("temperature_unit", c.temperature_unit.as_ref().map(|v| &v.loc)),
        ("energies", c.energies.as_ref().map(|v| &v.loc)),
        ("energy_unit", c.energy_unit.as_ref().map(|v| &v.loc)),
        ("energy_kind", c.energy_kind.as_ref().map(|v| &v.loc)),
        (
            "oscillator_strength",
            c.oscillator_strength.as_ref().map(|v| &v.loc),
        ),
        ("strength", c.strength.as_ref().map(|v| &v.loc)),
    ]
    .into_iter()
    .filter_map(|(name, loc)| loc.map(|l| (name, l)))
    .collect()
}

fn collision_data(
    sink: &mut Sink<'_>,
    c: &RawCollision,
    pair: Option<(u32, u32)>,
    kind: Option<TransitionType>,
    levels: &Levels,
    radiative: &BTreeMap<(u32, u32), RadiativeTransition>,
    defaults: &Defaults,
) -> Option<CollisionData> {
    let forms: Vec<&str> = [
        (c.has_upsilon, "upsilon"),
        (c.has_omega, "omega"),
        (c.has_estimate, "estimate"),
    ]
    .into_iter()
    .filter_map(|(present, name)| present.then_some(name))
    .collect();
    let form = match forms.as_slice() {
        [one] => *one,
        [] => {
            sink.report(
                &c.loc,
                "no collision data: give `upsilon` (with `temperatures`), `omega` (with `energies`) or `estimate`",
            );
            return None;
        }
        many => {
            sink.report(
                &c.loc,
                format!(
                    "got {}, give only one of `upsilon`, `omega`, `estimate`",
                    many.join(" and ")
                ),
            );
            return None;
        }
    };
    let own: &[&str] = match form {
        "upsilon" => &UPSILON_KEYS,
        "omega" => &OMEGA_KEYS,
        _ => &ESTIMATE_KEYS,
    };
    let mut stray = false;
    for (key, loc) in present_keys(c) {
        if !own.contains(&key) {
            sink.report(
                loc,
                format!("`{key}` does not belong to collision data given by `{form}`"),
            );
            stray = true;
        }
    }
    let data = match form {
        "upsilon" => effective_table(sink, c, defaults),
        "omega" => strength_table(sink, c, pair, levels, defaults),
        _ => estimate(sink, c, pair, kind, radiative),
    };
    if stray { None } else { data }
}

/// Check a table's abscissae are strictly increasing; report the first offender of each run.
fn check_increasing(sink: &mut Sink<'_>, values: &[(f64, &Loc)], unit: &str) -> bool {
    let mut ok = true;
    for w in values.windows(2) {
        let ((prev, prev_loc), (next, next_loc)) = (w[0], w[1]);
        if next <= prev {
            sink.report(
                next_loc,
                format!(
                    "got {next} {unit}, not above {} = {prev} {unit}; values must be strictly increasing",
                    prev_loc.field
                ),
            );
            ok = false;
        }
    }
    ok
}

fn check_lengths(sink: &mut Sink<'_>, xs: &Val<Vec<Val<f64>>>, ys: &Val<Vec<Val<f64>>>) -> bool {
    if xs.value.is_empty() {
        sink.report(&xs.loc, "got an empty table, at least one point is needed");
        return false;
    }
    if xs.value.len() != ys.value.len() {
        sink.report(
            &ys.loc,
            format!(
                "got {} values for {} points in `{}`; the two arrays must have the same length",
                ys.value.len(),
                xs.value.len(),
                xs.loc.field
            ),
        );
        return false;
    }
    true
}

fn effective_table(sink: &mut Sink<'_>, c: &RawCollision, defaults: &Defaults) -> Option<CollisionData> {
    let Some(temps) = &c.temperatures else {
        sink.report(&c.loc, "missing: an `upsilon` table needs `temperatures`");
        return None;
    };
    let unit = match &c.temperature_unit {
        Some(u) => temperature_unit(sink, u),
        None => {
            if defaults.temperature.is_none() {
                sink.report(&temps.loc, "no temperature unit: give `temperature_unit` here or `temperature` in [units] (\"K\" or \"eV\")");
            }
            defaults.temperature
        }
    };
    let upsilon = c.upsilon.as_ref()?;
    let lengths_ok = check_lengths(sink, temps, upsilon);
    let unit = unit?;
    let mut temperatures_k = Vec::new();
    let mut points = Vec::new();
    let mut ok = true;
    for t in &temps.value {
        match in_range(sink, t, unit.as_str(), false) {
            Some(v) if unit.to_k(v).is_finite() => {
                temperatures_k.push(unit.to_k(v));
                points.push((v, &t.loc));
            }
            Some(v) => {
                sink.report(
                    &t.loc,
                    format!("got {v} {}, too large to express in K", unit.as_str()),
                );
                ok = false;
            }
            None => ok = false,
        }
    }
    ok &= check_increasing(sink, &points, unit.as_str());
    let mut values = Vec::new();
    for u in &upsilon.value {
        match in_range(sink, u, "", false) {
            Some(v) => values.push(v),
            None => ok = false,
        }
    }
    (ok && lengths_ok).then_some(CollisionData::EffectiveTable {
        temperatures_k,
        upsilon: values,
    })
}

fn strength_table(
    sink: &mut Sink<'_>,
    c: &RawCollision,
    pair: Option<(u32, u32)>,
    levels: &Levels,
    defaults: &Defaults,
) -> Option<CollisionData> {
    let Some(energies) = &c.energies else {
        sink.report(&c.loc, "missing: an `omega` table needs `energies`");
        return None;
    };
    let unit = match &c.energy_unit {
        Some(u) => energy_unit(sink, u),
        None => {
            if defaults.collision_energy.is_none() {
                sink.report(
                    &energies.loc,
                    format!("no energy unit: give `energy_unit` here or `collision_energy` in [units] (one of {ENERGY_UNITS})"),
                );
            }
            defaults.collision_energy
        }
    };
    let incident = match &c.energy_kind {
        Some(k) => match k.value.as_str() {
            "incident" => Some(true),
            "scattered" => Some(false),
            other => {
                sink.report(
                    &k.loc,
                    format!("got {other:?}, must be \"incident\" or \"scattered\" (which electron's energy)"),
                );
                None
            }
        },
        None => {
            sink.report(
                &energies.loc,
                "missing: an `omega` table needs `energy_kind`, \"incident\" or \"scattered\"",
            );
            None
        }
    };
    let omega = c.omega.as_ref()?;
    let lengths_ok = check_lengths(sink, energies, omega);
    let (unit, incident) = (unit?, incident?);
    let threshold_ry = match (incident, pair) {
        (false, _) => 0.0,
        (true, Some((u, l))) => units::cm1_to_ry(levels.built[&u].energy_cm1 - levels.built[&l].energy_cm1),
        (true, None) => return None,
    };
    let mut scattered = Vec::new();
    let mut points = Vec::new();
    let mut ok = true;
    for e in &energies.value {
        let Some(v) = in_range(sink, e, unit.as_str(), true) else {
            ok = false;
            continue;
        };
        let ef = if incident {
            let ef = unit.to_ry(v) - threshold_ry;
            // The transition energy written in another unit than the levels differs from
            // threshold_ry by conversion rounding: within that slack it is the threshold.
            if ef < 0.0 && -ef <= THRESHOLD_RELATIVE_SLACK * threshold_ry {
                0.0
            } else {
                ef
            }
        } else {
            unit.to_ry(v)
        };
        if !ef.is_finite() {
            sink.report(
                &e.loc,
                format!("got {v} {}, too large to express in Ry", unit.as_str()),
            );
            ok = false;
            continue;
        }
        if ef < 0.0 {
            sink.report(
                &e.loc,
                format!(
                    "got incident energy {v} {} = {} Ry, below the excitation threshold {threshold_ry} Ry; \
                     incident energies must be >= the transition energy (within a relative 1e-9)",
                    unit.as_str(),
                    unit.to_ry(v)
                ),
            );
            ok = false;
            continue;
        }
        scattered.push(if ef == 0.0 { 0.0 } else { ef });
        points.push((v, &e.loc));
    }
    ok &= check_increasing(sink, &points, unit.as_str());
    let mut values = Vec::new();
    for w in &omega.value {
        match in_range(sink, w, "", true) {
            Some(v) => values.push(v),
            None => ok = false,
        }
    }
    (ok && lengths_ok).then_some(CollisionData::StrengthTable {
        scattered_energies_ry: scattered,
        omega: values,
    })
}

fn estimate(
    sink: &mut Sink<'_>,
    c: &RawCollision,
    pair: Option<(u32, u32)>,
    kind: Option<TransitionType>,
    radiative: &BTreeMap<(u32, u32), RadiativeTransition>,
) -> Option<CollisionData> {
    let method = c.estimate.as_ref()?;
    match method.value.as_str() {
        "van-regemorter" => {
            if let Some(strength) = &c.strength {
                sink.report(
                    &strength.loc,
                    "`strength` belongs to \"coulomb-focusing\", not to \"van-regemorter\"",
                );
                return None;
            }
            if let Some(k) = kind
                && !matches!(k, TransitionType::Allowed | TransitionType::WeakAllowed)
            {
                let loc = c.kind.as_ref().map_or(&c.loc, |v| &v.loc);
                sink.report(
                    loc,
                    format!(
                        "got {:?}, the Van Regemorter formula is for allowed lines: type must be \"allowed\" or \"weak-allowed\"",
                        k.as_str()
                    ),
                );
                return None;
            }
            let (upper, lower) = pair?;
            if let Some(f) = &c.oscillator_strength {
                let f = in_range(sink, f, "", false)?;
                return Some(CollisionData::Estimate(EstimateMethod::VanRegemorter {
                    oscillator_strength: f,
                    from_radiative: false,
                }));
            }
            match radiative.get(&(upper, lower)).and_then(|r| r.oscillator_strength) {
                Some(f) => Some(CollisionData::Estimate(EstimateMethod::VanRegemorter {
                    oscillator_strength: f,
                    from_radiative: true,
                })),
                None => {
                    sink.report(
                        &method.loc,
                        format!(
                            "\"van-regemorter\" needs an oscillator strength: give `oscillator_strength` here \
                             or on the [[radiative]] transition {upper} -> {lower}"
                        ),
                    );
                    None
                }
            }
        }
        "coulomb-focusing" => {
            if let Some(f) = &c.oscillator_strength {
                sink.report(
                    &f.loc,
                    "`oscillator_strength` belongs to \"van-regemorter\", not to \"coulomb-focusing\"",
                );
                return None;
            }
            let strength = match &c.strength {
                Some(s) => in_range(sink, s, "", false)?,
                None => 1.0,
            };
            Some(CollisionData::Estimate(EstimateMethod::CoulombFocusing {
                strength,
            }))
        }
        other => {
            sink.report(
                &method.loc,
                format!("got {other:?}, must be \"van-regemorter\" or \"coulomb-focusing\""),
            );
            None
        }
    }
}
