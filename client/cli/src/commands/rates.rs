//! `rates`: rate coefficients at given temperatures, from the server or evaluated locally.

use crate::args::RatesArgs;
use crate::context::Context;
use crate::error::CliError;
use crate::output::{
    Table, caution_lines, flag_legend, flag_letters, flag_names, json_text, sci, sig, stamp_json, stamp_line,
};
use ratewell_client::units::check_temperatures;
use ratewell_client::{EvalOptions, OutsidePolicy, RateLookup, RateQuery, TemperatureUnit};
use serde_json::json;

/// Where the values were computed.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum Source {
    /// Looked up on the server.
    Server,
    /// Evaluated in this process from fetched tables.
    Local,
}

impl Source {
    fn describe(self) -> &'static str {
        match self {
            Source::Server => "looked up on the server",
            Source::Local => "evaluated locally from fetched tables (same rule as the server)",
        }
    }
}

/// `rates`.
pub(crate) async fn run(ctx: &Context, a: &RatesArgs) -> Result<String, CliError> {
    check_temperatures(&a.temperatures, a.unit).map_err(|e| CliError::argument("--temperatures", e))?;
    let options = EvalOptions {
        temperature_unit: a.unit,
        rate_unit: a.rate_unit,
        direction: a.direction.into(),
        outside: if a.extrapolate {
            OutsidePolicy::Extrapolate
        } else {
            OutsidePolicy::Refuse
        },
        // A command-line run owns its process: large local evaluations may use every core.
        parallel: true,
    };
    let query = RateQuery::new(a.species.clone(), a.temperatures.clone())
        .with_transitions(a.transitions.clone())
        .with_options(options);
    let client = ctx.dataset_client().await?;
    let (lookup, source) = if a.local {
        let tables = client.fetch_tables(&a.species, None).await?;
        (tables.evaluate(&query)?, Source::Local)
    } else {
        (client.lookup_rates(&query).await?, Source::Server)
    };
    Ok(if ctx.json {
        as_json(&lookup, &a.temperatures, a.unit, source)
    } else {
        as_text(&lookup, &a.temperatures, a.unit, source)
    })
}

/// Aligned table: one row per transition and temperature.
pub(crate) fn as_text(l: &RateLookup, temperatures: &[f64], unit: TemperatureUnit, source: Source) -> String {
    let mut out = stamp_line(&l.stamp);
    out.push_str(&format!("species {}: {}\n", l.species, source.describe()));
    let r = l.rate_unit.symbol();
    let t_header = format!("T_{unit}");
    let exc_header = format!("Q_LU_{r}");
    let de_header = format!("Q_UL_{r}");
    let mut headers = vec!["TRANSITION", t_header.as_str()];
    let (has_exc, has_de) = (!l.excitation.is_empty(), !l.deexcitation.is_empty());
    if has_exc {
        headers.push(&exc_header);
    }
    if has_de {
        headers.push(&de_header);
    }
    headers.push("FLAGS");
    let mut t = Table::new(&headers);
    for (ti, tr) in l.transitions.iter().enumerate() {
        for (j, temp) in temperatures.iter().enumerate().take(l.temperature_count) {
            let k = l.index(ti, j);
            let mut row = vec![tr.to_string(), sig(*temp, 6)];
            if has_exc {
                row.push(sci(l.excitation[k]));
            }
            if has_de {
                row.push(sci(l.deexcitation[k]));
            }
            row.push(flag_letters(l.flags[k]));
            t.row(row);
        }
    }
    out.push_str(&t.render());
    if let Some(legend) = flag_legend(l.all_flags()) {
        out.push_str(&legend);
    }
    let derived = l.flag_cautions();
    out.push_str(&caution_lines(l.cautions.iter().chain(derived.iter())));
    out
}

/// JSON document with one entry per transition.
pub(crate) fn as_json(l: &RateLookup, temperatures: &[f64], unit: TemperatureUnit, source: Source) -> String {
    let n = l.temperature_count;
    let rows: Vec<_> = l
        .transitions
        .iter()
        .enumerate()
        .map(|(ti, tr)| {
            let span = ti * n..(ti + 1) * n;
            json!({
                "transition": tr.to_string(),
                "upper": tr.upper,
                "lower": tr.lower,
                "excitation": l.excitation.get(span.clone()),
                "deexcitation": l.deexcitation.get(span.clone()),
                "flags": l.flags[span.clone()],
                "flag_names": l.flags[span].iter().map(|&f| flag_names(f)).collect::<Vec<_>>(),
            })
        })
        .collect();
    let mut cautions = l.cautions.clone();
    cautions.extend(l.flag_cautions());
    json_text(&json!({
        "stamp": stamp_json(&l.stamp),
        "species": l.species,
        "source": match source { Source::Server => "server", Source::Local => "local" },
        "temperature_unit": unit.symbol(),
        "temperatures": temperatures,
        "rate_unit": l.rate_unit.symbol(),
        "transitions": rows,
        "cautions": cautions,
    }))
}

#[cfg(test)]
mod tests {
    use super::*;
    use ratewell_client::{RateUnit, Transition, flags, pb};

    fn lookup() -> RateLookup {
        RateLookup {
            stamp: pb::DatasetStamp {
                id: "demo".into(),
                version: "1.0.0".into(),
                content_hash: "d".repeat(64),
                ..Default::default()
            },
            species: "X".into(),
            transitions: vec![Transition { upper: 2, lower: 1 }],
            temperature_count: 2,
            rate_unit: RateUnit::CubicCentimetrePerSecond,
            excitation: vec![1.0e-9, 2.0e-9],
            deexcitation: vec![3.0e-9, 4.0e-9],
            flags: vec![0, flags::OUTSIDE_GRID | flags::BEYOND_SOURCE],
            cautions: vec!["server caution".into()],
        }
    }

    #[test]
    fn text_shows_stamp_values_flags_and_cautions() {
        let text = as_text(&lookup(), &[5000.0, 2e7], TemperatureUnit::Kelvin, Source::Local);
        let lines: Vec<&str> = text.lines().collect();
        assert_eq!(
            lines[0],
            format!(
                "dataset demo version 1.0.0  content hash {}  tables digest -",
                "d".repeat(64)
            )
        );
        assert!(lines[1].contains("evaluated locally"), "{text}");
        assert_eq!(lines[2], "TRANSITION   T_K  Q_LU_cm3/s  Q_UL_cm3/s  FLAGS");
        assert_eq!(lines[3], "2-1         5000  1.00000e-9  3.00000e-9  -");
        assert_eq!(lines[4], "2-1          2e7  2.00000e-9  4.00000e-9  SG");
        assert!(lines[5].starts_with("flags: A approximate"), "{text}");
        assert_eq!(lines[6], "caution: server caution");
        assert!(
            lines[7].starts_with("caution: 2-1: 1 of 2 temperatures outside the source"),
            "{text}"
        );
        assert!(
            lines[8].starts_with("caution: 2-1: 1 of 2 temperatures outside the table grid"),
            "{text}"
        );
    }

    #[test]
    fn json_has_stamp_arrays_and_flag_names() {
        let mut l = lookup();
        l.excitation.clear();
        let v: serde_json::Value = serde_json::from_str(&as_json(
            &l,
            &[1.0, 2.0],
            TemperatureUnit::ElectronVolt,
            Source::Server,
        ))
        .unwrap();
        assert_eq!(v["stamp"]["version"], "1.0.0");
        assert_eq!(v["temperature_unit"], "eV");
        assert_eq!(v["source"], "server");
        assert!(v["transitions"][0]["excitation"].is_null());
        assert_eq!(v["transitions"][0]["deexcitation"][1], 4.0e-9);
        assert_eq!(v["transitions"][0]["flag_names"][1][0], "beyond_source");
        assert_eq!(v["cautions"].as_array().unwrap().len(), 3);
    }
}
