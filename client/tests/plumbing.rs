//! Retries, time budgets, failover and health checks against the in-test fake server.

mod common;

use common::{HASH_A, dead_address, start};
use ratewell_client::{Client, ClientConfig, ClientError, DatasetRef, RetryPolicy, ServingStatus};
use std::time::{Duration, Instant};
use tonic::Code;

fn fast_retry() -> RetryPolicy {
    RetryPolicy {
        max_attempts: 5,
        initial_backoff: Duration::from_millis(10),
        max_backoff: Duration::from_millis(40),
        multiplier: 2.0,
        jitter: 0.5,
        deadline: Duration::from_secs(5),
    }
}

fn config(url: &str) -> ClientConfig {
    let mut c = ClientConfig::new(url)
        .with_retry(fast_retry())
        .with_dataset(DatasetRef::new("demo").unwrap());
    c.spread_start = false;
    c
}

// Which codes are retried follows gRPC's status-code guide (UNAVAILABLE transient,
// RESOURCE_EXHAUSTED load shedding; INVALID_ARGUMENT is final), from memory.
#[tokio::test]
async fn transient_failures_are_retried_until_an_answer() {
    let server = start(HASH_A).await;
    let client = Client::new(config(&server.url())).unwrap();
    server.state.fail(2, Code::Unavailable);
    let sets = client.list_datasets().await.unwrap();
    assert_eq!(sets.len(), 1);
    assert_eq!(server.state.count("ListDatasets"), 3);

    server.state.fail(3, Code::ResourceExhausted);
    let tables = client.fetch_tables("X", None).await.unwrap();
    assert_eq!(tables.tables().len(), 3);
    assert_eq!(server.state.count("FetchTables"), 4);
}

#[tokio::test]
async fn final_answers_are_not_retried() {
    let server = start(HASH_A).await;
    let client = Client::new(config(&server.url())).unwrap();
    server.state.fail(1, Code::InvalidArgument);
    let err = client.list_datasets().await.unwrap_err();
    assert_eq!(err.code(), Some(Code::InvalidArgument));
    assert!(
        err.to_string().contains("forced failure of ListDatasets"),
        "{err}"
    );
    assert_eq!(server.state.count("ListDatasets"), 1);

    // A missing species is NOT_FOUND, answered once.
    let err = client.fetch_tables("Y", None).await.unwrap_err();
    assert_eq!(err.code(), Some(Code::NotFound));
    assert_eq!(server.state.count("FetchTables"), 1);
}

#[tokio::test]
async fn attempts_stop_at_the_limit_and_loads_are_tried_once() {
    let server = start(HASH_A).await;
    let client = Client::new(config(&server.url())).unwrap();
    server.state.fail(100, Code::Unavailable);
    let err = client.list_datasets().await.unwrap_err();
    assert_eq!(err.code(), Some(Code::Unavailable));
    assert_eq!(server.state.count("ListDatasets"), 5);
    // LoadDataset is not idempotent in cost: one attempt only.
    let err = client.load_dataset("demo").await.unwrap_err();
    assert_eq!(err.code(), Some(Code::Unavailable));
    assert_eq!(server.state.count("LoadDataset"), 1);
    let err = client.load_dataset("../etc").await.unwrap_err();
    assert!(err.to_string().starts_with("folder = \"../etc\""), "{err}");
}

#[tokio::test]
async fn the_overall_deadline_bounds_all_retries() {
    let server = start(HASH_A).await;
    let mut c = config(&server.url());
    c.retry = RetryPolicy {
        max_attempts: 1000,
        initial_backoff: Duration::from_millis(20),
        max_backoff: Duration::from_millis(20),
        multiplier: 1.0,
        jitter: 0.0,
        deadline: Duration::from_millis(300),
    };
    let client = Client::new(c).unwrap();
    server.state.fail(usize::MAX, Code::Unavailable);
    let started = Instant::now();
    let err = client.list_datasets().await.unwrap_err();
    let took = started.elapsed();
    assert_eq!(err.code(), Some(Code::Unavailable));
    // 300 ms budget with 20 ms waits: far fewer than 1000 attempts, and done well before 1 s
    // (the slack is for a loaded 2-core test machine).
    let n = server.state.count("ListDatasets");
    assert!((2..=16).contains(&n), "{n} attempts");
    assert!(took < Duration::from_secs(1), "{took:?}");
}

#[tokio::test]
async fn a_slow_server_hits_the_call_timeout_and_sees_grpc_timeout() {
    let server = start(HASH_A).await;
    let client = Client::new(config(&server.url()).with_call_timeout(Duration::from_millis(300))).unwrap();
    client.list_datasets().await.unwrap();
    // The budget travels as the grpc-timeout header (gRPC over HTTP/2 protocol: "Timeout" is
    // an integer of at most 8 digits followed by a unit letter), from memory.
    let header = server.state.last_grpc_timeout.lock().unwrap().clone().unwrap();
    let (digits, unit) = header.split_at(header.len() - 1);
    assert!(digits.len() <= 8 && digits.parse::<u64>().is_ok(), "{header}");
    assert!(["H", "M", "S", "m", "u", "n"].contains(&unit), "{header}");

    *server.state.delay.lock().unwrap() = Duration::from_secs(3);
    let started = Instant::now();
    let err = client.list_datasets().await.unwrap_err();
    assert!(matches!(err, ClientError::Timeout { .. }), "{err:?}");
    assert!(
        started.elapsed() < Duration::from_secs(2),
        "{:?}",
        started.elapsed()
    );
}

#[tokio::test]
async fn a_dead_endpoint_fails_over_to_the_next() {
    let server = start(HASH_A).await;
    let mut c = config(&dead_address());
    c.endpoints.push(server.url());
    let client = Client::new(c).unwrap();
    let sets = client.list_datasets().await.unwrap();
    assert_eq!(sets[0].stamp.as_ref().unwrap().content_hash, HASH_A);
    assert_eq!(server.state.count("ListDatasets"), 1);
    // The client stays on the live endpoint afterwards.
    client.list_datasets().await.unwrap();
    assert_eq!(client.health().await.unwrap(), ServingStatus::Serving);

    let all = client.health_all().await;
    assert_eq!(all.len(), 2);
    assert!(all[0].status.is_err(), "{:?}", all[0]);
    assert_eq!(*all[1].status.as_ref().unwrap(), ServingStatus::Serving);
}

#[tokio::test]
async fn a_single_dead_endpoint_reports_unavailable_with_its_address() {
    let dead = dead_address();
    let client = Client::new(config(&dead)).unwrap();
    let err = client.list_datasets().await.unwrap_err();
    assert_eq!(err.code(), Some(Code::Unavailable));
    assert!(err.to_string().contains(&dead), "{err}");
}

#[test]
fn a_client_outside_a_runtime_is_an_error_not_a_panic() {
    let err = Client::new(ClientConfig::default()).unwrap_err();
    assert!(matches!(err, ClientError::Runtime(_)), "{err:?}");
}
