//! Cancellation end to end: when a call ends before its work does (the client's deadline passed,
//! or the client went away), the work stops at its next check of the stop flag and frees its
//! engine permit, instead of computing on for its full time.
//!
//! "Freed" is observed, not assumed: each server runs with `max_in_flight = 1`, so while the
//! work holds the only permit a cheap probe is shed with RESOURCE_EXHAUSTED, and a probe that is
//! answered shows the permit free. Every piece of work is scaled from a measurement made here
//! and now so that it would take [`FULL_PER_BOUND`] times [`PERMIT_BOUND`] or more in full: a
//! probe admitted within the bound means the work stopped, however fast the machine.

use ratewell_e2e::requests::{
    Call, MK_II, assert_status, big_solve_answer_bytes, big_solve_axis_for, big_solve_of, in_flight, lookup,
    probe, selector, time_big_solve,
};
use ratewell_e2e::{TempDataDir, TestServer, test_config};
use ratewell_proto::pb;
use ratewell_service::config::Config;
use std::time::{Duration, Instant};
use tonic::{Code, Request};

/// After the call ended, a probe is admitted within this: the work stopped and its permit is
/// free. The work stops within one point of a solve or one table of a build per thread
/// (milliseconds in a debug build); the rest is margin for a loaded 2-core machine.
const PERMIT_BOUND: Duration = Duration::from_secs(2);

/// The full work takes at least this many times [`PERMIT_BOUND`]. Three is enough to tell:
/// work that did not stop would hold the permit for at least 3 x 2 s - [`DEADLINE`] = 5 s after
/// the call ended, far past the bound. (It was five; on the development machine the finest
/// grid's table build is predicted at 7-8 s, under the ten that five asked for.)
const FULL_PER_BOUND: u32 = 3;

/// The deadline of the calls cut by their deadline: far shorter than the full work.
const DEADLINE: Duration = Duration::from_secs(1);

fn with_deadline<T>(message: T, deadline: Duration) -> Request<T> {
    let mut r = Request::new(message);
    r.set_timeout(deadline);
    r
}

/// One engine call at a time, so a probe sees the work in flight.
fn one_at_a_time() -> Config {
    Config {
        max_in_flight: 1,
        ..test_config()
    }
}

/// How long from now until a probe is admitted; panics if none is within [`PERMIT_BOUND`].
async fn until_admitted(server: &TestServer) -> Duration {
    let began = Instant::now();
    let mut rates = server.rates();
    loop {
        match probe(&mut rates).await {
            Ok(()) => return began.elapsed(),
            Err(s) if s.code() == Code::ResourceExhausted => {
                assert!(
                    began.elapsed() < PERMIT_BOUND,
                    "the permit is still held {:?} after the call ended: the work went on",
                    began.elapsed()
                );
                tokio::time::sleep(Duration::from_millis(5)).await;
            }
            Err(s) => panic!("probe failed: {s:?}"),
        }
    }
}

/// A server for a solve on `axis` x `axis` points (limits raised to admit it), one call at a
/// time.
async fn solve_server(axis: usize) -> TestServer {
    let points = axis * axis;
    let defaults = Config::default();
    TestServer::start_with(Config {
        max_solve_points: points.max(defaults.max_solve_points),
        max_message_bytes: big_solve_answer_bytes(points).max(defaults.max_message_bytes),
        ..one_at_a_time()
    })
    .await
}

/// The axis of a solve taking [`FULL_PER_BOUND`] x [`PERMIT_BOUND`] or more here and now.
async fn long_solve_axis() -> usize {
    let measured = time_big_solve(&TestServer::start().await).await;
    big_solve_axis_for(measured, PERMIT_BOUND * FULL_PER_BOUND)
}

fn spawn_solve(server: &TestServer, axis: usize, deadline: Option<Duration>) -> Call {
    let mut client = server.populations();
    tokio::spawn(async move {
        let mut request = Request::new(big_solve_of(axis));
        if let Some(d) = deadline {
            request.set_timeout(d);
        }
        client.solve_populations(request).await.map(|_| ())
    })
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn a_solve_cut_by_its_deadline_frees_its_permit() {
    let axis = long_solve_axis().await;
    let server = solve_server(axis).await;
    let call = in_flight(server.rates(), || spawn_solve(&server, axis, Some(DEADLINE))).await;
    let status = call.await.expect("call task").expect_err("cut by its deadline");
    assert_status(&status, Code::DeadlineExceeded, &["deadline"]);
    let freed = until_admitted(&server).await;
    assert!(freed < PERMIT_BOUND, "{freed:?}");
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn a_solve_whose_client_went_away_frees_its_permit() {
    let axis = long_solve_axis().await;
    let server = solve_server(axis).await;
    // The call future is dropped mid-solve: the client resets the call's stream.
    let call = in_flight(server.rates(), || spawn_solve(&server, axis, None)).await;
    call.abort();
    assert!(call.await.expect_err("aborted").is_cancelled());
    until_admitted(&server).await;

    // The client's connection closes mid-solve: a channel of its own, dropped with the call.
    let connection = || {
        let channel = tonic::transport::Endpoint::from_shared(server.url())
            .expect("url")
            .connect_lazy();
        let mut client = pb::populations_client::PopulationsClient::new(channel);
        tokio::spawn(async move { client.solve_populations(big_solve_of(axis)).await.map(|_| ()) })
    };
    let call = in_flight(server.rates(), connection).await;
    call.abort();
    assert!(call.await.expect_err("aborted").is_cancelled());
    until_admitted(&server).await;
}

/// A grid of the default range at the finest spacing the rule allows (8001 knots), on which
/// every table must be built for the request; `shift` moves it so that no two calls share
/// tables in the cache.
fn fine_grid(shift: f64) -> pb::GridSpec {
    pb::GridSpec {
        t_min_k: 10.0 * shift,
        t_max_k: 1e9 * shift,
        points_per_decade: 1000,
    }
}

/// A 501-knot grid of the same spacing, for measuring: building tables takes a time in
/// proportion to their knots (one source evaluation per knot and per model point; common
/// practice, no source).
fn measuring_grid() -> pb::GridSpec {
    pb::GridSpec {
        t_min_k: 1e3,
        t_max_k: 1e3 * 10f64.sqrt(),
        points_per_decade: 1000,
    }
}

fn knots(grid: &pb::GridSpec) -> f64 {
    (grid.t_max_k / grid.t_min_k).log10() * f64::from(grid.points_per_decade) + 1.0
}

/// The time of work on `fine` predicted from `measured` on the measuring grid; asserts it is
/// long enough for the bound to mean something.
fn predicted_full_time(measured: Duration, fine: &pb::GridSpec) -> Duration {
    let full = measured.mul_f64(knots(fine) / knots(&measuring_grid()));
    assert!(
        full >= PERMIT_BOUND * FULL_PER_BOUND,
        "the work on the fine grid would take only {full:?} here (measured {measured:?} on the \
         measuring grid): too quick for a {PERMIT_BOUND:?} bound to show that it stopped"
    );
    full
}

/// Every transition of the large species at 2000 K (inside every grid here) on `grid`.
fn lookup_on(grid: pb::GridSpec) -> pb::LookupRatesRequest {
    let mut req = lookup(MK_II, vec![2e3]);
    req.grid = Some(grid);
    req
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn a_lookup_on_a_new_grid_cut_by_its_deadline_frees_its_permit_and_caches_nothing() {
    let (server, engine) = TestServer::start_sharing_engine(one_at_a_time()).await;
    let began = Instant::now();
    server
        .rates()
        .lookup_rates(lookup_on(measuring_grid()))
        .await
        .expect("a lookup building its tables");
    let fine = fine_grid(1.0);
    predicted_full_time(began.elapsed(), &fine);
    assert_eq!(engine.cache_stats().entries, 1, "the measuring grid's tables");

    let start = || {
        let mut client = server.rates();
        let req = lookup_on(fine);
        tokio::spawn(async move {
            client
                .lookup_rates(with_deadline(req, DEADLINE))
                .await
                .map(|_| ())
        })
    };
    let call = in_flight(server.rates(), start).await;
    let status = call.await.expect("call task").expect_err("cut by its deadline");
    assert_status(&status, Code::DeadlineExceeded, &["deadline"]);
    until_admitted(&server).await;
    // The permit is freed after the build returned: a stopped build leaves no entry.
    assert_eq!(
        engine.cache_stats().entries,
        1,
        "the stopped build left nothing in the cache"
    );

    // A client that goes away stops the build the same way.
    let start = || {
        let mut client = server.rates();
        let req = lookup_on(fine_grid(1.5));
        tokio::spawn(async move { client.lookup_rates(req).await.map(|_| ()) })
    };
    let call = in_flight(server.rates(), start).await;
    call.abort();
    until_admitted(&server).await;
    assert_eq!(engine.cache_stats().entries, 1);
}

fn compare_on(grid: pb::GridSpec) -> pb::CompareDatasetsRequest {
    pb::CompareDatasetsRequest {
        first: Some(selector("demo", "1.0.0")),
        second: Some(selector("demo", "1.1.0")),
        species: Vec::new(),
        grid: Some(grid),
    }
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn a_comparison_cut_by_its_deadline_frees_its_permit() {
    let data = TempDataDir::new("cancel-compare");
    data.add_demo_v2("demo-v2");
    let server = TestServer::start_with(Config {
        data_dir: Some(data.path().to_path_buf()),
        ..one_at_a_time()
    })
    .await;
    let began = Instant::now();
    let measured = server
        .consistency()
        .compare_datasets(compare_on(measuring_grid()))
        .await
        .expect("a comparison building its tables")
        .into_inner();
    assert!(!measured.differences.is_empty());
    let fine = fine_grid(1.0);
    predicted_full_time(began.elapsed(), &fine);

    let start = || {
        let mut client = server.consistency();
        let req = compare_on(fine);
        tokio::spawn(async move {
            client
                .compare_datasets(with_deadline(req, DEADLINE))
                .await
                .map(|_| ())
        })
    };
    let call = in_flight(server.rates(), start).await;
    let status = call.await.expect("call task").expect_err("cut by its deadline");
    assert_status(&status, Code::DeadlineExceeded, &["deadline"]);
    let freed = until_admitted(&server).await;
    assert!(freed < PERMIT_BOUND, "{freed:?}");
}
