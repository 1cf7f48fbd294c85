//! Content-hash pinning end to end: a request pinned to a hash the selected dataset does not
//! have is refused by the server with FAILED_PRECONDITION naming both hashes, for every
//! dataset-bound call; the client library turns that refusal into its pin error and hands out
//! no data, and never serves cached tables fetched under another pin.

use ratewell_client::{Client, ClientConfig, ClientError, DatasetRef, RateQuery};
use ratewell_e2e::requests::{MK_III, assert_status, lookup, refused, selector, solve};
use ratewell_e2e::{TempDataDir, TestServer, test_config};
use ratewell_proto::pb;
use tonic::Code;

/// A well-formed hash that no dataset has.
const WRONG: &str = "0123456789abcdef0123456789abcdef0123456789abcdef0123456789abcdef";

fn pinned(hash: &str) -> pb::DatasetSelector {
    let mut s = selector("demo", "");
    s.expected_content_hash = hash.to_string();
    s
}

async fn demo_hash(server: &TestServer) -> String {
    let listed = server
        .catalogue()
        .list_datasets(pb::ListDatasetsRequest {})
        .await
        .expect("list")
        .into_inner();
    listed.datasets[0].stamp.clone().expect("stamp").content_hash
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn the_server_refuses_a_wrong_pin_on_every_dataset_call() {
    let server = TestServer::start().await;
    let actual = demo_hash(&server).await;
    let words = ["demo@1.0.0", "content hash", actual.as_str(), WRONG];

    let mut req = lookup(MK_III, vec![1e4]);
    req.dataset = Some(pinned(WRONG));
    assert_status(
        &refused(server.rates().lookup_rates(req).await),
        Code::FailedPrecondition,
        &words,
    );
    let req = pb::FetchTablesRequest {
        dataset: Some(pinned(WRONG)),
        species: MK_III.into(),
        grid: None,
    };
    assert_status(
        &refused(server.rates().fetch_tables(req).await),
        Code::FailedPrecondition,
        &words,
    );
    let mut req = solve(MK_III, vec![1e4], vec![1e3], false);
    req.dataset = Some(pinned(WRONG));
    assert_status(
        &refused(server.populations().solve_populations(req).await),
        Code::FailedPrecondition,
        &words,
    );
    let req = pb::DescribeSpeciesRequest {
        dataset: Some(pinned(WRONG)),
        species: MK_III.into(),
        energy_unit: 0,
    };
    assert_status(
        &refused(server.catalogue().describe_species(req).await),
        Code::FailedPrecondition,
        &words,
    );
    let req = pb::CompareDatasetsRequest {
        first: Some(selector("demo", "")),
        second: Some(pinned(WRONG)),
        species: vec![],
        grid: None,
    };
    assert_status(
        &refused(server.consistency().compare_datasets(req).await),
        Code::FailedPrecondition,
        &words,
    );

    // The right pin is accepted and the answer carries it.
    let mut req = lookup(MK_III, vec![1e4]);
    req.dataset = Some(pinned(&actual));
    let answer = server
        .rates()
        .lookup_rates(req)
        .await
        .expect("right pin")
        .into_inner();
    assert_eq!(answer.stamp.expect("stamp").content_hash, actual);
}

fn client_pinned_to(server: &TestServer, hash: &str) -> Client {
    let dataset = DatasetRef::new("demo")
        .expect("id")
        .pinned(hash)
        .expect("a well-formed hash");
    Client::new(ClientConfig::new(server.url()).with_dataset(dataset)).expect("client")
}

fn assert_pin_refused(err: ClientError, actual: &str) {
    match &err {
        ClientError::PinRefused {
            expected, message, ..
        } => {
            assert_eq!(expected, WRONG);
            assert!(
                message.contains(actual),
                "server message names the held hash: {message}"
            );
        }
        other => panic!("expected the pin to be refused, got {other:?}"),
    }
    assert!(err.to_string().contains(WRONG), "{err}");
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn the_client_refuses_a_wrong_pin_and_returns_no_data() {
    let server = TestServer::start().await;
    let actual = demo_hash(&server).await;
    let wrong = client_pinned_to(&server, WRONG);
    assert_pin_refused(
        wrong.fetch_tables(MK_III, None).await.expect_err("pinned wrong"),
        &actual,
    );
    assert_pin_refused(
        wrong
            .lookup_rates(&RateQuery::new(MK_III, vec![1e4]))
            .await
            .expect_err("pinned wrong"),
        &actual,
    );
    assert_eq!(
        wrong.cached_table_sets(),
        0,
        "nothing cached from a refused fetch"
    );

    // Tables fetched under the right pin are not handed to a client pinned otherwise, even
    // through a clone that shares the cache.
    let right = client_pinned_to(&server, &actual);
    let tables = right.fetch_tables(MK_III, None).await.expect("right pin");
    assert_eq!(tables.stamp().content_hash, actual);
    let other_pin = right.with_dataset(DatasetRef::new("demo").expect("id").pinned(WRONG).expect("hash"));
    assert_pin_refused(
        other_pin.fetch_tables(MK_III, None).await.expect_err("other pin"),
        &actual,
    );

    // A malformed pin never leaves the process.
    let err = DatasetRef::new("demo")
        .expect("id")
        .pinned("abc")
        .expect_err("not a hash");
    assert!(err.to_string().contains("64 hexadecimal digits"), "{err}");
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn a_pin_on_the_newest_version_is_refused_once_a_newer_one_is_loaded() {
    let data = TempDataDir::new("pinning");
    let config = ratewell_service::config::Config {
        data_dir: Some(data.path().to_path_buf()),
        ..test_config()
    };
    let server = TestServer::start_with(config).await;
    let old = demo_hash(&server).await;
    let job = client_pinned_to(&server, &old);
    job.fetch_tables(MK_III, None)
        .await
        .expect("pinned to what is served");

    data.add_demo_v2("demo-v2");
    server
        .admin()
        .load_dataset(pb::LoadDatasetRequest {
            folder: "demo-v2".into(),
        })
        .await
        .expect("load 1.1.0");
    // The job asks for the newest version: it is now other content, so the server refuses.
    let err = job
        .lookup_rates(&RateQuery::new(MK_III, vec![1e4]))
        .await
        .expect_err("the newest is no longer the pinned content");
    match err {
        ClientError::PinRefused {
            expected, message, ..
        } => {
            assert_eq!(expected, old);
            assert!(message.contains("demo@1.1.0"), "{message}");
        }
        other => panic!("expected the pin to be refused, got {other:?}"),
    }
    // Pinning version and hash together still reaches the old data.
    let by_version = job.with_dataset(
        DatasetRef::new("demo")
            .expect("id")
            .with_version("1.0.0")
            .pinned(&old)
            .expect("hash"),
    );
    let answer = by_version
        .lookup_rates(&RateQuery::new(MK_III, vec![1e4]))
        .await
        .expect("old version by name");
    assert_eq!(answer.stamp.content_hash, old);
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn a_pinned_tables_digest_is_checked_on_answers_and_on_cached_tables() {
    let server = TestServer::start().await;
    let open =
        Client::new(ClientConfig::new(server.url()).with_dataset(DatasetRef::new("demo").expect("id")))
            .expect("client");
    let answer = open
        .lookup_rates(&RateQuery::new(MK_III, vec![1e4]))
        .await
        .expect("lookup");
    let digest = answer.stamp.tables_digest.clone();
    assert_eq!(digest.len(), 64, "every answer carries the tables digest");
    open.fetch_tables(MK_III, None)
        .await
        .expect("tables into the shared cache");

    let right = open.with_dataset(
        DatasetRef::new("demo")
            .expect("id")
            .pin_tables_digest(&digest.to_ascii_uppercase())
            .expect("digest"),
    );
    right
        .lookup_rates(&RateQuery::new(MK_III, vec![1e4]))
        .await
        .expect("the right digest");
    let wrong = open.with_dataset(
        DatasetRef::new("demo")
            .expect("id")
            .pin_tables_digest(WRONG)
            .expect("digest"),
    );
    for error in [
        wrong
            .lookup_rates(&RateQuery::new(MK_III, vec![1e4]))
            .await
            .expect_err("wrong digest"),
        // The same key as the cached set (the digest is not part of it): still checked.
        wrong
            .fetch_tables(MK_III, None)
            .await
            .expect_err("cached tables, wrong digest"),
    ] {
        match &error {
            ClientError::TablesDigestMismatch { expected, got, .. } => {
                assert_eq!(expected, WRONG);
                assert_eq!(*got, digest);
            }
            other => panic!("expected TablesDigestMismatch, got {other:?}"),
        }
        assert_eq!(error.exit_code(), 3);
    }
}
