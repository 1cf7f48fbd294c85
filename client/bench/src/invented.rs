//! INVENTED smooth rate tables for benchmarks: no atomic data, only their size and shape
//! matter. Built in memory with the served rule's own table type, so evaluating them costs what
//! evaluating served tables costs.

use ratewell_client::{LocalTables, pb};
use ratewell_proto::digest::table_set_digest;
use ratewell_proto::rule::{LogGrid, RateTable, TableHeader};
use ratewell_proto::wire::{grid_to_wire, table_to_wire};

/// The grid of every invented set: 1e3 to 1e8 K, 20 knots per decade (101 knots), the
/// server's default size.
pub fn grid() -> LogGrid {
    LogGrid::from_range(1e3, 1e8, 20).expect("a valid grid")
}

/// A species of `levels` levels with every pair coupled (levels (levels-1)/2 tables).
pub fn all_pairs(levels: u32) -> LocalTables {
    let grid = grid();
    let mut tables = Vec::new();
    for upper in 2..=levels {
        for lower in 1..upper {
            let shift = f64::from(upper * 7 + lower) * 1e-3;
            let y = (0..grid.knots())
                .map(|i| -1.0 + shift + 0.2 * (i as f64 * 0.05).sin())
                .collect();
            tables.push(table(upper, lower, 100.0 * f64::from(upper - lower), y));
        }
    }
    local_tables("Bm CCC", tables)
}

/// `count` tables with distinct shapes and excitation energies (ten lower levels per upper).
pub fn transitions(count: u32) -> LocalTables {
    let grid = grid();
    let tables = (0..count)
        .map(|k| {
            let y = (0..grid.knots())
                .map(|i| -1.0 + 0.2 * ((i as f64) * 0.05 + f64::from(k)).sin())
                .collect();
            table(2 + k / 10, 1 + k % 10, 500.0 + 37.0 * f64::from(k), y)
        })
        .collect();
    local_tables("Bm II", tables)
}

fn table(upper: u32, lower: u32, excitation_energy_k: f64, ln_upsilon: Vec<f64>) -> RateTable {
    let header = TableHeader {
        upper,
        lower,
        g_lower: 2.0,
        g_upper: 4.0,
        excitation_energy_k,
        source_t_min_k: 1e3,
        source_t_max_k: 1e8,
        approximate: false,
    };
    RateTable::from_knots(header, grid(), ln_upsilon).expect("finite knots on a valid grid")
}

fn local_tables(species: &str, tables: Vec<RateTable>) -> LocalTables {
    let grid = grid();
    LocalTables::from_wire(pb::FetchTablesResponse {
        stamp: Some(pb::DatasetStamp {
            id: "bench".into(),
            version: "1.0.0".into(),
            content_hash: "0".repeat(64),
            tables_digest: String::new(),
        }),
        table_set_digest: table_set_digest(species, &grid, &tables),
        species: species.into(),
        grid: Some(grid_to_wire(&grid)),
        tables: tables.iter().map(table_to_wire).collect(),
        cautions: vec!["invented benchmark tables, no atomic data".into()],
    })
    .expect("tables built here are consistent")
}
