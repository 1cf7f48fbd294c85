//! Client retries end to end: an idempotent call shed by a busy server (RESOURCE_EXHAUSTED,
//! the server's load shedding) is retried with backoff until it succeeds; an unreachable
//! endpoint (UNAVAILABLE) fails over to the next one; answers that will not change (NOT_FOUND,
//! INVALID_ARGUMENT) are returned at once.

use ratewell_client::{
    Client, ClientConfig, DatasetRef, PopulationQuery, RateQuery, RetryPolicy, ServingStatus,
};
use ratewell_e2e::requests::{BIG_SOLVE_AXIS, MK_II, MK_III, log_spaced};
use ratewell_e2e::{TestServer, test_config};
use std::time::Duration;
use tonic::Code;

fn demo() -> DatasetRef {
    DatasetRef::new("demo").expect("dataset id")
}

/// Many quick attempts under a generous overall deadline.
fn patient() -> RetryPolicy {
    RetryPolicy {
        max_attempts: 200,
        initial_backoff: Duration::from_millis(10),
        max_backoff: Duration::from_millis(100),
        deadline: Duration::from_secs(60),
        ..RetryPolicy::default()
    }
}

fn no_retries() -> RetryPolicy {
    RetryPolicy {
        max_attempts: 1,
        ..RetryPolicy::default()
    }
}

/// `requests::big_solve` as a client query (34 levels, BIG_SOLVE_AXIS^2 points, strongest line).
fn big_solve() -> PopulationQuery {
    let mut q = PopulationQuery::grid(
        MK_II,
        log_spaced(2e3, 2e5, BIG_SOLVE_AXIS),
        log_spaced(1e2, 1e10, BIG_SOLVE_AXIS),
    );
    q.min_line_fraction = 1.0;
    q
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn a_call_shed_by_a_busy_server_is_retried_until_it_succeeds() {
    let config = ratewell_service::config::Config {
        // One engine call at a time: a second one is shed while the solve runs.
        max_in_flight: 1,
        ..test_config()
    };
    let server = TestServer::start_with(config).await;
    let base = ClientConfig::new(server.url()).with_dataset(demo());
    let impatient = Client::new(base.clone().with_retry(no_retries())).expect("client");
    let patient = Client::new(base.with_retry(patient())).expect("client");
    let query = RateQuery::new(MK_III, vec![1e4]);

    let solver = patient.clone();
    let mut solve = tokio::spawn(async move { solver.solve_populations(&big_solve()).await });
    // Until a single attempt is shed, the solve is not yet holding the server.
    loop {
        assert!(
            !solve.is_finished(),
            "the solve ended before it was seen in flight"
        );
        match impatient.lookup_rates(&query).await {
            Err(e) => {
                assert_eq!(e.code(), Some(Code::ResourceExhausted), "{e}");
                assert!(e.to_string().contains("server busy"), "{e}");
                break;
            }
            // Paces the probes only; the refusal is the signal.
            Ok(_) => tokio::time::sleep(Duration::from_millis(5)).await,
        }
    }
    // The same call with retries waits out the busy period and gets its answer.
    let answer = patient.lookup_rates(&query).await.expect("retried until served");
    assert_eq!(answer.deexcitation.len(), 10);
    let solved = (&mut solve).await.expect("solve task").expect("the solve itself");
    assert_eq!(solved.points.len(), BIG_SOLVE_AXIS * BIG_SOLVE_AXIS);
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn an_unreachable_endpoint_fails_over_to_the_next() {
    let server = TestServer::start().await;
    // A loopback port that was just free: nothing listens there.
    let dead = {
        let l = std::net::TcpListener::bind("127.0.0.1:0").expect("bind");
        format!("http://{}", l.local_addr().expect("address"))
    };
    let mut config = ClientConfig::new(dead.clone())
        .with_endpoints(vec![dead.clone(), server.url()])
        .with_dataset(demo())
        .with_retry(patient());
    // Always start on the first (dead) endpoint, so the failover is exercised.
    config.spread_start = false;
    let client = Client::new(config).expect("client");
    let answer = client
        .lookup_rates(&RateQuery::new(MK_III, vec![1e4, 2e4]))
        .await
        .expect("answered by the live endpoint");
    assert_eq!(answer.deexcitation.len(), 20);
    let health = client.health_all().await;
    assert_eq!(health.len(), 2);
    assert!(health[0].status.is_err(), "{:?}", health[0]);
    assert_eq!(
        *health[1].status.as_ref().expect("live endpoint answers"),
        ServingStatus::Serving
    );
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn answers_that_will_not_change_are_not_retried() {
    let server = TestServer::start().await;
    let client = Client::new(
        ClientConfig::new(server.url())
            .with_dataset(demo())
            .with_retry(patient()),
    )
    .expect("client");
    let started = std::time::Instant::now();
    let err = client
        .lookup_rates(&RateQuery::new("Mk IX", vec![1e4]))
        .await
        .expect_err("unknown species");
    assert_eq!(err.code(), Some(Code::NotFound), "{err}");
    assert!(err.to_string().contains("Mk IX"), "{err}");
    // Outside the grid is something only the server knows (the client cannot check it).
    let err = client
        .lookup_rates(&RateQuery::new(MK_III, vec![5.0]))
        .await
        .expect_err("below the 10 K grid start");
    assert_eq!(err.code(), Some(Code::OutOfRange), "{err}");
    assert!(err.to_string().contains("outside the table grid"), "{err}");
    // Both came back at once, not after a retry schedule (200 attempts of >= 5 ms each).
    assert!(
        started.elapsed() < Duration::from_millis(900),
        "{:?}",
        started.elapsed()
    );
}
