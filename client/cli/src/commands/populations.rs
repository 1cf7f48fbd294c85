//! `populations`: level populations, radiated power, strongest lines and critical densities,
//! in chunks with a progress bar for long grid work.

use crate::args::PopulationArgs;
use crate::context::Context;
use crate::error::CliError;
use crate::output::{
    Table, caution_lines, flag_legend, flag_letters, flag_names, json_text, sci, sig, stamp_json, stamp_line,
};
use indicatif::{ProgressBar, ProgressStyle};
use ratewell_client::{OutsidePolicy, PopulationQuery, Transition, pb};
use serde_json::json;

/// `populations`.
pub(crate) async fn run(ctx: &Context, a: &PopulationArgs) -> Result<String, CliError> {
    let mut q = if a.grid {
        PopulationQuery::grid(a.species.clone(), a.temperatures.clone(), a.densities.clone())
    } else {
        PopulationQuery::points(a.species.clone(), a.temperatures.clone(), a.densities.clone())
    };
    q.temperature_unit = a.unit;
    q.density_unit = a.density_unit;
    q.power_unit = a.power_unit;
    q.outside = if a.extrapolate {
        OutsidePolicy::Extrapolate
    } else {
        OutsidePolicy::Refuse
    };
    q.validate()
        .map_err(|e| CliError::argument("--temperatures/--densities", e))?;
    let client = ctx.dataset_client().await?;
    let per_call = a.chunk as usize;
    let calls = q.temperatures.len().div_ceil(per_call);
    let bar = (calls > 1).then(|| progress_bar(q.point_count() as u64));
    let answer = client
        .solve_populations_chunked(&q, per_call, |done, _| {
            if let Some(b) = &bar {
                b.set_position(done as u64);
            }
        })
        .await;
    if let Some(b) = &bar {
        b.finish_and_clear();
    }
    let answer = answer?;
    Ok(if ctx.json {
        as_json(&answer)
    } else {
        as_text(&answer, a.lines)
    })
}

fn progress_bar(total: u64) -> ProgressBar {
    // Draws on standard error, and only when it is a terminal.
    let bar = ProgressBar::new(total);
    if let Ok(style) =
        ProgressStyle::with_template("{bar:40} {pos}/{len} points  {elapsed_precise} (eta {eta})")
    {
        bar.set_style(style);
    }
    bar
}

fn power_symbol(v: i32) -> &'static str {
    if v == pb::PowerUnit::ErgPerSecond as i32 {
        "erg/s"
    } else {
        "W"
    }
}

/// Populations table, then the strongest lines, then critical densities per temperature.
pub(crate) fn as_text(r: &pb::SolvePopulationsResponse, lines: usize) -> String {
    let mut out = stamp_line(&r.stamp.clone().unwrap_or_default());
    let levels = r.level_count as usize;
    let p = power_symbol(r.power_unit);
    out.push_str(&format!(
        "species {}: fraction of ions in each level, radiated power per ion ({p})\n",
        r.species
    ));
    let level_headers: Vec<String> = (1..=levels).map(|i| format!("N{i}")).collect();
    let power_header = format!("POWER_{p}");
    let mut headers = vec!["T_K", "NE_CM-3"];
    headers.extend(level_headers.iter().map(String::as_str));
    headers.extend([power_header.as_str(), "RESIDUAL", "FLAGS"]);
    let mut t = Table::new(&headers);
    let mut any = 0;
    for pt in &r.points {
        any |= pt.flags;
        let mut row = vec![sig(pt.temperature_k, 6), sig(pt.density_per_cm3, 6)];
        row.extend(pt.fractions.iter().map(|&f| sci(f)));
        row.extend([sci(pt.radiated_power), sci(pt.residual), flag_letters(pt.flags)]);
        t.row(row);
    }
    out.push_str(&t.render());
    if lines > 0 && r.points.iter().any(|pt| !pt.lines.is_empty()) {
        out.push_str(&format!("\nstrongest lines (emissivity per ion, {p})\n"));
        let mut t = Table::new(&["T_K", "NE_CM-3", "LINE", "VAC_WAVELENGTH_ANGSTROM", "EMISSIVITY"]);
        for pt in &r.points {
            let mut sorted: Vec<&pb::LineEmission> = pt.lines.iter().collect();
            sorted.sort_by(|a, b| b.emissivity.total_cmp(&a.emissivity));
            for line in sorted.into_iter().take(lines) {
                t.row(vec![
                    sig(pt.temperature_k, 6),
                    sig(pt.density_per_cm3, 6),
                    Transition::from(line.key.unwrap_or_default()).to_string(),
                    sig(line.wavelength_vacuum_angstrom, 7),
                    sci(line.emissivity),
                ]);
            }
        }
        out.push_str(&t.render());
    }
    if levels > 1 && r.critical_densities_per_cm3.len() == r.points.len() * levels {
        out.push_str("\ncritical densities, cm^-3\n");
        if !r.critical_density_definition.is_empty() {
            out.push_str(&format!("definition: {}\n", r.critical_density_definition));
        }
        let headers: Vec<String> = std::iter::once("T_K".to_string())
            .chain((2..=levels).map(|i| format!("LEVEL_{i}")))
            .collect();
        let refs: Vec<&str> = headers.iter().map(String::as_str).collect();
        let mut t = Table::new(&refs);
        let mut seen: Vec<u64> = Vec::new();
        for (i, pt) in r.points.iter().enumerate() {
            if seen.contains(&pt.temperature_k.to_bits()) {
                continue;
            }
            seen.push(pt.temperature_k.to_bits());
            let nc = &r.critical_densities_per_cm3[i * levels..(i + 1) * levels];
            let mut row = vec![sig(pt.temperature_k, 6)];
            // Infinity: no collisional de-excitation (collisions never compete).
            row.extend(
                nc[1..]
                    .iter()
                    .map(|&v| if v.is_finite() { sci(v) } else { "-".into() }),
            );
            t.row(row);
        }
        out.push_str(&t.render());
    }
    if let Some(legend) = flag_legend(any) {
        out.push_str(&legend);
    }
    out.push_str(&caution_lines(&r.cautions));
    out
}

/// JSON with every point, line and critical density.
pub(crate) fn as_json(r: &pb::SolvePopulationsResponse) -> String {
    let levels = r.level_count as usize;
    let points: Vec<_> = r
        .points
        .iter()
        .enumerate()
        .map(|(i, pt)| {
            let lines: Vec<_> = pt
                .lines
                .iter()
                .map(|l| {
                    let k = l.key.unwrap_or_default();
                    json!({
                        "upper": k.upper, "lower": k.lower,
                        "wavelength_vacuum_angstrom": l.wavelength_vacuum_angstrom,
                        "emissivity": l.emissivity,
                    })
                })
                .collect();
            json!({
                "temperature_k": pt.temperature_k,
                "density_per_cm3": pt.density_per_cm3,
                "fractions": pt.fractions,
                "radiated_power": pt.radiated_power,
                "residual": pt.residual,
                "flags": pt.flags,
                "flag_names": flag_names(pt.flags),
                "lines": lines,
                "critical_densities_per_cm3": r.critical_densities_per_cm3.get(i * levels..(i + 1) * levels),
            })
        })
        .collect();
    json_text(&json!({
        "stamp": stamp_json(&r.stamp.clone().unwrap_or_default()),
        "species": r.species,
        "power_unit": power_symbol(r.power_unit),
        "level_count": r.level_count,
        "critical_density_definition": r.critical_density_definition,
        "points": points,
        "cautions": r.cautions,
    }))
}

#[cfg(test)]
mod tests {
    use super::*;

    fn answer() -> pb::SolvePopulationsResponse {
        let pt = |t: f64, n: f64, flags| pb::PopulationPoint {
            temperature_k: t,
            density_per_cm3: n,
            fractions: vec![0.9, 0.1],
            lines: vec![
                pb::LineEmission {
                    key: Some(pb::TransitionKey { upper: 2, lower: 1 }),
                    wavelength_vacuum_angstrom: 5000.0,
                    emissivity: 1e-20,
                },
                pb::LineEmission {
                    key: Some(pb::TransitionKey { upper: 3, lower: 1 }),
                    wavelength_vacuum_angstrom: 4000.0,
                    emissivity: 3e-20,
                },
            ],
            radiated_power: 4e-20,
            residual: 1e-15,
            flags,
        };
        pb::SolvePopulationsResponse {
            stamp: Some(pb::DatasetStamp {
                id: "demo".into(),
                version: "1.0.0".into(),
                content_hash: "e".repeat(64),
                ..Default::default()
            }),
            species: "X".into(),
            power_unit: 1,
            points: vec![pt(1e4, 1e2, 0), pt(1e4, 1e4, 1)],
            critical_densities_per_cm3: vec![0.0, 5e3, 0.0, 5e3],
            critical_density_definition: "downward rates only".into(),
            critical_densities_all_exits_per_cm3: vec![0.0, 4e3, 0.0, 4e3],
            level_count: 2,
            cautions: vec!["approximate data used".into()],
        }
    }

    #[test]
    fn text_has_fractions_strongest_lines_first_and_critical_densities_once() {
        let text = as_text(&answer(), 1);
        assert!(
            text.starts_with("dataset demo version 1.0.0  content hash eeee"),
            "{text}"
        );
        assert!(text.contains("N1"), "{text}");
        let lines_part = text.split("strongest lines").nth(1).unwrap();
        assert!(lines_part.contains("3-1") && !lines_part.split("critical").next().unwrap().contains("2-1"));
        let crit = text.split("critical densities, cm^-3\n").nth(1).unwrap();
        assert!(crit.starts_with("definition: downward rates only\n"), "{text}");
        assert_eq!(
            crit.lines().filter(|l| l.starts_with("10000")).count(),
            1,
            "{text}"
        );
        assert!(text.contains("flags: A approximate"), "{text}");
        assert!(text.contains("caution: approximate data used"), "{text}");
    }

    #[test]
    fn json_keeps_every_point() {
        let v: serde_json::Value = serde_json::from_str(&as_json(&answer())).unwrap();
        assert_eq!(v["points"].as_array().unwrap().len(), 2);
        assert_eq!(v["points"][1]["critical_densities_per_cm3"][1], 5e3);
        assert_eq!(v["points"][1]["flag_names"][0], "approximate");
        assert_eq!(v["stamp"]["id"], "demo");
    }
}
