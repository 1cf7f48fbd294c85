//! `datasets` and `species`: what the server holds.

use crate::args::SpeciesArgs;
use crate::context::Context;
use crate::error::CliError;
use crate::output::{Table, given, json_text, sig, stamp_json, stamp_line};
use ratewell_client::{Transition, pb, short_hash};
use serde_json::json;

/// `datasets`.
pub(crate) async fn datasets(ctx: &Context) -> Result<String, CliError> {
    let sets = ctx.client.list_datasets().await?;
    Ok(if ctx.json {
        datasets_json(&sets)
    } else {
        datasets_text(&sets)
    })
}

pub(crate) fn datasets_text(sets: &[pb::DatasetSummary]) -> String {
    if sets.is_empty() {
        return "the server holds no dataset\n".into();
    }
    let mut t = Table::new(&["ID", "VERSION", "HASH", "SPECIES", "DESCRIPTION"]);
    for s in sets {
        let stamp = s.stamp.clone().unwrap_or_default();
        t.row(vec![
            stamp.id,
            stamp.version,
            short_hash(&stamp.content_hash).to_string(),
            s.species.join(","),
            s.description.clone(),
        ]);
    }
    t.render()
}

pub(crate) fn datasets_json(sets: &[pb::DatasetSummary]) -> String {
    let list: Vec<_> = sets
        .iter()
        .map(|s| {
            json!({
                "stamp": stamp_json(&s.stamp.clone().unwrap_or_default()),
                "description": s.description,
                "provenance": s.provenance,
                "species": s.species,
                "default_grid": s.default_grid.map(|g| json!({
                    "t_min_k": g.t_min_k, "t_max_k": g.t_max_k,
                    "points_per_decade": g.points_per_decade,
                })),
                "loaded_at_unix_s": s.loaded_at_unix_s,
            })
        })
        .collect();
    json_text(&json!({ "datasets": list }))
}

/// `species`.
pub(crate) async fn species(ctx: &Context, a: &SpeciesArgs) -> Result<String, CliError> {
    let client = ctx.dataset_client().await?;
    let d = client.describe_species(&a.species, a.energy_unit).await?;
    Ok(if ctx.json {
        species_json(&d)
    } else {
        species_text(&d)
    })
}

fn energy_symbol(l: &pb::LevelInfo) -> &'static str {
    ratewell_client::units::energy_unit_symbol(l.energy_unit)
}

fn source_name(v: i32) -> &'static str {
    match pb::CollisionSource::try_from(v) {
        Ok(pb::CollisionSource::EffectiveTable) => "effective-table",
        Ok(pb::CollisionSource::StrengthTable) => "strength-table",
        Ok(pb::CollisionSource::Approximation) => "approximation",
        Ok(pb::CollisionSource::Unspecified) | Err(_) => "-",
    }
}

pub(crate) fn species_text(d: &pb::DescribeSpeciesResponse) -> String {
    let mut out = stamp_line(&d.stamp.clone().unwrap_or_default());
    out.push_str(&format!(
        "species {}  element {}  Z = {}  ion charge {}\n\nlevels\n",
        d.species, d.element, d.nuclear_charge, d.ion_charge
    ));
    let unit = d.levels.first().map(energy_symbol).unwrap_or("cm-1");
    let energy_header = format!("ENERGY_{unit}");
    let mut t = Table::new(&["INDEX", "LABEL", "WEIGHT", &energy_header]);
    for l in &d.levels {
        t.row(vec![
            l.index.to_string(),
            l.label.clone(),
            sig(l.statistical_weight, 6),
            sig(l.energy, 7),
        ]);
    }
    out.push_str(&t.render());
    out.push_str("\ntransitions\n");
    let mut t = Table::new(&[
        "TRANSITION",
        "EINSTEIN_A_PER_S",
        "F_ABS",
        "VAC_WAVELENGTH_ANGSTROM",
        "COLLISIONS",
        "SCALING",
        "SOURCE_T_K",
        "UNCERTAINTY",
        "SOURCE",
    ]);
    let mut approximate = 0;
    for tr in &d.transitions {
        let key = Transition::from(tr.key.unwrap_or_default());
        let collisions = if tr.has_collision_data {
            source_name(tr.collision_source)
        } else {
            "none"
        };
        if tr.collision_source == pb::CollisionSource::Approximation as i32 {
            approximate += 1;
        }
        let range = if tr.source_t_max_k > 0.0 {
            format!("{}..{}", sig(tr.source_t_min_k, 4), sig(tr.source_t_max_k, 4))
        } else {
            "-".into()
        };
        t.row(vec![
            key.to_string(),
            given(tr.a_per_s, |v| sig(v, 4)),
            given(tr.oscillator_strength, |v| sig(v, 4)),
            given(tr.wavelength_vacuum_angstrom, |v| sig(v, 7)),
            collisions.to_string(),
            if tr.scaling_type.is_empty() {
                "-".into()
            } else {
                tr.scaling_type.clone()
            },
            range,
            given(tr.uncertainty, |v| format!("{}%", sig(100.0 * v, 3))),
            if tr.source.is_empty() {
                "-".into()
            } else {
                tr.source.clone()
            },
        ]);
    }
    out.push_str(&t.render());
    if approximate > 0 {
        out.push_str(&format!(
            "caution: {approximate} transition(s) use an approximation formula, not computed or measured data\n"
        ));
    }
    out
}

pub(crate) fn species_json(d: &pb::DescribeSpeciesResponse) -> String {
    let levels: Vec<_> = d
        .levels
        .iter()
        .map(|l| {
            json!({
                "index": l.index, "label": l.label, "statistical_weight": l.statistical_weight,
                "energy": l.energy, "energy_unit": energy_symbol(l),
            })
        })
        .collect();
    let transitions: Vec<_> = d
        .transitions
        .iter()
        .map(|t| {
            let k = t.key.unwrap_or_default();
            json!({
                "upper": k.upper, "lower": k.lower, "a_per_s": t.a_per_s,
                "oscillator_strength": t.oscillator_strength,
                "wavelength_vacuum_angstrom": t.wavelength_vacuum_angstrom,
                "has_collision_data": t.has_collision_data,
                "collision_source": source_name(t.collision_source),
                "scaling_type": t.scaling_type,
                "source_t_min_k": t.source_t_min_k, "source_t_max_k": t.source_t_max_k,
                "source": t.source, "uncertainty": t.uncertainty,
            })
        })
        .collect();
    json_text(&json!({
        "stamp": stamp_json(&d.stamp.clone().unwrap_or_default()),
        "species": d.species, "element": d.element,
        "nuclear_charge": d.nuclear_charge, "ion_charge": d.ion_charge,
        "levels": levels, "transitions": transitions,
    }))
}

#[cfg(test)]
mod tests {
    use super::*;

    fn stamp() -> pb::DatasetStamp {
        pb::DatasetStamp {
            id: "demo".into(),
            version: "1.0.0".into(),
            content_hash: "c".repeat(64),
            ..Default::default()
        }
    }

    #[test]
    fn dataset_rows_show_id_version_short_hash_and_species() {
        let s = pb::DatasetSummary {
            stamp: Some(stamp()),
            description: "invented".into(),
            species: vec!["X".into(), "Y".into()],
            ..Default::default()
        };
        let text = datasets_text(std::slice::from_ref(&s));
        let row = text.lines().nth(1).unwrap();
        assert_eq!(
            row,
            format!("demo  1.0.0    {}  X,Y      invented", "c".repeat(12))
        );
        let v: serde_json::Value = serde_json::from_str(&datasets_json(&[s])).unwrap();
        assert_eq!(v["datasets"][0]["stamp"]["content_hash"], "c".repeat(64));
    }

    #[test]
    fn species_output_names_the_dataset_and_warns_of_approximations() {
        let d = pb::DescribeSpeciesResponse {
            stamp: Some(stamp()),
            species: "X".into(),
            levels: vec![pb::LevelInfo {
                index: 1,
                label: "ground".into(),
                statistical_weight: 2.0,
                energy: 0.0,
                energy_unit: 2,
            }],
            transitions: vec![pb::TransitionInfo {
                key: Some(pb::TransitionKey { upper: 2, lower: 1 }),
                has_collision_data: true,
                collision_source: pb::CollisionSource::Approximation as i32,
                ..Default::default()
            }],
            ..Default::default()
        };
        let text = species_text(&d);
        assert!(
            text.starts_with("dataset demo version 1.0.0  content hash cccc"),
            "{text}"
        );
        assert!(text.contains("ENERGY_eV"), "{text}");
        // No radiative data: the A value, f and uncertainty are absent, not 0.
        let row = text.lines().find(|l| l.starts_with("2-1")).expect("the 2-1 row");
        assert!(!row.contains(" 0 ") && row.contains(" - "), "{row}");
        assert!(
            text.contains("EINSTEIN_A_PER_S") && text.contains("VAC_WAVELENGTH_ANGSTROM"),
            "{text}"
        );
        assert!(text.contains("approximation"), "{text}");
        assert!(
            text.contains("caution: 1 transition(s) use an approximation formula"),
            "{text}"
        );
        let v: serde_json::Value = serde_json::from_str(&species_json(&d)).unwrap();
        assert_eq!(v["transitions"][0]["collision_source"], "approximation");
    }
}
