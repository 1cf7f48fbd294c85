//! Table-file save and load for a large species: 300 levels, every pair coupled (44,850
//! tables) on the default-size grid of 101 knots (1e3 to 1e8 K, 20 per decade). The tables
//! are INVENTED smooth shapes (no atomic data); only their size matters here. Target: load
//! (read, checksum, decode, digest check, table set-up) under 50 ms on one thread.

#![allow(missing_docs)] // criterion's macros generate undocumented public items
use criterion::{Criterion, criterion_group, criterion_main};
use ratewell_client::{LocalTables, pb};
use ratewell_proto::digest::table_set_digest;
use ratewell_proto::rule::{LogGrid, RateTable, TableHeader};
use ratewell_proto::wire::{grid_to_wire, table_to_wire};
use std::hint::black_box;

const LEVELS: u32 = 300;

fn large_species() -> LocalTables {
    let grid = LogGrid::from_range(1e3, 1e8, 20).unwrap();
    let mut tables = Vec::new();
    for upper in 2..=LEVELS {
        for lower in 1..upper {
            let header = TableHeader {
                upper,
                lower,
                g_lower: 2.0,
                g_upper: 4.0,
                excitation_energy_k: 100.0 * f64::from(upper - lower),
                source_t_min_k: 1e3,
                source_t_max_k: 1e8,
                approximate: false,
            };
            let shift = f64::from(upper * 7 + lower) * 1e-3;
            let y = (0..grid.knots())
                .map(|i| -1.0 + shift + 0.2 * (i as f64 * 0.05).sin())
                .collect();
            tables.push(RateTable::from_knots(header, grid, y).unwrap());
        }
    }
    let species = "Bm CCC".to_string();
    let digest = table_set_digest(&species, &grid, &tables);
    LocalTables::from_wire(pb::FetchTablesResponse {
        stamp: Some(pb::DatasetStamp {
            id: "bench".into(),
            version: "1.0.0".into(),
            content_hash: "0".repeat(64),
            tables_digest: String::new(),
        }),
        species,
        grid: Some(grid_to_wire(&grid)),
        tables: tables.iter().map(table_to_wire).collect(),
        cautions: vec!["invented benchmark tables".into()],
        table_set_digest: digest,
    })
    .unwrap()
}

fn table_file(c: &mut Criterion) {
    let tables = large_species();
    let dir = std::env::temp_dir().join(format!("ratewell-bench-table-file-{}", std::process::id()));
    let path = tables.save(&dir).unwrap();
    let size = std::fs::metadata(&path).unwrap().len();
    eprintln!(
        "table file: {} tables, {:.1} MB ({}), one thread",
        tables.tables().len(),
        size as f64 / 1e6,
        path.display()
    );
    let mut group = c.benchmark_group("table_file_300_levels_1_thread");
    group.sample_size(10);
    group.bench_function("load", |b| {
        b.iter(|| black_box(LocalTables::load(&path).unwrap()))
    });
    group.bench_function("save", |b| b.iter(|| black_box(tables.save(&dir).unwrap())));
    group.finish();
    std::fs::remove_dir_all(&dir).unwrap();
}

criterion_group!(benches, table_file);
criterion_main!(benches);
