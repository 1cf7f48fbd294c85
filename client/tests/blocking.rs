//! The blocking facade against the in-test fake server running on its own thread.

mod common;

use common::{HASH_A, start_in_background};
use ratewell_client::{ClientConfig, DatasetRef, OutsidePolicy, RateQuery, ServingStatus, blocking};

#[test]
fn the_blocking_client_answers_like_the_async_one() {
    let server = start_in_background(HASH_A);
    let config = ClientConfig::new(server.url()).with_dataset(DatasetRef::new("demo").unwrap());
    let client = blocking::Client::new(config).unwrap();
    assert_eq!(client.health().unwrap(), ServingStatus::Serving);
    let tables = client.fetch_tables("X", None).unwrap();
    let remote = client.lookup_rates(&RateQuery::new("X", vec![5e3, 1e4])).unwrap();
    let local = tables.evaluate(&RateQuery::new("X", vec![5e3, 1e4])).unwrap();
    // One evaluation rule for server and client: equal bit for bit.
    assert_eq!(remote.deexcitation, local.deexcitation);
    let v = tables.rate(2, 1, 1e4, OutsidePolicy::Refuse).unwrap();
    assert_eq!(v.deexcitation_cm3_s.to_bits(), local.deexcitation[1].to_bits());
    assert_eq!(client.list_datasets().unwrap()[0].species, vec!["X".to_string()]);
}

#[tokio::test]
async fn the_blocking_client_refuses_to_start_inside_a_runtime() {
    let err = blocking::Client::new(ClientConfig::default()).unwrap_err();
    assert!(err.to_string().contains("inside an async runtime"), "{err}");
}
