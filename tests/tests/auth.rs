//! Bearer-token authentication end to end: Admin needs a token always (no token, a wrong one
//! and a right one), a server without a tokens file refuses every Admin call, and with
//! `auth_scope = all` every call but health checking needs one.

use ratewell_e2e::requests::{MK_III, lookup};
use ratewell_e2e::server::{Bearer, TEST_TOKEN};
use ratewell_e2e::{TempDataDir, TestServer, test_config};
use ratewell_proto::pb;
use ratewell_proto::pb::rates_client::RatesClient;
use ratewell_service::auth::Scope;
use tonic::Code;
use tonic_health::pb::HealthCheckRequest;

fn load(folder: &str) -> pb::LoadDatasetRequest {
    pb::LoadDatasetRequest {
        folder: folder.to_string(),
    }
}

async fn server_with(data: &TempDataDir, config: ratewell_service::config::Config) -> TestServer {
    TestServer::start_with(ratewell_service::config::Config {
        data_dir: Some(data.path().to_path_buf()),
        ..config
    })
    .await
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn admin_needs_the_right_token() {
    let data = TempDataDir::new("auth-admin");
    data.add_demo_v2("demo-v2");
    let server = server_with(&data, test_config()).await;

    let none = server
        .admin_with(None)
        .load_dataset(load("demo-v2"))
        .await
        .expect_err("no token");
    assert_eq!(none.code(), Code::Unauthenticated, "{none:?}");
    assert!(
        none.message().contains("admin calls require a bearer token"),
        "{}",
        none.message()
    );

    let wrong = server
        .admin_with(Some("e2e-token-0123456789abcdeX"))
        .load_dataset(load("demo-v2"))
        .await
        .expect_err("wrong token");
    assert_eq!(wrong.code(), Code::Unauthenticated, "{wrong:?}");
    assert!(
        wrong.message().contains("not one this server accepts"),
        "{}",
        wrong.message()
    );
    assert!(
        !wrong.message().contains(TEST_TOKEN),
        "the message never echoes a token"
    );

    let loaded = server
        .admin()
        .load_dataset(load("demo-v2"))
        .await
        .expect("the right token loads the folder")
        .into_inner();
    assert_eq!(loaded.stamp.expect("stamp").version, "1.1.0");

    // Other calls stay open in the default scope.
    server
        .rates()
        .lookup_rates(lookup(MK_III, vec![1e4]))
        .await
        .expect("lookups need no token by default");
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn without_a_tokens_file_admin_is_refused() {
    let data = TempDataDir::new("auth-none");
    data.add_demo_v2("demo-v2");
    let config = ratewell_service::config::Config {
        tokens_file: None,
        ..test_config()
    };
    let server = server_with(&data, config).await;
    let refused = server
        .admin()
        .load_dataset(load("demo-v2"))
        .await
        .expect_err("no tokens configured");
    assert_eq!(refused.code(), Code::Unauthenticated, "{refused:?}");
    assert!(
        refused.message().contains("no tokens file"),
        "{}",
        refused.message()
    );
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn scope_all_guards_every_call_but_health() {
    let config = ratewell_service::config::Config {
        auth_scope: Scope::All,
        ..test_config()
    };
    let server = TestServer::start_with(config).await;
    let refused = server
        .rates()
        .lookup_rates(lookup(MK_III, vec![1e4]))
        .await
        .expect_err("a lookup without a token");
    assert_eq!(refused.code(), Code::Unauthenticated, "{refused:?}");
    assert!(
        refused
            .message()
            .contains("all calls on this server require a bearer token"),
        "{}",
        refused.message()
    );

    let mut authed = RatesClient::with_interceptor(server.channel(), Bearer::new(Some(TEST_TOKEN)));
    let answer = authed
        .lookup_rates(lookup(MK_III, vec![1e4]))
        .await
        .expect("the right token")
        .into_inner();
    assert!(answer.stamp.is_some());

    // Probes carry no credentials: health checking stays open.
    server
        .health()
        .check(HealthCheckRequest {
            service: String::new(),
        })
        .await
        .expect("health needs no token");
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn the_client_library_sends_its_token_on_every_call() {
    use ratewell_client::{Client, ClientConfig, DatasetRef, RateQuery};
    let data = TempDataDir::new("auth-client");
    data.add_demo_v2("v2");
    let config = ratewell_service::config::Config {
        auth_scope: Scope::All,
        ..test_config()
    };
    let server = server_with(&data, config).await;
    let base = ClientConfig::new(server.url()).with_dataset(DatasetRef::new("demo").expect("id"));
    let query = RateQuery::new(MK_III, vec![1e4]);

    let anonymous = Client::new(base.clone()).expect("client");
    let refused = anonymous.lookup_rates(&query).await.expect_err("no token");
    assert_eq!(refused.code(), Some(Code::Unauthenticated), "{refused}");
    assert!(
        !refused.is_unreachable(),
        "a refusal is an answer, not a lost server"
    );

    let wrong = Client::new(base.clone().with_token("not-the-token")).expect("client");
    let refused = wrong.lookup_rates(&query).await.expect_err("wrong token");
    assert_eq!(refused.code(), Some(Code::Unauthenticated), "{refused}");

    let client = Client::new(base.with_token(TEST_TOKEN)).expect("client");
    let answer = client.lookup_rates(&query).await.expect("the right token");
    assert_eq!(answer.temperature_count, 1);
    client
        .fetch_tables(MK_III, None)
        .await
        .expect("tables with the token");
    // Admin too: a reload of a folder of the data folder.
    let loaded = client.load_dataset("v2").await.expect("a reload with the token");
    assert!(loaded.stamp.is_some());
    let refused = anonymous.load_dataset("v2").await.expect_err("no token");
    assert_eq!(refused.code(), Some(Code::Unauthenticated), "{refused}");

    // A token that cannot travel in a header is refused before anything is sent, unechoed.
    let e = ClientConfig::new(server.url())
        .with_token("two words")
        .validate()
        .expect_err("a space");
    assert!(
        e.to_string().starts_with("token = (9 characters, not shown)"),
        "{e}"
    );
}
