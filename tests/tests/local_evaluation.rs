//! The contract's one evaluation rule, end to end: tables fetched with FetchTables and
//! evaluated in this process equal the server's LookupRates bit for bit, for every transition
//! of both demo species at many temperatures (knots, midpoints, grid ends, arbitrary values),
//! through the wire conversion alone and through the client library (every unit and the
//! extrapolation policy, default and non-default grids).

use ratewell_client::{
    Client, ClientConfig, DatasetRef, EvalOptions, OutsidePolicy, RateBuffers, RateQuery, RateUnit,
    TableGrid, TemperatureUnit, Transition,
};
use ratewell_e2e::TestServer;
use ratewell_e2e::requests::{MK_II, MK_III, demo, log_spaced, lookup};
use ratewell_proto::pb;
use ratewell_proto::rule::LogGrid;
use ratewell_proto::wire::{grid_from_wire, table_from_wire};

/// Knots, interval midpoints, both ends and 500 log-spaced values of `grid`.
fn temperatures_on(grid: &LogGrid) -> Vec<f64> {
    let mut t: Vec<f64> = (0..grid.knots()).map(|i| grid.temperature_k(i)).collect();
    t.extend((0..grid.knots() - 1).map(|i| grid.midpoint_k(i)));
    t.extend(log_spaced(grid.t_min_k(), grid.t_max_k(), 500));
    t
}

fn bits(v: &[f64]) -> Vec<u64> {
    v.iter().map(|x| x.to_bits()).collect()
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn fetched_tables_evaluated_here_equal_server_lookups_bit_for_bit() {
    let server = TestServer::start().await;
    for species in [MK_III, MK_II] {
        let fetched = server
            .rates()
            .fetch_tables(pb::FetchTablesRequest {
                dataset: Some(demo()),
                species: species.to_string(),
                grid: None,
            })
            .await
            .expect("fetch")
            .into_inner();
        let grid = grid_from_wire(fetched.grid.as_ref().expect("grid")).expect("valid grid");
        let temps = temperatures_on(&grid);
        let answer = server
            .rates()
            .lookup_rates(lookup(species, temps.clone()))
            .await
            .expect("lookup")
            .into_inner();
        assert_eq!(answer.stamp, fetched.stamp, "same dataset");
        assert_eq!(answer.transitions.len(), fetched.tables.len());
        let n = temps.len();
        for (t, wire) in fetched.tables.iter().enumerate() {
            assert_eq!(Some(answer.transitions[t]), wire.key, "same transition order");
            let table = table_from_wire(wire.clone(), grid).expect("valid table");
            let (mut exc, mut deexc, mut flags) = (vec![0.0; n], vec![0.0; n], vec![0; n]);
            let mut out = ratewell_proto::rule::RateOutputs::new(
                ratewell_proto::rule::Direction::Both,
                &mut exc,
                &mut deexc,
                &mut flags,
            )
            .expect("equal lengths");
            table
                .evaluate_into(&temps, ratewell_proto::rule::OutsidePolicy::Refuse, &mut out)
                .expect("inside the grid");
            let span = t * n..(t + 1) * n;
            assert_eq!(
                bits(&exc),
                bits(&answer.excitation[span.clone()]),
                "{species} row {t}"
            );
            assert_eq!(
                bits(&deexc),
                bits(&answer.deexcitation[span.clone()]),
                "{species} row {t}"
            );
            assert_eq!(flags, answer.flags[span]);
        }
    }
}

/// A client for `server` asking about the newest demo.
fn client_for(server: &TestServer) -> Client {
    let dataset = DatasetRef::new("demo").expect("dataset id");
    Client::new(ClientConfig::new(server.url()).with_dataset(dataset)).expect("client")
}

fn assert_same(local: &ratewell_client::RateLookup, remote: &ratewell_client::RateLookup) {
    assert_eq!(local.stamp, remote.stamp);
    assert_eq!(local.transitions, remote.transitions);
    assert_eq!(local.temperature_count, remote.temperature_count);
    assert_eq!(local.rate_unit, remote.rate_unit);
    assert_eq!(bits(&local.excitation), bits(&remote.excitation));
    assert_eq!(bits(&local.deexcitation), bits(&remote.deexcitation));
    assert_eq!(local.flags, remote.flags);
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn the_client_evaluates_locally_exactly_what_the_server_answers() {
    let server = TestServer::start().await;
    let client = client_for(&server);
    for species in [MK_III, MK_II] {
        let tables = client.fetch_tables(species, None).await.expect("fetch");
        let temps = temperatures_on(tables.grid());
        let query = RateQuery::new(species, temps.clone());
        let remote = client.lookup_rates(&query).await.expect("lookup");
        let local = tables.evaluate(&query).expect("local evaluation");
        assert_same(&local, &remote);
        // The scalar path of the same tables agrees too.
        let n = temps.len();
        for (row, tr) in remote.transitions.iter().enumerate().step_by(7) {
            for (j, &tk) in temps.iter().enumerate().step_by(13) {
                let v = tables
                    .rate(tr.upper, tr.lower, tk, OutsidePolicy::Refuse)
                    .expect("inside the grid");
                assert_eq!(
                    v.deexcitation_cm3_s.to_bits(),
                    remote.deexcitation[row * n + j].to_bits()
                );
            }
        }
    }
    // One fetch per (dataset, species, grid) per process.
    assert_eq!(client.cached_table_sets(), 2);
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn local_and_remote_agree_in_every_unit_and_when_extrapolating() {
    let server = TestServer::start().await;
    let client = client_for(&server);
    let tables = client.fetch_tables(MK_II, None).await.expect("fetch");
    // kT from 1e-3 eV (11.6 K) to 1e5 eV (1.16e9 K, above the grid's 1e9 K) plus 5e-4 eV
    // below it: the ends need extrapolation.
    let mut temps_ev = log_spaced(1e-3, 1e5, 300);
    temps_ev.push(5e-4);
    let options = EvalOptions {
        temperature_unit: TemperatureUnit::ElectronVolt,
        rate_unit: RateUnit::CubicMetrePerSecond,
        direction: ratewell_client::Direction::Both,
        outside: OutsidePolicy::Extrapolate,
        parallel: false,
    };
    // Every 37th table, in reverse order: a subset in an order of our own.
    let transitions: Vec<Transition> = tables.transitions().into_iter().rev().step_by(37).collect();
    assert!(transitions.len() > 5);
    let query = RateQuery::new(MK_II, temps_ev.clone())
        .with_transitions(transitions.clone())
        .with_options(options);
    let remote = client.lookup_rates(&query).await.expect("lookup");
    let local = tables.evaluate(&query).expect("local");
    assert_same(&local, &remote);
    assert!(
        remote
            .flags
            .iter()
            .any(|f| f & ratewell_client::flags::OUTSIDE_GRID != 0),
        "some values were extrapolated"
    );
    // The reusable-buffer path gives the same numbers.
    let mut out = RateBuffers::default();
    tables
        .evaluate_into(&transitions, &temps_ev, options, &mut out)
        .expect("buffers");
    assert_eq!(bits(&out.deexcitation), bits(&remote.deexcitation));
    assert_eq!(bits(&out.excitation), bits(&remote.excitation));

    // Excitation only, K in, cm^3/s out, refusing: still the same.
    let options = EvalOptions {
        direction: ratewell_client::Direction::Excitation,
        ..EvalOptions::default()
    };
    let query = RateQuery::new(MK_II, log_spaced(20.0, 5e8, 97)).with_options(options);
    assert_same(
        &tables.evaluate(&query).expect("local"),
        &client.lookup_rates(&query).await.expect("lookup"),
    );
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn a_non_default_grid_is_evaluated_identically_too() {
    let server = TestServer::start().await;
    let client = client_for(&server);
    let grid = TableGrid::new(1e3, 1e6, 7).expect("grid");
    let tables = client.fetch_tables(MK_III, Some(grid)).await.expect("fetch");
    assert_eq!(tables.grid().knots(), 22, "3 decades at 7 per decade, both ends");
    let temps = temperatures_on(tables.grid());
    let query = RateQuery::new(MK_III, temps).with_grid(grid);
    let remote = client.lookup_rates(&query).await.expect("lookup");
    assert_same(&tables.evaluate(&query).expect("local"), &remote);
    // And differs from the default grid's tables (a coarser grid interpolates differently).
    let default = client.fetch_tables(MK_III, None).await.expect("fetch");
    let other = default
        .evaluate(&RateQuery::new(MK_III, query.temperatures.clone()))
        .expect("local");
    assert_ne!(bits(&other.deexcitation), bits(&remote.deexcitation));
}
