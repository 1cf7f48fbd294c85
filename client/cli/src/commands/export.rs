//! `export`: a species' tables evaluated at their grid knots (T, Upsilon, q_ul, q_lu per
//! transition) as plain CSV (the stamp in every row's last columns) or JSON (the stamp in a field).

use crate::args::{ExportArgs, ExportFormat};
use crate::context::Context;
use crate::error::CliError;
use crate::output::{flag_names, json_text, stamp_json};
use ratewell_client::{ClientError, LocalTables, OutsidePolicy, flags};
use serde_json::json;

/// `export`.
pub(crate) async fn run(ctx: &Context, a: &ExportArgs) -> Result<String, CliError> {
    let client = ctx.dataset_client().await?;
    let tables = client.fetch_tables(&a.species, None).await?;
    let text = match a.format {
        ExportFormat::Csv => as_csv(&tables)?,
        ExportFormat::Json => as_json(&tables)?,
    };
    match &a.output {
        None => Ok(text),
        Some(path) => {
            std::fs::write(path, &text).map_err(|e| CliError::Io {
                path: path.display().to_string(),
                message: e.to_string(),
            })?;
            let s = tables.stamp();
            Ok(format!(
                "wrote {} tables of {} to {} (dataset {} version {} content hash {})\n",
                tables.tables().len(),
                tables.species(),
                path.display(),
                s.id,
                s.version,
                s.content_hash
            ))
        }
    }
}

/// CSV, plain (a header row, no comment lines): one row per transition and knot, flags as
/// named true/false columns, and the dataset stamp in the last columns of every row so any
/// row on its own says where it came from.
pub(crate) fn as_csv(tables: &LocalTables) -> Result<String, CliError> {
    let s = tables.stamp();
    let g = tables.grid();
    let mut out = String::new();
    let mut w = csv::Writer::from_writer(Vec::new());
    let csv_err = |e: csv::Error| CliError::Io {
        path: "CSV output".into(),
        message: e.to_string(),
    };
    w.write_record([
        "species",
        "upper",
        "lower",
        "temperature_k",
        "upsilon",
        "q_ul_cm3_s",
        "q_lu_cm3_s",
        "approximate",
        "beyond_source",
        "outside_grid",
        "max_interpolation_error",
        "dataset",
        "version",
        "content_hash",
        "tables_digest",
    ])
    .map_err(csv_err)?;
    let flag = |v: u32, bit: u32| (v & bit != 0).to_string();
    for t in tables.tables() {
        let h = t.header();
        for i in 0..g.knots() {
            let t_k = g.temperature_k(i);
            let v = t
                .evaluate(t_k, OutsidePolicy::Refuse)
                .map_err(ClientError::from)?;
            w.write_record([
                tables.species().to_string(),
                h.upper.to_string(),
                h.lower.to_string(),
                format!("{t_k:e}"),
                format!("{:e}", v.upsilon),
                format!("{:e}", v.deexcitation_cm3_s),
                format!("{:e}", v.excitation_cm3_s),
                flag(v.flags, flags::APPROXIMATE),
                flag(v.flags, flags::BEYOND_SOURCE),
                flag(v.flags, flags::OUTSIDE_GRID),
                format!("{:e}", t.max_interpolation_error()),
                s.id.clone(),
                s.version.clone(),
                s.content_hash.clone(),
                s.tables_digest.clone(),
            ])
            .map_err(csv_err)?;
        }
    }
    let bytes = w.into_inner().map_err(|e| CliError::Io {
        path: "CSV output".into(),
        message: e.to_string(),
    })?;
    out.push_str(&String::from_utf8_lossy(&bytes));
    Ok(out)
}

/// JSON: the stamp, the grid, and per transition its header and values at every knot.
pub(crate) fn as_json(tables: &LocalTables) -> Result<String, CliError> {
    let g = tables.grid();
    let mut list = Vec::new();
    for t in tables.tables() {
        let h = t.header();
        let mut points = Vec::new();
        for i in 0..g.knots() {
            let t_k = g.temperature_k(i);
            let v = t
                .evaluate(t_k, OutsidePolicy::Refuse)
                .map_err(ClientError::from)?;
            points.push(json!({
                "temperature_k": t_k, "upsilon": v.upsilon,
                "q_ul_cm3_s": v.deexcitation_cm3_s, "q_lu_cm3_s": v.excitation_cm3_s,
                "flags": v.flags, "flag_names": flag_names(v.flags),
            }));
        }
        list.push(json!({
            "upper": h.upper, "lower": h.lower, "g_lower": h.g_lower, "g_upper": h.g_upper,
            "excitation_energy_k": h.excitation_energy_k, "approximate": h.approximate,
            "source_t_min_k": h.source_t_min_k, "source_t_max_k": h.source_t_max_k,
            "max_interpolation_error": t.max_interpolation_error(),
            "points": points,
        }));
    }
    Ok(json_text(&json!({
        "stamp": stamp_json(tables.stamp()),
        "species": tables.species(),
        "grid": {
            "log10_t_min_k": g.log10_t_min_k(), "log10_t_step": g.log10_t_step(),
            "knots": g.knots(), "t_min_k": g.t_min_k(), "t_max_k": g.t_max_k(),
        },
        "cautions": tables.cautions(),
        "tables": list,
    })))
}

#[cfg(test)]
mod tests {
    use super::*;
    use ratewell_client::pb;

    /// An invented one-transition table set with Upsilon = 1 everywhere (demo numbers).
    fn tables() -> LocalTables {
        let knots = 4;
        LocalTables::from_wire(pb::FetchTablesResponse {
            stamp: Some(pb::DatasetStamp {
                id: "demo".into(),
                version: "1.0.0".into(),
                content_hash: "f".repeat(64),
                ..Default::default()
            }),
            species: "X".into(),
            grid: Some(pb::LogTemperatureGrid {
                log10_t_min_k: 3.0,
                log10_t_step: 1.0,
                knots,
            }),
            tables: vec![pb::RateTable {
                key: Some(pb::TransitionKey { upper: 2, lower: 1 }),
                g_lower: 1.0,
                g_upper: 3.0,
                excitation_energy_k: 1.0e4,
                ln_upsilon: vec![0.0; knots as usize],
                slopes: vec![0.0; knots as usize],
                source_t_min_k: 1e3,
                source_t_max_k: 1e6,
                approximate: false,
                max_interpolation_error: 0.0,
            }],
            cautions: vec![],
            table_set_digest: String::new(),
        })
        .unwrap()
    }

    #[test]
    fn csv_has_the_stamp_line_and_the_rate_formula_values() {
        let text = as_csv(&tables()).unwrap();
        let mut lines = text.lines();
        assert_eq!(
            lines.next().unwrap(),
            "species,upper,lower,temperature_k,upsilon,q_ul_cm3_s,q_lu_cm3_s,approximate,\
             beyond_source,outside_grid,max_interpolation_error,dataset,version,content_hash,tables_digest"
        );
        let rows: Vec<Vec<String>> = lines
            .map(|l| l.split(',').map(str::to_string).collect())
            .collect();
        assert_eq!(rows.len(), 4);
        assert!(
            rows.iter()
                .all(|r| r.len() == 15 && r[11] == "demo" && r[13].starts_with("ffff"))
        );
        assert!(rows.iter().all(|r| ["true", "false"].contains(&r[7].as_str())));
        // Row at 1e4 K: q_ul = 8.629e-6 Upsilon / (g_u sqrt T) (Osterbrock & Ferland 2006,
        // eq. 3.20); the printed constant has 4 digits, so 1e-4 relative.
        let t: f64 = rows[1][3].parse().unwrap();
        assert_eq!(t, 1e4);
        let q_ul: f64 = rows[1][5].parse().unwrap();
        let expected = 8.629e-6 / (3.0 * 1e4f64.sqrt());
        assert!((q_ul / expected - 1.0).abs() < 1e-4, "{q_ul} vs {expected}");
        // q_lu = (g_u/g_l) q_ul exp(-dE/kT) (detailed balance, same source, eq. 3.21).
        let q_lu: f64 = rows[1][6].parse().unwrap();
        assert!((q_lu / (3.0 * q_ul * (-1.0f64).exp()) - 1.0).abs() < 1e-12);
    }

    #[test]
    fn json_has_the_stamp_grid_and_points() {
        let v: serde_json::Value = serde_json::from_str(&as_json(&tables()).unwrap()).unwrap();
        assert_eq!(v["stamp"]["content_hash"], "f".repeat(64));
        assert_eq!(v["grid"]["knots"], 4);
        assert_eq!(v["tables"][0]["points"].as_array().unwrap().len(), 4);
        assert_eq!(v["tables"][0]["points"][0]["upsilon"], 1.0);
    }
}
