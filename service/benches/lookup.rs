//! Server-side handling of a batched lookup: the engine call alone, and the whole gRPC handler
//! (wire request to wire answer, through the blocking pool) without the network.
#![allow(missing_docs)] // criterion's macros generate undocumented public items

mod common;

use criterion::{BenchmarkId, Criterion, Throughput, criterion_group, criterion_main};
use ratewell_proto::pb::{self, rates_server::Rates};
use ratewell_service::api::AppState;
use ratewell_service::api::convert::lookup_query;
use ratewell_service::api::rates::RatesHandler;
use std::hint::black_box;
use std::time::Duration;

fn request(species: &str, transitions: &[(u32, u32)], temperatures: usize) -> pb::LookupRatesRequest {
    pb::LookupRatesRequest {
        dataset: Some(pb::DatasetSelector {
            id: "bench-lookup".into(),
            ..Default::default()
        }),
        species: species.into(),
        transitions: transitions
            .iter()
            .map(|&(upper, lower)| pb::TransitionKey { upper, lower })
            .collect(),
        temperatures: (0..temperatures)
            .map(|j| 10f64.powf(3.0 + 4.0 * (j as f64 + 0.5) / temperatures as f64))
            .collect(),
        temperature_unit: pb::TemperatureUnit::Kelvin as i32,
        direction: pb::Direction::Both as i32,
        rate_unit: pb::RateUnit::CubicCentimetrePerSecond as i32,
        outside_grid: pb::OutsideGrid::Refuse as i32,
        grid: None,
    }
}

fn lookups(c: &mut Criterion) {
    let engine = common::engine_with(common::dataset("bench-lookup", &[64]));
    let species = common::synthetic::species_name(0);
    let all: Vec<(u32, u32)> = {
        let loaded = engine
            .select(&lookup_query(&request(&species, &[], 1)).unwrap().selector)
            .unwrap();
        loaded.tables[&species]
            .tables
            .iter()
            .map(|t| (t.header().upper, t.header().lower))
            .collect()
    };
    let runtime = tokio::runtime::Builder::new_multi_thread()
        .enable_all()
        .build()
        .unwrap();
    let handler = RatesHandler(AppState::new(engine.clone(), 256));
    let mut g = c.benchmark_group("lookup");
    for (n_tr, n_t) in [(1usize, 1usize), (200, 1000)] {
        let req = request(&species, &all[..n_tr], n_t);
        let values = (n_tr * n_t) as u64;
        g.throughput(Throughput::Elements(values));
        let query = lookup_query(&req).unwrap();
        g.bench_with_input(BenchmarkId::new("engine", values), &values, |b, _| {
            b.iter(|| black_box(engine.lookup(&query).unwrap()))
        });
        g.bench_with_input(BenchmarkId::new("handler", values), &values, |b, _| {
            b.iter(|| {
                let r = runtime
                    .block_on(handler.lookup_rates(tonic::Request::new(req.clone())))
                    .unwrap();
                black_box(r.into_inner().deexcitation.len())
            })
        });
    }
    g.finish();
}

criterion_group! {
    name = benches;
    config = Criterion::default().sample_size(20).warm_up_time(Duration::from_millis(300)).measurement_time(Duration::from_secs(2));
    targets = lookups
}
criterion_main!(benches);
