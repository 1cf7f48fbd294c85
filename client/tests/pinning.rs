//! Content-hash pinning against the in-test fake server (the contract: every
//! answer names dataset id, version and hash; a client can pin a hash and refuses a server
//! that differs). Hashes are invented.

mod common;

use common::{HASH_A, HASH_B, start};
use ratewell_client::{Client, ClientConfig, ClientError, DatasetRef, RateQuery};
use std::sync::atomic::Ordering;

fn client(url: &str, dataset: DatasetRef) -> Client {
    Client::new(ClientConfig::new(url).with_dataset(dataset)).unwrap()
}

#[tokio::test]
async fn the_pin_travels_in_the_selector_and_a_matching_answer_passes() {
    let server = start(HASH_A).await;
    let d = DatasetRef::new("demo")
        .unwrap()
        .with_version("1.0.0")
        .pinned(HASH_A)
        .unwrap();
    let c = client(&server.url(), d);
    let tables = c.fetch_tables("X", None).await.unwrap();
    assert_eq!(tables.stamp().content_hash, HASH_A);
    let sel = server.state.last_selector.lock().unwrap().clone().unwrap();
    assert_eq!(sel.expected_content_hash, HASH_A);
    assert_eq!(sel.version, "1.0.0");
}

#[tokio::test]
async fn an_answer_with_another_hash_is_refused_by_the_client() {
    let server = start(HASH_B).await;
    // This fake ignores expected_content_hash, like a server that does not check it.
    server.state.ignore_pin.store(true, Ordering::SeqCst);
    let c = client(
        &server.url(),
        DatasetRef::new("demo").unwrap().pinned(HASH_A).unwrap(),
    );
    for err in [
        c.fetch_tables("X", None).await.unwrap_err(),
        c.lookup_rates(&RateQuery::new("X", vec![1e4])).await.unwrap_err(),
        c.lookup_rates_stream(&RateQuery::new("X", vec![1e4, 2e4]), 1)
            .await
            .unwrap_err(),
    ] {
        match err {
            ClientError::HashMismatch {
                expected,
                got,
                dataset,
            } => {
                assert_eq!(expected, HASH_A);
                assert_eq!(got, HASH_B);
                assert_eq!(dataset, "demo@1.0.0");
            }
            other => panic!("expected HashMismatch, got {other:?}"),
        }
    }
    // Nothing refused is cached.
    assert_eq!(c.cached_table_sets(), 0);
}

#[tokio::test]
async fn a_server_refusal_of_the_pin_is_typed() {
    let server = start(HASH_B).await;
    let c = client(
        &server.url(),
        DatasetRef::new("demo").unwrap().pinned(HASH_A).unwrap(),
    );
    let err = c.fetch_tables("X", None).await.unwrap_err();
    match err {
        ClientError::PinRefused {
            expected, message, ..
        } => {
            assert_eq!(expected, HASH_A);
            assert!(message.contains("differs"), "{message}");
        }
        other => panic!("expected PinRefused, got {other:?}"),
    }
    // FAILED_PRECONDITION is final: asked once.
    assert_eq!(server.state.count("FetchTables"), 1);
}

#[tokio::test]
async fn an_answer_for_another_version_is_refused() {
    let server = start(HASH_A).await;
    let c = client(
        &server.url(),
        DatasetRef::new("demo").unwrap().with_version("2.0.0"),
    );
    let err = c.describe_species("X", Default::default()).await.unwrap_err();
    assert!(matches!(err, ClientError::StampMismatch { .. }), "{err:?}");
    assert!(err.to_string().contains("demo@2.0.0"), "{err}");
}
