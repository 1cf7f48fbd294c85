//! The species header, the `[sources]` table, the levels and the radiative transitions.

use std::collections::BTreeMap;

use super::{Defaults, Levels, MAX_NUCLEAR_CHARGE, check_pair, energy_unit, in_range, resolve_source};
use crate::dataset::format::{RawLevel, RawRadiative, RawSpecies};
use crate::dataset::model::{Level, RadiativeTransition};
use crate::dataset::reader::{Loc, Sink, Val};
use crate::dataset::units::{self, ENERGY_UNITS};

pub(super) fn check_header(sink: &mut Sink<'_>, raw: &RawSpecies) -> Option<(String, String, u32, u32)> {
    let element = raw.element.as_ref().and_then(|e| {
        let s = e.value.as_str();
        let mut chars = s.chars();
        let ok = chars.next().is_some_and(|c| c.is_ascii_uppercase())
            && chars.all(|c| c.is_ascii_lowercase())
            && (1..=3).contains(&s.len());
        if !ok {
            sink.report(
                &e.loc,
                format!("got {s:?}, must be an element symbol: 1 to 3 letters, the first upper-case"),
            );
        }
        ok.then(|| s.to_string())
    });
    let z = raw.nuclear_charge.as_ref().and_then(|z| {
        let ok = (1..=i64::from(MAX_NUCLEAR_CHARGE)).contains(&z.value);
        if !ok {
            sink.report(
                &z.loc,
                format!("got {}, must be between 1 and {MAX_NUCLEAR_CHARGE}", z.value),
            );
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

pub(super) fn check_sources(
    sink: &mut Sink<'_>,
    entries: &[(Val<String>, Val<String>)],
) -> BTreeMap<String, String> {
    let mut out = BTreeMap::new();
    for (key, text) in entries {
        if text.value.trim().is_empty() {
            sink.report(
                &text.loc,
                "got an empty string, a source must say where the data come from",
            );
        } else {
            out.insert(key.value.clone(), text.value.clone());
        }
    }
    out
}

pub(super) fn build_levels(
    sink: &mut Sink<'_>,
    header: &Loc,
    raw: &[RawLevel],
    sources: &BTreeMap<String, String>,
    defaults: &Defaults,
) -> Levels {
    let mut levels: BTreeMap<u32, Level> = BTreeMap::new();
    let mut lines: BTreeMap<u32, usize> = BTreeMap::new();
    if raw.is_empty() {
        sink.report(
            header,
            "the species has no [[level]] blocks; at least one level is needed",
        );
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
                sink.report(
                    &i.loc,
                    format!("got {index} again, level {index} is already defined on line {first}"),
                );
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
                    let loc = Loc {
                        line: e.loc.line,
                        field: format!("{}.energy_unit", level.loc.field),
                    };
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
                sink.report(
                    &e.loc,
                    format!("got {} {}, too large to express in cm-1", e.value, unit.as_str()),
                );
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
                Level {
                    index,
                    label,
                    weight,
                    energy_cm1,
                    energy_k: units::cm1_to_k(energy_cm1),
                    source,
                },
            );
        }
    }
    // Indices must run 1..=N without gaps so that level i sits at position i - 1.
    let count = lines.len() as u32;
    let missing: Vec<String> = (1..=count)
        .filter(|i| !lines.contains_key(i))
        .map(|i| i.to_string())
        .collect();
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
    Levels {
        built: levels,
        defined: lines.into_keys().collect(),
    }
}

pub(super) fn build_radiative(
    sink: &mut Sink<'_>,
    raw: &[RawRadiative],
    levels: &Levels,
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
                    format!(
                        "got transition {} -> {} again, already given on line {first}",
                        p.0, p.1
                    ),
                );
                return None;
            }
            lines.insert(p, line.loc.line);
            Some(p)
        });
        let a = line
            .a_per_s
            .as_ref()
            .and_then(|a| in_range(sink, a, "s^-1", false));
        let f_ok = line
            .oscillator_strength
            .as_ref()
            .map(|f| in_range(sink, f, "", false));
        let u_ok = line
            .relative_uncertainty
            .as_ref()
            .map(|u| in_range(sink, u, "", true));
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

#[cfg(test)]
mod tests {
    use super::roman;

    #[test]
    fn roman_numerals() {
        // common practice, no source: subtractive Roman numerals as used in spectroscopic names
        let cases = [
            (1, "I"),
            (2, "II"),
            (4, "IV"),
            (9, "IX"),
            (14, "XIV"),
            (26, "XXVI"),
            (40, "XL"),
            (99, "XCIX"),
        ];
        for (n, text) in cases {
            assert_eq!(roman(n), text);
        }
    }
}
