//! Graceful shutdown end to end: a call in flight when shutdown begins completes with its full
//! answer before `run` returns; the stop is bounded by `shutdown_grace`, and the calls and
//! streams still in flight when it runs out are answered UNAVAILABLE before `run` returns.
//!
//! "In flight" is observed, not assumed: the server is started with `max_in_flight = 1`, so
//! while the big solve holds the only engine permit a cheap probe is shed with
//! RESOURCE_EXHAUSTED.

use ratewell_e2e::requests::{BIG_SOLVE_AXIS, MK_III, assert_status, big_solve, lookup, time_big_solve};
use ratewell_e2e::{TestServer, test_config};
use ratewell_proto::pb;
use std::time::{Duration, Instant};
use tokio::task::JoinHandle;
use tonic::{Code, Status};

type SolveTask = JoinHandle<Result<pb::SolvePopulationsResponse, Status>>;

fn spawn_solve(server: &TestServer) -> SolveTask {
    let mut client = server.populations();
    tokio::spawn(async move {
        client
            .solve_populations(big_solve())
            .await
            .map(tonic::Response::into_inner)
    })
}

/// Starts the big solve and returns once the server is observed computing it.
async fn solve_in_flight(server: &TestServer) -> SolveTask {
    let mut task = spawn_solve(server);
    let started = Instant::now();
    loop {
        assert!(
            started.elapsed() < Duration::from_secs(30),
            "the solve was never observed in flight"
        );
        if task.is_finished() {
            // The solve itself was shed because a probe held the permit: send it again.
            let status = task
                .await
                .expect("solve task")
                .expect_err("a finished solve before any probe saw it busy");
            assert_eq!(status.code(), Code::ResourceExhausted, "{status:?}");
            task = spawn_solve(server);
            continue;
        }
        match server.rates().lookup_rates(lookup(MK_III, vec![1e4])).await {
            Err(s) if s.code() == Code::ResourceExhausted => {
                assert!(s.message().contains("server busy"), "{}", s.message());
                return task;
            }
            Err(s) => panic!("probe failed: {s:?}"),
            // Paces the probes only; the refusal above is the signal.
            Ok(_) => tokio::time::sleep(Duration::from_millis(5)).await,
        }
    }
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn an_in_flight_call_completes_during_graceful_shutdown() {
    let solve_time = time_big_solve(&TestServer::start().await).await;
    let config = ratewell_service::config::Config {
        // One engine call at a time, so a probe can see the solve in flight.
        max_in_flight: 1,
        // Much shorter than the solve, so the graceful stop begins while it runs.
        drain: solve_time / 10,
        ..test_config()
    };
    let mut server = TestServer::start_with(config).await;
    let solve = solve_in_flight(&server).await;
    let addr = server.addr();
    let grace = ratewell_service::config::Config::default().shutdown_grace;
    server.begin_shutdown();
    let stopping = Instant::now();
    let stopped = tokio::spawn(server.wait_stopped());
    let answer = solve
        .await
        .expect("solve task")
        .expect("the in-flight solve completes");
    assert_eq!(
        answer.points.len(),
        BIG_SOLVE_AXIS * BIG_SOLVE_AXIS,
        "the full answer"
    );
    assert!(answer.points.iter().all(|p| p.fractions.len() == 34));
    stopped.await.expect("stop task").expect("clean stop");
    assert!(
        stopping.elapsed() < grace,
        "the stop ended by itself once the call was answered, not by the grace timeout"
    );
    let reconnect = tonic::transport::Endpoint::from_shared(format!("http://{addr}"))
        .expect("url")
        .connect()
        .await;
    assert!(reconnect.is_err(), "nothing listens after the stop");
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn shutdown_grace_bounds_the_wait_for_in_flight_calls() {
    let solve_time = time_big_solve(&TestServer::start().await).await;
    let config = ratewell_service::config::Config {
        max_in_flight: 1,
        drain: Duration::ZERO,
        // Far shorter than the solve: the stop must not wait for it.
        shutdown_grace: solve_time / 10,
        ..test_config()
    };
    let mut server = TestServer::start_with(config).await;
    let solve = solve_in_flight(&server).await;
    server.begin_shutdown();
    let started = Instant::now();
    server.wait_stopped().await.expect("stop after the grace period");
    let stop_time = started.elapsed();
    let answer = tokio::time::timeout(Duration::from_secs(30), solve)
        .await
        .expect("the cut call ends")
        .expect("solve task");
    let status = answer.expect_err(&format!(
        "run returned after {stop_time:?}, yet the in-flight call went on to complete"
    ));
    assert_status(
        &status,
        Code::Unavailable,
        &["server stopping", "retry on another endpoint"],
    );
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn a_stream_still_open_when_the_grace_runs_out_ends_with_unavailable() {
    let config = ratewell_service::config::Config {
        drain: Duration::ZERO,
        // A stream the client keeps open holds the graceful stop until the grace runs out.
        shutdown_grace: Duration::from_millis(400),
        ..test_config()
    };
    let mut server = TestServer::start_with(config).await;
    let (tx, mut answers) = server.open_lookup_stream(1).await;
    tx.send(lookup(MK_III, vec![1e4])).await.expect("send");
    answers.message().await.expect("an answer").expect("open");
    server.begin_shutdown();
    server.wait_stopped().await.expect("stop after the grace period");
    let status = tokio::time::timeout(Duration::from_secs(30), answers.message())
        .await
        .expect("the stream ends")
        .expect_err("the stream was cut");
    assert_status(
        &status,
        Code::Unavailable,
        &["server stopping", "retry on another endpoint"],
    );
    drop(tx);
}
