//! Client resilience against real server processes: replicas killed (SIGKILL) and hung
//! (SIGSTOP) under load lose no lookup; a job started before its server waits for it; a stream
//! cut by a dying replica is finished elsewhere; with every server gone, a client set to fall
//! back answers from the tables it already fetched, with the same bits.
//!
//! Every answer is checked against a reference taken before any fault, bit for bit, and every
//! stamp against the one content hash all replicas serve (they load the same embedded demo).

use ratewell_client::{
    Client, ClientConfig, DatasetRef, FALLBACK_CAUTION, RateLookup, RateQuery, RetryPolicy,
};
use ratewell_e2e::child::{ServerProcess, Signal, free_loopback_address};
use ratewell_e2e::requests::{MK_III, log_spaced};
use ratewell_e2e::server_binary;
use std::sync::Arc;
use std::sync::atomic::{AtomicUsize, Ordering};
use std::time::{Duration, Instant};

/// Lookup calls the failover test makes in all (each is every transition at three
/// temperatures): 100,000 in an optimised build, a quarter of that in a debug build, where
/// the three servers share two cores with the callers and each call costs about 1 ms.
const LOOKUPS: usize = if cfg!(debug_assertions) { 25_000 } else { 100_000 };
/// Concurrent callers sharing one client (one job's threads).
const CALLERS: usize = 8;

fn demo() -> DatasetRef {
    DatasetRef::new("demo").expect("dataset id")
}

/// A client over `urls` that gives a hung replica one second per attempt and keeps trying
/// for a minute overall.
fn resilient(urls: Vec<String>) -> Client {
    Client::new(resilient_config(urls)).expect("client")
}

fn resilient_config(urls: Vec<String>) -> ClientConfig {
    let mut config = ClientConfig::new(urls[0].clone())
        .with_endpoints(urls)
        .with_dataset(demo())
        .with_call_timeout(Duration::from_secs(1))
        .with_retry(RetryPolicy {
            max_attempts: 20,
            initial_backoff: Duration::from_millis(10),
            max_backoff: Duration::from_millis(200),
            deadline: Duration::from_secs(60),
            ..RetryPolicy::default()
        });
    config.spread_start = false;
    config
}

/// The lookup each caller repeats: every transition of the species at three temperatures.
fn query() -> RateQuery {
    RateQuery::new(MK_III, vec![3.0e3, 1.2e4, 8.5e4])
}

/// Bit-for-bit equality of two answers' values and flags, and equal stamps.
fn assert_same_bits(got: &RateLookup, want: &RateLookup, context: &str) {
    assert_eq!(got.stamp, want.stamp, "{context}: stamp");
    assert_eq!(got.flags, want.flags, "{context}: flags");
    let bits = |v: &[f64]| v.iter().map(|x| x.to_bits()).collect::<Vec<_>>();
    assert_eq!(
        bits(&got.excitation),
        bits(&want.excitation),
        "{context}: excitation"
    );
    assert_eq!(
        bits(&got.deexcitation),
        bits(&want.deexcitation),
        "{context}: de-excitation"
    );
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn killing_one_replica_and_hanging_another_loses_no_lookup() {
    let replicas: Vec<ServerProcess> = (0..3)
        .map(|_| ServerProcess::spawn(server_binary!(), &[]))
        .collect();
    let client = resilient(replicas.iter().map(ServerProcess::url).collect());
    let reference = client.lookup_rates(&query()).await.expect("reference answer");
    let done = Arc::new(AtomicUsize::new(0));
    let callers: Vec<_> = (0..CALLERS)
        .map(|_| {
            let (client, done, reference) = (client.clone(), done.clone(), reference.clone());
            tokio::spawn(async move {
                let q = query();
                while done.fetch_add(1, Ordering::Relaxed) < LOOKUPS {
                    let answer = client.lookup_rates(&q).await.expect("no lookup is lost");
                    assert_same_bits(&answer, &reference, "under faults");
                }
            })
        })
        .collect();
    // The client starts on replica 0 and moves on in order: kill the one in use, then hang
    // the one it moves to.
    let wait_until = |fraction: usize| {
        let done = done.clone();
        async move {
            while done.load(Ordering::Relaxed) < LOOKUPS * fraction / 3 {
                tokio::time::sleep(Duration::from_millis(5)).await;
            }
        }
    };
    wait_until(1).await;
    replicas[0].signal(Signal::Kill);
    wait_until(2).await;
    replicas[1].signal(Signal::Stop);
    let started = Instant::now();
    for caller in callers {
        caller.await.expect("caller finished without a lost lookup");
    }
    assert!(done.load(Ordering::Relaxed) >= LOOKUPS);
    // Still serving from the third replica after both faults.
    let after = client.lookup_rates(&query()).await.expect("after the faults");
    assert_same_bits(&after, &reference, "after the faults");
    eprintln!(
        "{LOOKUPS} lookups by {CALLERS} callers; last third after the hang took {:?}",
        started.elapsed()
    );
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn a_job_started_before_its_server_waits_for_it() {
    let addr = free_loopback_address();
    let url = format!("http://{addr}");
    let mut config = ClientConfig::new(url.clone())
        .with_dataset(demo())
        .with_wait_for_server(Duration::from_secs(60));
    // Without waiting, five quick attempts would give up within about a second.
    config.retry.max_attempts = 5;
    let client = Client::new(config).expect("client");
    let asked = Instant::now();
    let lookup = tokio::spawn({
        let client = client.clone();
        async move { client.lookup_rates(&query()).await }
    });
    tokio::time::sleep(Duration::from_secs(2)).await;
    assert!(!lookup.is_finished(), "the call is still waiting for a server");
    let _server = tokio::task::spawn_blocking(move || {
        ServerProcess::spawn_on(server_binary!(), &addr.to_string(), &[])
    })
    .await
    .expect("server started");
    let answer = lookup
        .await
        .expect("lookup task")
        .expect("answered once the server came up");
    assert!(asked.elapsed() >= Duration::from_secs(2));
    assert_eq!(answer.temperature_count, 3);

    // The same without waiting gives up, naming the address.
    let quick =
        Client::new(ClientConfig::new(format!("http://{}", free_loopback_address())).with_dataset(demo()))
            .expect("client");
    let started = Instant::now();
    let error = quick.lookup_rates(&query()).await.expect_err("nothing listens");
    assert!(error.is_unreachable(), "{error}");
    assert!(
        started.elapsed() < Duration::from_secs(10),
        "{:?}",
        started.elapsed()
    );
    // And waiting for health says which endpoint serves.
    assert_eq!(
        client
            .wait_until_serving(Duration::from_secs(10))
            .await
            .expect("serving"),
        url
    );
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn a_stream_cut_by_a_dying_replica_is_finished_on_another() {
    let replicas: Vec<ServerProcess> = (0..2)
        .map(|_| ServerProcess::spawn(server_binary!(), &[]))
        .collect();
    // The attempt budget must cover the whole stream (a dead replica is noticed at once).
    let client = Client::new(
        resilient_config(replicas.iter().map(ServerProcess::url).collect())
            .with_call_timeout(Duration::from_secs(30)),
    )
    .expect("client");
    // Many small messages, so the stream is still running when the replica dies.
    let big = RateQuery::new(MK_III, log_spaced(1.0e3, 1.0e6, 200_000));
    let tables = client.fetch_tables(MK_III, None).await.expect("tables");
    let want = tables.evaluate(&big).expect("local reference");
    let streamed = tokio::spawn({
        let (client, big) = (client.clone(), big.clone());
        async move { client.lookup_rates_stream(&big, 250).await }
    });
    tokio::time::sleep(Duration::from_millis(300)).await;
    assert!(
        !streamed.is_finished(),
        "the stream outlasts the kill (make it longer)"
    );
    replicas[0].signal(Signal::Kill);
    let got = streamed
        .await
        .expect("stream task")
        .expect("the stream is finished on the other replica");
    assert_same_bits(&got, &want, "resumed stream against local evaluation");
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn with_every_server_gone_fetched_tables_answer_with_the_same_bits() {
    let server = ServerProcess::spawn(server_binary!(), &[]);
    let mut config = ClientConfig::new(server.url())
        .with_dataset(demo())
        .with_call_timeout(Duration::from_secs(1));
    config.retry.max_attempts = 2;
    config.fall_back_to_fetched_tables = true;
    let client = Client::new(config).expect("client");
    let served = client.lookup_rates(&query()).await.expect("served answer");
    client.fetch_tables(MK_III, None).await.expect("tables fetched");
    drop(server);
    let local = client
        .lookup_rates(&query())
        .await
        .expect("answered from the fetched tables");
    assert_same_bits(&local, &served, "fallback against the server's answer");
    assert!(
        local.cautions.iter().any(|c| c == FALLBACK_CAUTION),
        "{:?}",
        local.cautions
    );
    // A species never fetched has nothing to fall back on: the error stays.
    let other = RateQuery::new(ratewell_e2e::requests::MK_II, vec![1.0e4]);
    let error = client.lookup_rates(&other).await.expect_err("no tables for it");
    assert!(error.is_unreachable(), "{error}");
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn connections_closed_for_age_lose_no_call() {
    // The server ends every connection after 0.3 s (HTTP/2 GOAWAY; calls in flight finish), so
    // clients reconnect and spread over replicas; a client in a tight loop sees no error.
    let server = ServerProcess::spawn(server_binary!(), &["--max-connection-age-s", "0.3"]);
    let client = resilient(vec![server.url()]);
    let reference = client.lookup_rates(&query()).await.expect("reference answer");
    let started = Instant::now();
    let mut calls = 0;
    while started.elapsed() < Duration::from_secs(3) {
        let answer = client
            .lookup_rates(&query())
            .await
            .expect("no call lost to an aged connection");
        assert_same_bits(&answer, &reference, "across connection ages");
        calls += 1;
    }
    assert!(calls > 100, "{calls} calls in 3 s");
}
