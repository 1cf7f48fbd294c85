//! Table-file save and load for a large species: 300 levels, every pair coupled (44,850
//! tables) on the default-size grid of 101 knots (1e3 to 1e8 K, 20 per decade). The tables
//! are INVENTED smooth shapes (no atomic data); only their size matters here. Target: load
//! (read, checksum, decode, digest check, table set-up) under 50 ms on one thread.

#![allow(missing_docs)] // criterion's macros generate undocumented public items
use criterion::{Criterion, criterion_group, criterion_main};
use ratewell_bench::invented;
use ratewell_client::LocalTables;
use std::hint::black_box;

fn table_file(c: &mut Criterion) {
    let tables = invented::all_pairs(300);
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
