//! Checks the meaning of raw file values (ranges, units, indices, duplicates, sources) and builds the canonical model from them. Every
//! problem of a file is reported; a species is built only when its file has none.

use std::collections::BTreeMap;

use super::format::{FORMAT_VERSION, RawCollision, RawLevel, RawManifest, RawRadiative, RawSpecies, RawUnits};
use super::model::{
    CollisionData, CollisionalTransition, EstimateMethod, Level, RadiativeTransition, Species, TRANSITION_TYPES,
    TransitionType,
};
use super::reader::{Loc, Sink, Val};
use super::units::{self, ENERGY_UNITS, EnergyUnit, TEMPERATURE_UNITS, TemperatureUnit};

/// Largest nuclear charge accepted (covers invented demo elements beyond the periodic table).
pub const MAX_NUCLEAR_CHARGE: u32 = 200;

/// The checked manifest.
#[derive(Debug)]
pub(crate) struct Manifest {
    pub(crate) id: String,
    pub(crate) version: String,
    pub(crate) description: String,
    pub(crate) provenance: String,
}

/// Check a manifest; `None` when it has problems (they are in `sink`).
pub(crate) fn check_manifest(sink: &mut Sink<'_>, raw: RawManifest) -> Option<Manifest> {
    if let Some(format) = &raw.format
        && format.value != FORMAT_VERSION
    {
        sink.report(&format.loc, format!("got {}, this reader knows format {FORMAT_VERSION} only", format.value));
    }
    if let Some(id) = &raw.id
        && !is_valid_id(&id.value)
    {
        sink.report(
            &id.loc,
            format!(
                "got {:?}, must be 1 to 64 characters of a-z, 0-9, '-', '_', '.', starting with a letter or digit",
                id.value
            ),
        );
    }
    if let Some(version) = &raw.version
        && parse_version(&version.value).is_none()
    {
        sink.report(
            &version.loc,
            format!("got {:?}, must be MAJOR.MINOR.PATCH of whole numbers without leading zeros, e.g. \"1.0.0\"", version.value),
        );
    }
    let description = non_empty(sink, raw.description);
    let provenance = non_empty(sink, raw.provenance);
    if let Some(files) = &raw.species_files {
        check_species_file_names(sink, files);
    }
    if sink.has_problems() {
        return None;
    }
    Some(Manifest {
        id: raw.id?.value,
        version: raw.version?.value,
        description: description?,
        provenance: provenance?,
    })
}

fn check_species_file_names(sink: &mut Sink<'_>, files: &Val<Vec<Val<String>>>) {
    if files.value.is_empty() {
        sink.report(&files.loc, "got an empty list, must name at least one species file (or leave the key out)");
    }
    let mut seen: BTreeMap<&str, usize> = BTreeMap::new();
    for name in &files.value {
        let n = name.value.as_str();
        let bare = !n.is_empty() && !n.contains(['/', '\\']) && !n.starts_with('.');
        if !bare || !n.ends_with(".toml") || n == super::MANIFEST_FILE {
            sink.report(
                &name.loc,
                format!(
                    "got {n:?}, must be a file name in the dataset folder ending in .toml, not a path and not {}",
                    super::MANIFEST_FILE
                ),
            );
        } else if let Some(first) = seen.insert(n, name.loc.line) {
            sink.report(&name.loc, format!("got {n:?} again, already listed on line {first}"));
        }
    }
}

/// True for a valid dataset id: 1-64 of `a-z 0-9 - _ .`, starting with a letter or digit.
pub fn is_valid_id(id: &str) -> bool {
    let mut chars = id.chars();
    let first_ok = chars.next().is_some_and(|c| c.is_ascii_lowercase() || c.is_ascii_digit());
    first_ok
        && id.len() <= 64
        && id.chars().all(|c| c.is_ascii_lowercase() || c.is_ascii_digit() || matches!(c, '-' | '_' | '.'))
}

/// Parse a `MAJOR.MINOR.PATCH` version (no leading zeros) into its three numbers.
pub fn parse_version(version: &str) -> Option<(u64, u64, u64)> {
    let parts: Vec<&str> = version.split('.').collect();
    let [a, b, c] = parts.as_slice() else {
        return None;
    };
    let num = |s: &str| -> Option<u64> {
        let ok = !s.is_empty() && s.chars().all(|c| c.is_ascii_digit()) && (s == "0" || !s.starts_with('0'));
        if ok { s.parse().ok() } else { None }
    };
    Some((num(a)?, num(b)?, num(c)?))
}

fn non_empty(sink: &mut Sink<'_>, value: Option<Val<String>>) -> Option<String> {
    let value = value?;
    if value.value.trim().is_empty() {
        sink.report(&value.loc, "got an empty string, must say something");
        return None;
    }
    Some(value.value)
}

/// Check one species file and build its species; `None` when the file has problems.
pub(crate) fn build_species(sink: &mut Sink<'_>, raw: RawSpecies) -> Option<Species> {
    let header = check_header(sink, &raw);
    let sources = check_sources(sink, &raw.sources);
    let species_source = resolve_source(sink, raw.source.as_ref(), &sources);
    let defaults = check_units(sink, &raw.units);

    let levels = build_levels(sink, &raw.header, &raw.levels, &sources, &defaults);
    let radiative = build_radiative(sink, &raw.radiative, &levels, &sources);
    let collisions = build_collisions(sink, &raw.collisions, &levels, &radiative, &sources, &defaults);

    if sink.has_problems() {
        return None;
    }
    let (name, element, nuclear_charge, ion_charge) = header?;
    let mut levels: Vec<Level> = levels.into_values().collect();
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

fn check_header(sink: &mut Sink<'_>, raw: &RawSpecies) -> Option<(String, String, u32, u32)> {
    let element = raw.element.as_ref().and_then(|e| {
        let s = e.value.as_str();
        let mut chars = s.chars();
        let ok = chars.next().is_some_and(|c| c.is_ascii_uppercase())
            && chars.all(|c| c.is_ascii_lowercase())
            && (1..=3).contains(&s.len());
        if !ok {
            sink.report(&e.loc, format!("got {s:?}, must be an element symbol: 1 to 3 letters, the first upper-case"));
        }
        ok.then(|| s.to_string())
    });
    let z = raw.nuclear_charge.as_ref().and_then(|z| {
        let ok = (1..=i64::from(MAX_NUCLEAR_CHARGE)).contains(&z.value);
        if !ok {
            sink.report(&z.loc, format!("got {}, must be between 1 and {MAX_NUCLEAR_CHARGE}", z.value));
        }
        ok.then_some(z.value as u32)
    });
    let charge = raw.ion_charge.as_ref().and_then(|c| {
        let max = z.map(|z| i64::from(z) - 1);
        let ok = c.value >= 0 && max.is_none_or(|m| c.value <= m);
        if !ok {
            let range = match max {
                Some(m) => format!("between 0 and {m} (nuclear_charge - 1)"),
                None => "0 or more".to_string(),
            };
            sink.report(&c.loc, format!("got {}, must be {range}", c.value));
        }
        ok.then(|| u32::try_from(c.value).ok()).flatten()
    });
    let name = raw.name.as_ref()?;
    let (Some(element), Some(z), Some(charge)) = (element, z, charge) else {
        return None;
    };
    let expected = format!("{element} {}", roman(charge + 1));
    if name.value != expected {
        sink.report(
            &name.loc,
            format!(
                "got {:?}, must be the element and spectroscopic charge in Roman numerals; \
                 element {element:?} with ion_charge {charge} gives {expected:?}",
                name.value
            ),
        );
        return None;
    }
    Some((expected, element, z, charge))
}

/// Roman numeral of `n` (n >= 1).
fn roman(mut n: u32) -> String {
    const TABLE: [(u32, &str); 13] = [
        (1000, "M"),
        (900, "CM"),
        (500, "D"),
        (400, "CD"),
        (100, "C"),
        (90, "XC"),
        (50, "L"),
        (40, "XL"),
        (10, "X"),
        (9, "IX"),
        (5, "V"),
        (4, "IV"),
        (1, "I"),
    ];
    let mut out = String::new();
    for (value, letters) in TABLE {
        while n >= value {
            out.push_str(letters);
            n -= value;
        }
    }
    out
}

fn check_sources(sink: &mut Sink<'_>, entries: &[(Val<String>, Val<String>)]) -> BTreeMap<String, String> {
    let mut out = BTreeMap::new();
    for (key, text) in entries {
        if text.value.trim().is_empty() {
            sink.report(&text.loc, "got an empty string, a source must say where the data come from");
        } else {
            out.insert(key.value.clone(), text.value.clone());
        }
    }
    out
}

/// Resolve a `source` value: `"@key"` looks up `[sources]`, anything else is the text itself.
fn resolve_source(sink: &mut Sink<'_>, value: Option<&Val<String>>, sources: &BTreeMap<String, String>) -> Option<String> {
    let value = value?;
    let text = value.value.trim();
    if text.is_empty() {
        sink.report(&value.loc, "got an empty string, every block must name where its data come from");
        return None;
    }
    match text.strip_prefix('@') {
        Some(key) => match sources.get(key) {
            Some(found) => Some(found.clone()),
            None => {
                let known: Vec<&str> = sources.keys().map(String::as_str).collect();
                sink.report(
                    &value.loc,
                    format!("got {:?}, no key {key:?} in [sources] (known: {})", value.value, known.join(", ")),
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
        sink.report(&unit.loc, format!("got {:?}, must be one of {ENERGY_UNITS}", unit.value));
    }
    parsed
}

fn temperature_unit(sink: &mut Sink<'_>, unit: &Val<String>) -> Option<TemperatureUnit> {
    let parsed = TemperatureUnit::parse(&unit.value);
    if parsed.is_none() {
        sink.report(&unit.loc, format!("got {:?}, must be one of {TEMPERATURE_UNITS}", unit.value));
    }
    parsed
}

/// A finite value in the allowed range, else a problem naming value, unit and range.
fn in_range(sink: &mut Sink<'_>, value: &Val<f64>, unit: &str, allow_zero: bool) -> Option<f64> {
    let v = value.value;
    let ok = v.is_finite() && (v > 0.0 || (allow_zero && v == 0.0));
    if !ok {
        let shown = if unit.is_empty() { format!("{v}") } else { format!("{v} {unit}") };
        let rule = if allow_zero { "finite and >= 0" } else { "finite and > 0" };
        sink.report(&value.loc, format!("got {shown}, must be {rule}"));
    }
    ok.then_some(v)
}

fn optional_in_range(sink: &mut Sink<'_>, value: Option<&Val<f64>>, allow_zero: bool) -> Option<f64> {
    value.and_then(|v| in_range(sink, v, "", allow_zero))
}

fn build_levels(
    sink: &mut Sink<'_>,
    header: &Loc,
    raw: &[RawLevel],
    sources: &BTreeMap<String, String>,
    defaults: &Defaults,
) -> BTreeMap<u32, Level> {
    let mut levels: BTreeMap<u32, Level> = BTreeMap::new();
    let mut lines: BTreeMap<u32, usize> = BTreeMap::new();
    if raw.is_empty() {
        sink.report(header, "the species has no [[level]] blocks; at least one level is needed");
    }
    for level in raw {
        let index = level.index.as_ref().and_then(|i| {
            let ok = i.value >= 1 && i.value <= i64::from(u32::MAX);
            if !ok {
                sink.report(&i.loc, format!("got {}, must be a whole number >= 1", i.value));
                return None;
            }
            let index = i.value as u32;
            if let Some(first) = lines.get(&index) {
                sink.report(&i.loc, format!("got {index} again, level {index} is already defined on line {first}"));
                return None;
            }
            lines.insert(index, i.loc.line);
            Some(index)
        });
        let label = level.label.as_ref().and_then(|l| {
            if l.value.trim().is_empty() {
                sink.report(&l.loc, "got an empty string, a level needs a label");
                None
            } else {
                Some(l.value.clone())
            }
        });
        let weight = level.weight.as_ref().and_then(|w| in_range(sink, w, "", false));
        let unit = match &level.energy_unit {
            Some(u) => energy_unit(sink, u),
            None => {
                if defaults.energy.is_none()
                    && let Some(e) = &level.energy
                {
                    let loc = Loc { line: e.loc.line, field: format!("{}.energy_unit", level.loc.field) };
                    sink.report(
                        &loc,
                        format!("no energy unit: give `energy_unit` here or `energy` in [units] (one of {ENERGY_UNITS})"),
                    );
                }
                defaults.energy
            }
        };
        let energy = level.energy.as_ref().and_then(|e| {
            let unit = unit?;
            let cm1 = unit.to_cm1(in_range(sink, e, unit.as_str(), true)?);
            if !cm1.is_finite() {
                sink.report(&e.loc, format!("got {} {}, too large to express in cm-1", e.value, unit.as_str()));
                return None;
            }
            Some(cm1)
        });
        let source = resolve_source(sink, level.source.as_ref(), sources);
        if let (Some(index), Some(label), Some(weight), Some(energy_cm1), Some(source)) =
            (index, label, weight, energy, source)
        {
            let energy_cm1 = if energy_cm1 == 0.0 { 0.0 } else { energy_cm1 };
            levels.insert(
                index,
                Level { index, label, weight, energy_cm1, energy_k: units::cm1_to_k(energy_cm1), source },
            );
        }
    }
    // Indices must run 1..=N without gaps so that level i sits at position i - 1.
    let count = lines.len() as u32;
    let missing: Vec<String> = (1..=count).filter(|i| !lines.contains_key(i)).map(|i| i.to_string()).collect();
    if !missing.is_empty()
        && let Some((&largest, &line)) = lines.iter().next_back()
    {
        sink.report_line(
            Some(line),
            "level.index",
            format!(
                "got indices up to {largest} for {count} levels, indices must run 1..={count} without gaps; missing: {}",
                missing.join(", ")
            ),
        );
    }
    levels
}

/// Check an (upper, lower) pair against the levels; `None` after reporting when it is bad.
fn check_pair(
    sink: &mut Sink<'_>,
    block: &Loc,
    upper: Option<&Val<i64>>,
    lower: Option<&Val<i64>>,
    levels: &BTreeMap<u32, Level>,
) -> Option<(u32, u32)> {
    let known = |v: &Val<i64>, sink: &mut Sink<'_>| -> Option<u32> {
        let index = u32::try_from(v.value).ok().filter(|i| levels.contains_key(i));
        if index.is_none() && !levels.is_empty() {
            let max = levels.keys().next_back().copied().unwrap_or(0);
            sink.report(&v.loc, format!("got {}, no level with this index (levels are 1..={max})", v.value));
        }
        index
    };
    let (upper, lower) = (upper?, lower?);
    let (u, l) = (known(upper, sink), known(lower, sink));
    let (u, l) = (u?, l?);
    if u == l {
        sink.report(&block.clone(), format!("got upper = lower = {u}, a transition joins two different levels"));
        return None;
    }
    let (eu, el) = (levels[&u].energy_cm1, levels[&l].energy_cm1);
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

fn build_radiative(
    sink: &mut Sink<'_>,
    raw: &[RawRadiative],
    levels: &BTreeMap<u32, Level>,
    sources: &BTreeMap<String, String>,
) -> BTreeMap<(u32, u32), RadiativeTransition> {
    let mut out = BTreeMap::new();
    let mut lines: BTreeMap<(u32, u32), usize> = BTreeMap::new();
    for line in raw {
        let pair = check_pair(sink, &line.loc, line.upper.as_ref(), line.lower.as_ref(), levels);
        let pair = pair.and_then(|p| {
            if let Some(first) = lines.get(&p) {
                sink.report(
                    &line.loc,
                    format!("got transition {} -> {} again, already given on line {first}", p.0, p.1),
                );
                return None;
            }
            lines.insert(p, line.loc.line);
            Some(p)
        });
        let a = line.a_per_s.as_ref().and_then(|a| in_range(sink, a, "s^-1", false));
        let f_ok = line.oscillator_strength.as_ref().map(|f| in_range(sink, f, "", false));
        let u_ok = line.relative_uncertainty.as_ref().map(|u| in_range(sink, u, "", true));
        let source = resolve_source(sink, line.source.as_ref(), sources);
        if let (Some((upper, lower)), Some(a_per_s), Some(source)) = (pair, a, source)
            && f_ok.is_none_or(|f| f.is_some())
            && u_ok.is_none_or(|u| u.is_some())
        {
            out.insert(
                (upper, lower),
                RadiativeTransition {
                    upper,
                    lower,
                    a_per_s,
                    oscillator_strength: f_ok.flatten(),
                    source,
                    relative_uncertainty: u_ok.flatten(),
                },
            );
        }
    }
    out
}

fn build_collisions(
    sink: &mut Sink<'_>,
    raw: &[RawCollision],
    levels: &BTreeMap<u32, Level>,
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
                sink.report(&c.loc, format!("got collision {} - {} again, already given on line {first}", p.0, p.1));
                return None;
            }
            lines.insert(p, c.loc.line);
            Some(p)
        });
        let kind = c.kind.as_ref().and_then(|k| {
            let parsed = TransitionType::parse(&k.value);
            if parsed.is_none() {
                sink.report(&k.loc, format!("got {:?}, must be one of {TRANSITION_TYPES}", k.value));
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
            out.push(CollisionalTransition { upper, lower, kind, data, source, relative_uncertainty: uncertainty });
        }
    }
    out
}

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
        ("oscillator_strength", c.oscillator_strength.as_ref().map(|v| &v.loc)),
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
    levels: &BTreeMap<u32, Level>,
    radiative: &BTreeMap<(u32, u32), RadiativeTransition>,
    defaults: &Defaults,
) -> Option<CollisionData> {
    let forms: Vec<&str> = [(c.has_upsilon, "upsilon"), (c.has_omega, "omega"), (c.has_estimate, "estimate")]
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
            sink.report(&c.loc, format!("got {}, give only one of `upsilon`, `omega`, `estimate`", many.join(" and ")));
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
            sink.report(loc, format!("`{key}` does not belong to collision data given by `{form}`"));
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
                format!("got {next} {unit}, not above {} = {prev} {unit}; values must be strictly increasing", prev_loc.field),
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
                sink.report(&t.loc, format!("got {v} {}, too large to express in K", unit.as_str()));
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
    (ok && lengths_ok).then_some(CollisionData::EffectiveTable { temperatures_k, upsilon: values })
}

fn strength_table(
    sink: &mut Sink<'_>,
    c: &RawCollision,
    pair: Option<(u32, u32)>,
    levels: &BTreeMap<u32, Level>,
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
                sink.report(&k.loc, format!("got {other:?}, must be \"incident\" or \"scattered\" (which electron's energy)"));
                None
            }
        },
        None => {
            sink.report(&energies.loc, "missing: an `omega` table needs `energy_kind`, \"incident\" or \"scattered\"");
            None
        }
    };
    let omega = c.omega.as_ref()?;
    let lengths_ok = check_lengths(sink, energies, omega);
    let (unit, incident) = (unit?, incident?);
    let threshold_ry = match (incident, pair) {
        (false, _) => 0.0,
        (true, Some((u, l))) => units::cm1_to_ry(levels[&u].energy_cm1 - levels[&l].energy_cm1),
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
        let ef = if incident { unit.to_ry(v) - threshold_ry } else { unit.to_ry(v) };
        if !ef.is_finite() {
            sink.report(&e.loc, format!("got {v} {}, too large to express in Ry", unit.as_str()));
            ok = false;
            continue;
        }
        if ef < 0.0 {
            sink.report(
                &e.loc,
                format!(
                    "got incident energy {v} {} = {} Ry, below the excitation threshold {threshold_ry} Ry; \
                     incident energies must be >= the transition energy",
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
    (ok && lengths_ok).then_some(CollisionData::StrengthTable { scattered_energies_ry: scattered, omega: values })
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
                sink.report(&strength.loc, "`strength` belongs to \"coulomb-focusing\", not to \"van-regemorter\"");
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
                sink.report(&f.loc, "`oscillator_strength` belongs to \"van-regemorter\", not to \"coulomb-focusing\"");
                return None;
            }
            let strength = match &c.strength {
                Some(s) => in_range(sink, s, "", false)?,
                None => 1.0,
            };
            Some(CollisionData::Estimate(EstimateMethod::CoulombFocusing { strength }))
        }
        other => {
            sink.report(&method.loc, format!("got {other:?}, must be \"van-regemorter\" or \"coulomb-focusing\""));
            None
        }
    }
}
