//! The Prometheus endpoint end to end: calls counted by method and status code with latency
//! histograms, an unimplemented method counted as `unknown` (label values stay bounded), the
//! loaded datasets with their stamps, table-cache bytes and LoadDataset outcomes.

use ratewell_e2e::requests::{MK_III, lookup};
use ratewell_e2e::{TempDataDir, TestServer, test_config};
use ratewell_proto::pb;
use std::net::SocketAddr;
use tokio::io::{AsyncReadExt, AsyncWriteExt};

/// A loopback port free at the time of asking.
fn free_port() -> SocketAddr {
    let probe = std::net::TcpListener::bind("127.0.0.1:0").expect("bind");
    probe.local_addr().expect("addr")
}

/// The body of `GET /metrics` (HTTP/1.1, read to the close).
async fn scrape(addr: SocketAddr) -> String {
    let mut conn = tokio::net::TcpStream::connect(addr).await.expect("metrics port");
    conn.write_all(b"GET /metrics HTTP/1.1\r\nHost: metrics\r\nConnection: close\r\n\r\n")
        .await
        .expect("request");
    let mut raw = String::new();
    conn.read_to_string(&mut raw).await.expect("response");
    assert!(raw.starts_with("HTTP/1.1 200"), "{raw}");
    assert!(raw.contains("application/openmetrics-text"), "{raw}");
    raw.split_once("\r\n\r\n").expect("headers end").1.to_owned()
}

/// The value of the sample line starting with `series` (name and labels exactly).
fn sample(text: &str, series: &str) -> Option<f64> {
    text.lines().find_map(|l| {
        l.strip_prefix(series)?
            .strip_prefix(' ')?
            .split(' ')
            .next()?
            .parse()
            .ok()
    })
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn calls_datasets_and_loads_are_counted() {
    let metrics_addr = free_port();
    let data = TempDataDir::new("metrics");
    data.add_demo_v2("demo-v2");
    let server = TestServer::start_with(ratewell_service::config::Config {
        metrics_listen: Some(metrics_addr),
        data_dir: Some(data.path().to_path_buf()),
        ..test_config()
    })
    .await;

    let answer = server
        .rates()
        .lookup_rates(lookup(MK_III, vec![1e4]))
        .await
        .expect("lookup")
        .into_inner();
    let hash = answer.stamp.expect("stamp").content_hash;
    server
        .rates()
        .lookup_rates(lookup(MK_III, vec![-1.0]))
        .await
        .expect_err("a negative temperature");
    // A method no service implements, at a path a hostile client made up.
    let mut raw = tonic::client::Grpc::new(server.channel());
    raw.ready().await.expect("ready");
    let made_up = "/ratewell.v1.Rates/NoSuchMethodX93";
    let unknown = raw
        .unary(
            tonic::Request::new(lookup(MK_III, vec![1e4])),
            made_up.parse().expect("path"),
            tonic_prost::ProstCodec::<pb::LookupRatesRequest, pb::LookupRatesResponse>::default(),
        )
        .await
        .expect_err("unimplemented");
    assert_eq!(unknown.code(), tonic::Code::Unimplemented);
    server
        .admin()
        .load_dataset(pb::LoadDatasetRequest {
            folder: "demo-v2".into(),
        })
        .await
        .expect("load");

    let text = scrape(metrics_addr).await;
    let lookups = "ratewell_calls_total{method=\"ratewell.v1.Rates/LookupRates\"";
    assert_eq!(
        sample(&text, &format!("{lookups},code=\"OK\"}}")),
        Some(1.0),
        "{text}"
    );
    assert_eq!(
        sample(&text, &format!("{lookups},code=\"INVALID_ARGUMENT\"}}")),
        Some(1.0),
        "{text}"
    );
    assert_eq!(
        sample(
            &text,
            "ratewell_calls_total{method=\"unknown\",code=\"UNIMPLEMENTED\"}"
        ),
        Some(1.0),
        "{text}"
    );
    assert!(
        !text.contains("NoSuchMethodX93"),
        "a made-up path became a label: {text}"
    );
    assert_eq!(
        sample(
            &text,
            "ratewell_call_duration_seconds_count{method=\"ratewell.v1.Rates/LookupRates\"}"
        ),
        Some(2.0),
        "{text}"
    );
    assert_eq!(
        sample(&text, "ratewell_dataset_loads_total{result=\"ok\"}"),
        Some(1.0),
        "{text}"
    );
    // The data folder loads at start, so both the embedded 1.0.0 and the folder's 1.1.0 serve.
    let served = text
        .lines()
        .find(|l| l.starts_with("ratewell_dataset_loaded{") && l.contains(&hash))
        .expect("the dataset that answered is listed with its content hash");
    assert!(served.ends_with(" 1"), "{served}");
    assert!(
        text.contains("version=\"1.0.0\"") && text.contains("version=\"1.1.0\""),
        "{text}"
    );
    assert!(
        sample(&text, "ratewell_table_cache_bytes").is_some_and(|b| b > 0.0),
        "{text}"
    );
    assert_eq!(
        sample(&text, "ratewell_engine_calls_in_flight"),
        Some(0.0),
        "{text}"
    );
    assert!(
        sample(&text, "ratewell_grid_cache_capacity_bytes").is_some_and(|b| b > 0.0),
        "{text}"
    );
    assert_eq!(
        sample(&text, "ratewell_grid_cache_evictions_total"),
        Some(0.0),
        "{text}"
    );
}
