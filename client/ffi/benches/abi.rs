//! Evaluation through the C ABI against the Rust library, per value, one thread each (the
//! library starts no threads). INVENTED smooth tables (no atomic data): 500 transitions on a
//! 1e3..1e8 K grid (20 per decade) at 1,000 temperatures. Target: the C ABI within 10 % of
//! the Rust library.
#![allow(missing_docs)] // criterion's macros generate undocumented public items

use criterion::{Criterion, Throughput, criterion_group, criterion_main};
use ratewell::*;
use ratewell_client::{EvalOptions, LocalTables, pb};
use ratewell_proto::digest::table_set_digest;
use ratewell_proto::rule::{LogGrid, RateTable, TableHeader};
use ratewell_proto::wire::{grid_to_wire, table_to_wire};
use std::ffi::CString;
use std::hint::black_box;

fn invented_tables() -> LocalTables {
    let grid = LogGrid::from_range(1e3, 1e8, 20).unwrap();
    let tables: Vec<RateTable> = (0..500u32)
        .map(|k| {
            let header = TableHeader {
                upper: 2 + k / 10,
                lower: 1 + k % 10,
                g_lower: 2.0,
                g_upper: 4.0,
                excitation_energy_k: 500.0 + 37.0 * f64::from(k),
                source_t_min_k: 1e3,
                source_t_max_k: 1e8,
                approximate: false,
            };
            let y = (0..grid.knots())
                .map(|i| -1.0 + 0.2 * ((i as f64) * 0.05 + f64::from(k)).sin())
                .collect();
            RateTable::from_knots(header, grid, y).unwrap()
        })
        .collect();
    let species = "Bm II".to_string();
    LocalTables::from_wire(pb::FetchTablesResponse {
        stamp: Some(pb::DatasetStamp {
            id: "bench".into(),
            version: "1.0.0".into(),
            content_hash: "0".repeat(64),
            tables_digest: String::new(),
        }),
        table_set_digest: table_set_digest(&species, &grid, &tables),
        species,
        grid: Some(grid_to_wire(&grid)),
        tables: tables.iter().map(table_to_wire).collect(),
        cautions: vec![],
    })
    .unwrap()
}

fn abi_vs_rust(c: &mut Criterion) {
    let tables = invented_tables();
    let dir = std::env::temp_dir().join(format!("ratewell-bench-abi-{}", std::process::id()));
    let path = tables.save(&dir).unwrap();
    let c_path = CString::new(path.to_str().unwrap()).unwrap();
    let mut handle = std::ptr::null_mut();
    // SAFETY: valid string and out pointer.
    assert_eq!(
        unsafe { ratewell_tables_load(c_path.as_ptr(), &mut handle) },
        RATEWELL_OK
    );
    let temps: Vec<f64> = (0..1_000)
        .map(|i| 1.2e3 * 10f64.powf(i as f64 * 0.0049))
        .collect();
    let n = tables.tables().len() * temps.len();
    let (mut e, mut d, mut f) = (vec![0.0; n], vec![0.0; n], vec![0u32; n]);
    let mut group = c.benchmark_group("evaluate_500x1000_1_thread");
    group.throughput(Throughput::Elements(n as u64));
    group.bench_function("rust_library", |b| {
        b.iter(|| {
            tables
                .evaluate_to_slices(&[], &temps, EvalOptions::default(), &mut e, &mut d, &mut f)
                .unwrap();
            black_box(&e);
        })
    });
    group.bench_function("c_abi", |b| {
        b.iter(|| {
            // SAFETY: arrays of `n` values; live handle.
            let s = unsafe {
                ratewell_tables_evaluate(
                    handle,
                    std::ptr::null(),
                    std::ptr::null(),
                    0,
                    temps.as_ptr(),
                    temps.len(),
                    RATEWELL_KELVIN,
                    RATEWELL_CM3_PER_S,
                    RATEWELL_REFUSE,
                    e.as_mut_ptr(),
                    d.as_mut_ptr(),
                    f.as_mut_ptr(),
                    n,
                )
            };
            assert_eq!(s, RATEWELL_OK);
            black_box(&e);
        })
    });
    group.finish();
    // SAFETY: handle from the library, freed once.
    unsafe { ratewell_tables_free(handle) };
    std::fs::remove_dir_all(&dir).unwrap();
}

criterion_group!(benches, abi_vs_rust);
criterion_main!(benches);
