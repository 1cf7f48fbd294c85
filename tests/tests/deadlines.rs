//! Deadlines end to end: a client deadline (grpc-timeout) shorter than a big population solve
//! ends the call at the deadline, not when the solve finishes, and the server keeps serving;
//! the status of such a call must be DEADLINE_EXCEEDED.

use ratewell_e2e::requests::{
    BIG_SOLVE_AXIS, MK_II, MK_III, assert_status, big_solve, log_spaced, lookup, refused, solve,
    time_big_solve,
};
use ratewell_e2e::{TestServer, test_config};
use std::time::{Duration, Instant};
use tonic::{Code, Request};
use tonic_health::pb::HealthCheckRequest;
use tonic_health::pb::health_check_response::ServingStatus;

/// The deadline is this fraction of the measured solve time, so the call must end long
/// before the solve would, however fast this machine and build are.
const DEADLINE_PER_SOLVE: u32 = 10;

fn with_deadline<T>(message: T, deadline: Duration) -> Request<T> {
    let mut r = Request::new(message);
    r.set_timeout(deadline);
    r
}

/// How long the big solve takes here and now, and a deadline a tenth of that.
async fn measure_big_solve(server: &TestServer) -> (Duration, Duration) {
    let solve_time = time_big_solve(server).await;
    (solve_time, solve_time / DEADLINE_PER_SOLVE)
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn a_short_deadline_ends_a_big_solve_and_the_server_keeps_serving() {
    let server = TestServer::start().await;
    let (solve_time, deadline) = measure_big_solve(&server).await;

    let started = Instant::now();
    let result = server
        .populations()
        .solve_populations(with_deadline(big_solve(), deadline))
        .await;
    let waited = started.elapsed();
    let status = refused(result);
    assert!(
        matches!(status.code(), Code::DeadlineExceeded | Code::Cancelled),
        "deadline refusal, got {:?}: {}",
        status.code(),
        status.message()
    );
    assert!(
        waited < solve_time,
        "the call ended at its deadline ({waited:?}), not after the solve ({solve_time:?})"
    );

    // The server keeps serving: health, a lookup, and a solve with a deadline it can meet.
    let health = server
        .health()
        .check(HealthCheckRequest {
            service: String::new(),
        })
        .await
        .expect("health")
        .into_inner();
    assert_eq!(health.status, ServingStatus::Serving as i32);
    let answer = server
        .rates()
        .lookup_rates(with_deadline(lookup(MK_III, vec![1e4]), Duration::from_secs(30)))
        .await
        .expect("lookup after the deadline")
        .into_inner();
    assert_eq!(answer.deexcitation.len(), 10);
    let small = solve(MK_III, vec![1e4], vec![1e3], false);
    server
        .populations()
        .solve_populations(with_deadline(small, Duration::from_secs(30)))
        .await
        .expect("a solve that meets its deadline");
    server.shutdown().await.expect("clean stop");
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn the_client_time_budget_ends_a_big_solve_with_a_timeout() {
    let server = TestServer::start().await;
    let (solve_time, deadline) = measure_big_solve(&server).await;
    let dataset = ratewell_client::DatasetRef::new("demo").expect("id");
    let client = ratewell_client::Client::new(
        ratewell_client::ClientConfig::new(server.url())
            .with_dataset(dataset)
            .with_call_timeout(deadline),
    )
    .expect("client");
    let mut query = ratewell_client::PopulationQuery::grid(
        MK_II,
        log_spaced(2e3, 2e5, BIG_SOLVE_AXIS),
        log_spaced(1e2, 1e10, BIG_SOLVE_AXIS),
    );
    query.min_line_fraction = 1.0;
    let started = Instant::now();
    let err = client
        .solve_populations(&query)
        .await
        .expect_err("longer than the budget");
    assert!(
        matches!(err, ratewell_client::ClientError::Timeout { after, .. } if after == deadline),
        "{err:?}"
    );
    assert!(err.to_string().contains("no answer within"), "{err}");
    assert!(
        started.elapsed() < solve_time,
        "the budget ({deadline:?}) ended the call after {:?}, not the solve ({solve_time:?})",
        started.elapsed()
    );
    // Still serving, and the same client gets quick answers.
    let answer = client
        .lookup_rates(&ratewell_client::RateQuery::new(MK_III, vec![1e4]))
        .await
        .expect("a quick call within the budget");
    assert_eq!(answer.deexcitation.len(), 10);
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn an_expired_deadline_is_deadline_exceeded() {
    let server = TestServer::start().await;
    let (_, deadline) = measure_big_solve(&server).await;
    let status = refused(
        server
            .populations()
            .solve_populations(with_deadline(big_solve(), deadline))
            .await,
    );
    assert_status(&status, Code::DeadlineExceeded, &[]);

    // The server's own request_timeout bounds a call with no client deadline the same way.
    let config = ratewell_service::config::Config {
        request_timeout: deadline,
        ..test_config()
    };
    let bounded = TestServer::start_with(config).await;
    let status = refused(bounded.populations().solve_populations(big_solve()).await);
    assert_status(&status, Code::DeadlineExceeded, &[]);
}
