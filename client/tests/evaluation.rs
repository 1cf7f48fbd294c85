//! Local-versus-remote evaluation, streaming, caching and chunked population work against the
//! in-test fake server. The fake answers lookups with the shared rule, so these tests check the
//! client's plumbing (layout, units, merging); the real server is checked in /tests.

mod common;

use common::{HASH_A, start};
use ratewell_client::{
    Client, ClientConfig, DatasetRef, Direction, EvalOptions, OutsidePolicy, PopulationQuery, RateQuery,
    RateUnit, TableGrid, TemperatureUnit, Transition, flags,
};
use std::sync::atomic::Ordering;

fn client(url: &str) -> Client {
    Client::new(ClientConfig::new(url).with_dataset(DatasetRef::new("demo").unwrap())).unwrap()
}

fn temperatures_ev() -> Vec<f64> {
    (0..50).map(|i| 0.1 * 10f64.powf(i as f64 * 0.045)).collect()
}

// The contract (one evaluation rule): a lookup answered by the server and one
// evaluated locally from the same table agree bit for bit.
#[tokio::test]
async fn local_and_remote_answers_agree_bit_for_bit() {
    let server = start(HASH_A).await;
    let c = client(&server.url());
    let tables = c.fetch_tables("X", None).await.unwrap();
    let options = EvalOptions {
        temperature_unit: TemperatureUnit::ElectronVolt,
        rate_unit: RateUnit::CubicMetrePerSecond,
        direction: Direction::Both,
        outside: OutsidePolicy::Extrapolate,
        parallel: false,
    };
    let query = RateQuery::new("X", temperatures_ev())
        .with_transitions(vec!["3-1".parse().unwrap(), "2-1".parse().unwrap()])
        .with_options(options);
    let remote = c.lookup_rates(&query).await.unwrap();
    let local = tables.evaluate(&query).unwrap();
    assert_eq!(remote.transitions, local.transitions);
    assert_eq!(remote.stamp, local.stamp);
    assert_eq!(remote.temperature_count, 50);
    let bits = |v: &[f64]| v.iter().map(|x| x.to_bits()).collect::<Vec<_>>();
    assert_eq!(bits(&remote.excitation), bits(&local.excitation));
    assert_eq!(bits(&remote.deexcitation), bits(&local.deexcitation));
    assert_eq!(remote.flags, local.flags);
    // 0.1 eV is about 1160 K, inside the grid but below the source data (from 3e3 K).
    assert_ne!(local.flags[local.index(0, 0)] & flags::BEYOND_SOURCE, 0);
    // 0.1 * 10^(49 * 0.045) eV is about 1.6e5 K: inside both.
    assert_eq!(local.flags[local.index(0, 49)], 0);
}

#[tokio::test]
async fn a_streamed_batch_equals_one_lookup() {
    let server = start(HASH_A).await;
    let c = client(&server.url());
    let query = RateQuery::new("X", temperatures_ev()).with_options(EvalOptions {
        temperature_unit: TemperatureUnit::ElectronVolt,
        direction: Direction::Deexcitation,
        ..EvalOptions::default()
    });
    let one = c.lookup_rates(&query).await.unwrap();
    let streamed = c.lookup_rates_stream(&query, 7).await.unwrap();
    assert_eq!(server.state.stream_messages.load(Ordering::SeqCst), 8);
    assert_eq!(one, streamed);
    assert!(streamed.excitation.is_empty());
    assert_eq!(streamed.deexcitation.len(), 3 * 50);
}

#[tokio::test]
async fn tables_are_fetched_once_per_key() {
    let server = start(HASH_A).await;
    let c = client(&server.url());
    let a = c.fetch_tables("X", None).await.unwrap();
    let b = c.clone().fetch_tables("X", None).await.unwrap();
    assert!(std::sync::Arc::ptr_eq(&a, &b));
    assert_eq!(server.state.count("FetchTables"), 1);
    let grid = TableGrid::new(1e3, 1e6, 10).unwrap();
    c.fetch_tables("X", Some(grid)).await.unwrap();
    assert_eq!(server.state.count("FetchTables"), 2);
    assert_eq!(c.cached_table_sets(), 2);
    c.clear_table_cache();
    c.fetch_tables("X", None).await.unwrap();
    assert_eq!(server.state.count("FetchTables"), 3);
    let v = a.rate(2, 1, 1.0e4, OutsidePolicy::Refuse).unwrap();
    assert!(v.deexcitation_cm3_s > 0.0 && v.excitation_cm3_s > 0.0);
    assert!(a.table(3, 2).unwrap().header().approximate);
    assert_eq!(a.transitions()[0], Transition { upper: 2, lower: 1 });
}

#[tokio::test]
async fn bad_arguments_are_refused_before_sending() {
    let server = start(HASH_A).await;
    let c = client(&server.url());
    let err = c
        .lookup_rates(&RateQuery::new("X", vec![5e3, -5.0]))
        .await
        .unwrap_err();
    assert_eq!(err.to_string(), "temperatures[1] = -5 K: must be finite and > 0");
    assert_eq!(server.state.count("LookupRates"), 0);
    let no_dataset = Client::new(ClientConfig::new(server.url())).unwrap();
    let err = no_dataset.fetch_tables("X", None).await.unwrap_err();
    assert!(err.to_string().starts_with("dataset = (not set)"), "{err}");
}

#[tokio::test]
async fn chunked_population_work_merges_in_order_and_reports_progress() {
    let server = start(HASH_A).await;
    let c = client(&server.url());
    let q = PopulationQuery::grid("X", vec![1e4, 2e4, 3e4, 4e4, 5e4], vec![1e2, 1e4]);
    let mut seen = Vec::new();
    let answer = c
        .solve_populations_chunked(&q, 2, |done, total| seen.push((done, total)))
        .await
        .unwrap();
    assert_eq!(seen, vec![(4, 10), (8, 10), (10, 10)]);
    assert_eq!(server.state.count("SolvePopulations"), 3);
    assert_eq!(answer.points.len(), 10);
    assert_eq!(answer.critical_densities_per_cm3.len(), 30);
    let order: Vec<(f64, f64)> = answer
        .points
        .iter()
        .map(|p| (p.temperature_k, p.density_per_cm3))
        .collect();
    assert_eq!(order[0], (1e4, 1e2));
    assert_eq!(order[3], (2e4, 1e4));
    assert_eq!(order[9], (5e4, 1e4));
}
