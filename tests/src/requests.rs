//! Wire requests the tests send (with every unit stated), temperature lists, and assertions on
//! refused calls: the exact status code, the key words of the message, and the tonic-types
//! BadRequest field violations.

use ratewell_proto::pb;
use ratewell_proto::pb::rates_client::RatesClient;
use std::time::{Duration, Instant};
use tokio::task::JoinHandle;
use tonic::transport::Channel;
use tonic::{Code, Status};
use tonic_types::StatusExt;

/// Id of the embedded demo dataset (INVENTED data, see service/data/demo).
pub const DEMO: &str = "demo";
/// The 5-level demo species.
pub const MK_III: &str = "Mk III";
/// The 34-level demo species.
pub const MK_II: &str = "Mk II";

/// A selector for dataset `id` at `version` ("" = newest), not pinned.
pub fn selector(id: &str, version: &str) -> pb::DatasetSelector {
    pb::DatasetSelector {
        id: id.to_string(),
        version: version.to_string(),
        expected_content_hash: String::new(),
    }
}

/// A selector for the newest demo version.
pub fn demo() -> pb::DatasetSelector {
    selector(DEMO, "")
}

/// A lookup of every transition of `species` (newest demo) at `temperatures_k` (K), both
/// directions, cm^3 s^-1, refusing temperatures outside the grid, on the default grid.
pub fn lookup(species: &str, temperatures_k: Vec<f64>) -> pb::LookupRatesRequest {
    pb::LookupRatesRequest {
        dataset: Some(demo()),
        species: species.to_string(),
        transitions: Vec::new(),
        temperatures: temperatures_k,
        temperature_unit: pb::TemperatureUnit::Kelvin as i32,
        direction: pb::Direction::Both as i32,
        rate_unit: pb::RateUnit::CubicCentimetrePerSecond as i32,
        outside_grid: pb::OutsideGrid::Refuse as i32,
        grid: None,
    }
}

/// A solve for `species` (newest demo): temperatures in K, densities in cm^-3, powers in W,
/// every line reported, refusing temperatures outside the grid; `grid` combines every
/// temperature with every density.
pub fn solve(
    species: &str,
    temperatures_k: Vec<f64>,
    densities_cm3: Vec<f64>,
    grid: bool,
) -> pb::SolvePopulationsRequest {
    pb::SolvePopulationsRequest {
        dataset: Some(demo()),
        species: species.to_string(),
        temperatures: temperatures_k,
        temperature_unit: pb::TemperatureUnit::Kelvin as i32,
        densities: densities_cm3,
        density_unit: pb::DensityUnit::PerCubicCentimetre as i32,
        grid,
        outside_grid: pb::OutsideGrid::Refuse as i32,
        power_unit: pb::PowerUnit::Watt as i32,
        table_grid: None,
        min_line_fraction: 0.0,
    }
}

/// A transition key.
pub fn key(upper: u32, lower: u32) -> pb::TransitionKey {
    pb::TransitionKey { upper, lower }
}

/// Points per axis of a solve that keeps the server busy for much longer than the tests'
/// short deadlines and drain periods, for the demo's 34-level species (MK_II) on 2 cores.
/// Measured (December 2026, after the solve work of the performance issue): 400 points take
/// ~0.25 s in a debug build, so a debug build solves 32 x 32 (~0.6 s); a release build solves
/// 160 x 160 (~0.2 s, an answer of ~15 MB with only the strongest line). Tests that compare a
/// deadline with the solve time measure the solve first rather than trust these figures.
pub const BIG_SOLVE_AXIS: usize = if cfg!(debug_assertions) { 32 } else { 160 };

/// The big solve: the 34-level species (MK_II) at [`BIG_SOLVE_AXIS`]^2 points from 2e3 to
/// 2e5 K and 1e2 to 1e10 cm^-3, fractions included, only the strongest line reported to keep
/// the answer small.
pub fn big_solve() -> pb::SolvePopulationsRequest {
    let mut req = solve(
        MK_II,
        log_spaced(2e3, 2e5, BIG_SOLVE_AXIS),
        log_spaced(1e2, 1e10, BIG_SOLVE_AXIS),
        true,
    );
    req.min_line_fraction = 1.0;
    req
}

/// [`big_solve`] on `axis` x `axis` points (the same ranges, species and answer settings).
pub fn big_solve_of(axis: usize) -> pb::SolvePopulationsRequest {
    let mut req = big_solve();
    req.temperatures = log_spaced(2e3, 2e5, axis);
    req.densities = log_spaced(1e2, 1e10, axis);
    req
}

/// The axis of a [`big_solve_of`] that takes at least about `target` where [`big_solve`] took
/// `measured`: a solve's time grows with its number of points (one balance solve per point;
/// common practice, no source).
pub fn big_solve_axis_for(measured: Duration, target: Duration) -> usize {
    let base = (BIG_SOLVE_AXIS * BIG_SOLVE_AXIS) as f64;
    let points = base * target.as_secs_f64() / measured.as_secs_f64().max(1e-3);
    (points.sqrt().ceil() as usize).max(BIG_SOLVE_AXIS)
}

/// Generous bytes of the answer to a [`big_solve_of`] with `points` points: the populations and
/// two critical-density lists of the 34 levels as doubles, one line and the fixed fields, per
/// point, with room to spare (for a server's `max_message_bytes`, which bounds answers too).
pub fn big_solve_answer_bytes(points: usize) -> usize {
    points * (3 * 34 * 8 + 256)
}

/// The shortest big solve that still leaves room for the tenth-of-the-solve deadlines and
/// drain periods the tests derive from it.
const SHORTEST_BIG_SOLVE: Duration = Duration::from_millis(30);

/// How long [`big_solve`] takes on `server` here and now, with no deadline (the answer is
/// checked to be whole). Tests that need a deadline or a drain period shorter than the solve
/// take a fraction of this, so they hold however fast the machine and the build are.
pub async fn time_big_solve(server: &crate::TestServer) -> Duration {
    let started = Instant::now();
    let full = server
        .populations()
        .solve_populations(big_solve())
        .await
        .expect("the big solve without a deadline")
        .into_inner();
    let solve_time = started.elapsed();
    assert_eq!(full.points.len(), BIG_SOLVE_AXIS * BIG_SOLVE_AXIS);
    assert!(
        solve_time > SHORTEST_BIG_SOLVE,
        "the big solve ({solve_time:?}) is too quick to hold a deadline inside it: \
         raise BIG_SOLVE_AXIS"
    );
    solve_time
}

/// The probe of a server's permits: the smallest lookup, answered inline under the same
/// concurrency permit as every engine call, so with `max_in_flight = 1` it is shed with
/// RESOURCE_EXHAUSTED exactly while other work holds the permit.
pub async fn probe(rates: &mut RatesClient<Channel>) -> Result<(), Status> {
    rates.lookup_rates(lookup(MK_III, vec![1e4])).await.map(|_| ())
}

/// A call running in a task, ending with its status.
pub type Call = JoinHandle<Result<(), Status>>;

/// Starts the call `start` makes and returns once the server (with `max_in_flight = 1`) is
/// observed computing it: a [`probe`] is shed. A call that was itself shed, because a probe
/// held the permit as it arrived, is started again.
pub async fn in_flight(mut rates: RatesClient<Channel>, start: impl Fn() -> Call) -> Call {
    let mut call = start();
    let began = Instant::now();
    loop {
        assert!(
            began.elapsed() < Duration::from_secs(30),
            "the call was never observed in flight"
        );
        if call.is_finished() {
            let status = call
                .await
                .expect("call task")
                .expect_err("the call finished before any probe saw it in flight");
            assert_eq!(status.code(), Code::ResourceExhausted, "{status:?}");
            call = start();
            continue;
        }
        match probe(&mut rates).await {
            Err(s) if s.code() == Code::ResourceExhausted => {
                assert!(s.message().contains("server busy"), "{}", s.message());
                return call;
            }
            Err(s) => panic!("probe failed: {s:?}"),
            // Paces the probes only; the refusal above is the signal.
            Ok(()) => tokio::time::sleep(Duration::from_millis(5)).await,
        }
    }
}

/// `n` values spaced evenly in log from `min` to `max` (both included; `n` >= 2).
pub fn log_spaced(min: f64, max: f64, n: usize) -> Vec<f64> {
    assert!(n >= 2 && min > 0.0 && max > min);
    let (a, b) = (min.log10(), max.log10());
    (0..n)
        .map(|i| 10f64.powf(a + (b - a) * i as f64 / (n - 1) as f64))
        .collect()
}

/// The status of a call that must fail; panics with the answer if it succeeded.
pub fn refused<T: std::fmt::Debug>(result: Result<tonic::Response<T>, Status>) -> Status {
    match result {
        Ok(r) => panic!("expected a refusal, got an answer: {:?}", r.into_inner()),
        Err(status) => status,
    }
}

/// Asserts the status code and that the message contains every one of `words`.
pub fn assert_status(status: &Status, code: Code, words: &[&str]) {
    assert_eq!(
        status.code(),
        code,
        "expected {code:?}, got {:?}: {}",
        status.code(),
        status.message()
    );
    for w in words {
        assert!(
            status.message().contains(w),
            "message of {code:?} lacks {w:?}: {}",
            status.message()
        );
    }
}

/// The BadRequest field violations of a status, as (field, description); empty when the
/// status carries none.
pub fn field_violations(status: &Status) -> Vec<(String, String)> {
    status
        .get_details_bad_request()
        .map(|b| {
            b.field_violations
                .into_iter()
                .map(|v| (v.field, v.description))
                .collect()
        })
        .unwrap_or_default()
}
