//! Table precompute for a large invented dataset: 300 levels, every pair collisionally coupled
//! (44,850 transitions), on 1e3-1e8 K at 20 points per decade, in parallel as the engine does.
#![allow(missing_docs)] // criterion's macros generate undocumented public items

mod common;

use criterion::{Criterion, Throughput, criterion_group, criterion_main};
use ratewell_service::tables::build_species_tables;
use std::hint::black_box;
use std::time::Duration;

fn precompute(c: &mut Criterion) {
    let mut g = c.benchmark_group("precompute");
    for levels in [100usize, 300] {
        let data = common::dataset("bench-precompute", &[levels]);
        let species = &data.species[0];
        let grid = common::PRECOMPUTE_GRID.to_grid().unwrap();
        g.throughput(Throughput::Elements(species.collisions.len() as u64));
        g.bench_function(
            format!("{levels}_levels_{}_transitions", species.collisions.len()),
            |b| b.iter(|| black_box(build_species_tables(species, grid).unwrap())),
        );
    }
    g.finish();
}

criterion_group! {
    name = benches;
    // A 300-level build takes about a second: ten samples, no more.
    config = Criterion::default().sample_size(10).warm_up_time(Duration::from_millis(200)).measurement_time(Duration::from_secs(3));
    targets = precompute
}
criterion_main!(benches);
