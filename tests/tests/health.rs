//! Standard gRPC health checking (grpc.health.v1.Health) end to end: SERVING for the server
//! and each of its services while it runs, NOT_SERVING as soon as shutdown begins (observed
//! through Watch, the protocol's own change signal), and nothing listening after the stop.

use ratewell_e2e::requests::{assert_status, refused};
use ratewell_e2e::{TestServer, test_config};
use std::time::Duration;
use tonic::Code;
use tonic_health::pb::HealthCheckRequest;
use tonic_health::pb::health_check_response::ServingStatus;

/// Every service the server registers with health checking.
const SERVICES: [&str; 5] = [
    "ratewell.v1.Catalogue",
    "ratewell.v1.Rates",
    "ratewell.v1.Populations",
    "ratewell.v1.Consistency",
    "ratewell.v1.Admin",
];

fn ask(service: &str) -> HealthCheckRequest {
    HealthCheckRequest {
        service: service.to_string(),
    }
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn every_service_reports_serving() {
    let server = TestServer::start().await;
    let mut health = server.health();
    for service in std::iter::once("").chain(SERVICES) {
        let status = health
            .check(ask(service))
            .await
            .unwrap_or_else(|s| panic!("check {service:?}: {s}"))
            .into_inner()
            .status;
        assert_eq!(status, ServingStatus::Serving as i32, "{service:?}");
    }
    // The health protocol answers NOT_FOUND for a service it does not know.
    let status = refused(health.check(ask("ratewell.v1.NoSuchService")).await);
    assert_status(&status, Code::NotFound, &[]);
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn shutdown_turns_health_not_serving_before_the_stop() {
    let config = ratewell_service::config::Config {
        // A drain long enough to ask Check during it on a loaded machine.
        drain: Duration::from_secs(2),
        ..test_config()
    };
    let mut server = TestServer::start_with(config).await;
    let mut health = server.health();
    let mut overall = health.watch(ask("")).await.expect("watch").into_inner();
    let mut rates = health
        .watch(ask("ratewell.v1.Rates"))
        .await
        .expect("watch")
        .into_inner();
    let first = overall.message().await.expect("stream").expect("an update");
    assert_eq!(first.status, ServingStatus::Serving as i32);
    let first = rates.message().await.expect("stream").expect("an update");
    assert_eq!(first.status, ServingStatus::Serving as i32);

    server.begin_shutdown();
    let next = overall.message().await.expect("stream").expect("an update");
    assert_eq!(next.status, ServingStatus::NotServing as i32);
    let next = rates.message().await.expect("stream").expect("an update");
    assert_eq!(next.status, ServingStatus::NotServing as i32);
    // During the drain the server still answers, and says it is not serving.
    for service in std::iter::once("").chain(SERVICES) {
        let status = health
            .check(ask(service))
            .await
            .expect("answered during the drain")
            .into_inner()
            .status;
        assert_eq!(status, ServingStatus::NotServing as i32, "{service:?}");
    }

    // Open Watch streams are calls in flight: the graceful stop would wait for them until
    // shutdown_grace, so end them first.
    drop((overall, rates));
    let addr = server.addr();
    let stopping = std::time::Instant::now();
    server.wait_stopped().await.expect("clean stop");
    assert!(
        stopping.elapsed() < ratewell_service::config::Config::default().shutdown_grace,
        "the stop did not need the grace period"
    );
    let reconnect = tonic::transport::Endpoint::from_shared(format!("http://{addr}"))
        .expect("url")
        .connect()
        .await;
    assert!(reconnect.is_err(), "nothing listens after the stop");
}
