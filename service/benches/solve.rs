//! Population solves per (Te, ne) point for N = 5, 20, 50, 200 levels, matrix assembly
//! included: the physics workspace alone (rates loaded once per temperature, then assembly, LU
//! and refinement per density), and the whole engine solve (rates from the tables, populations,
//! line emissivities, critical densities) over a grid of points in parallel.
#![allow(missing_docs)] // criterion's macros generate undocumented public items

mod common;

use criterion::{BenchmarkId, Criterion, Throughput, criterion_group, criterion_main};
use ratewell_service::engine::solve::SolveQuery;
use ratewell_service::engine::{Engine, Selector};
use ratewell_service::physics::populations::{CollisionalRate, PopulationWorkspace};
use std::hint::black_box;
use std::time::Duration;

const LEVELS: [usize; 4] = [5, 20, 50, 200];

fn densities(n: usize) -> Vec<f64> {
    (0..n)
        .map(|i| 10f64.powf(2.0 + 6.0 * i as f64 / (n - 1) as f64))
        .collect()
}

fn query(species: &str, temperatures: Vec<f64>, densities: Vec<f64>) -> SolveQuery {
    SolveQuery::grid(Selector::newest("bench-solve"), species, temperatures, densities)
}

fn workspace(c: &mut Criterion, engine: &Engine) {
    let loaded = engine.select(&query("", vec![], vec![]).selector).unwrap();
    let mut g = c.benchmark_group("solve/workspace_per_point");
    for (charge, &n) in LEVELS.iter().enumerate() {
        let name = common::synthetic::species_name(charge as u32);
        let tables = &loaded.tables[&name];
        let inputs = &loaded.solve_inputs[&name];
        let loc = tables.grid.locate(1.0e4);
        let rates: Vec<CollisionalRate> = tables
            .tables
            .iter()
            .map(|t| {
                let v = t.evaluate_at(&loc);
                CollisionalRate {
                    upper: t.header().upper as usize - 1,
                    lower: t.header().lower as usize - 1,
                    excitation_cm3_s: v.excitation_cm3_s,
                    deexcitation_cm3_s: v.deexcitation_cm3_s,
                }
            })
            .collect();
        let dens = densities(16);
        let mut ws = PopulationWorkspace::new(n).unwrap();
        g.throughput(Throughput::Elements(dens.len() as u64));
        g.bench_with_input(BenchmarkId::from_parameter(n), &n, |b, _| {
            b.iter(|| {
                ws.set_rates(&inputs.radiative, &rates).unwrap();
                for &ne in &dens {
                    black_box(ws.solve(ne).unwrap().fractions[0]);
                }
            })
        });
    }
    g.finish();
}

fn engine_solve(c: &mut Criterion, engine: &Engine) {
    let mut g = c.benchmark_group("solve/engine_per_point");
    for (charge, &n) in LEVELS.iter().enumerate() {
        let name = common::synthetic::species_name(charge as u32);
        let temps: Vec<f64> = (0..8).map(|i| 5.0e3 * 1.35f64.powi(i)).collect();
        let dens = densities(if n >= 200 { 4 } else { 16 });
        let q = query(&name, temps, dens);
        let points = q.temperatures.len() * q.densities.len();
        g.throughput(Throughput::Elements(points as u64));
        g.bench_with_input(BenchmarkId::from_parameter(n), &n, |b, _| {
            b.iter(|| black_box(engine.solve(&q).unwrap()))
        });
    }
    g.finish();
}

fn solves(c: &mut Criterion) {
    let engine = common::engine_with(common::dataset("bench-solve", &LEVELS));
    workspace(c, &engine);
    engine_solve(c, &engine);
}

criterion_group! {
    name = benches;
    config = Criterion::default().sample_size(10).warm_up_time(Duration::from_millis(300)).measurement_time(Duration::from_secs(2));
    targets = solves
}
criterion_main!(benches);
