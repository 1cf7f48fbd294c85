//! The audit trail, read from a real server process's JSON log: every Admin call is one line
//! naming the caller (never the token), the folder and the result; refused Admin calls are each
//! logged; a flood of refused calls to the other services gives at most one line per ten
//! seconds, with their count.

use ratewell_client::{Client, ClientConfig, DatasetRef, RateQuery, RetryPolicy};
use ratewell_e2e::child::ServerProcess;
use ratewell_e2e::requests::MK_III;
use ratewell_e2e::server::{TEST_CALLER, TEST_TOKEN, test_tokens_file};
use ratewell_e2e::{TempDataDir, server_binary};
use std::time::Duration;

/// The audit events of `logs` as JSON values.
fn audit_events(logs: &[String]) -> Vec<serde_json::Value> {
    logs.iter()
        .filter_map(|l| serde_json::from_str::<serde_json::Value>(l).ok())
        .filter(|e| e["target"] == "ratewell::audit")
        .collect()
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn admin_calls_and_refusals_leave_an_audit_trail_without_tokens() {
    let data = TempDataDir::new("audit");
    data.add_demo_v2("v2");
    let tokens = test_tokens_file().to_string_lossy().into_owned();
    let dir = data.path().to_string_lossy().into_owned();
    let server = ServerProcess::spawn(
        server_binary!(),
        &[
            "--tokens-file",
            &tokens,
            "--auth-scope",
            "all",
            "--data-dir",
            &dir,
        ],
    );
    let config = ClientConfig::new(server.url())
        .with_dataset(DatasetRef::new("demo").expect("id"))
        .with_retry(RetryPolicy {
            max_attempts: 1,
            ..RetryPolicy::default()
        });
    let operator = Client::new(config.clone().with_token(TEST_TOKEN)).expect("client");
    let anonymous = Client::new(config).expect("client");

    operator
        .load_dataset("v2")
        .await
        .expect("a reload by the operator");
    anonymous.load_dataset("v2").await.expect_err("no token");
    for _ in 0..50 {
        anonymous
            .lookup_rates(&RateQuery::new(MK_III, vec![1e4]))
            .await
            .expect_err("every call needs a token");
    }
    // The log thread may lag the calls a little.
    tokio::time::sleep(Duration::from_millis(500)).await;
    let logs = server.logs();
    let events = audit_events(&logs);

    let ok: Vec<_> = events
        .iter()
        .filter(|e| e["fields"]["message"] == "admin call" && e["fields"]["result"] == "ok")
        .collect();
    assert_eq!(ok.len(), 1, "{events:#?}");
    assert_eq!(ok[0]["fields"]["caller"], TEST_CALLER);
    assert_eq!(ok[0]["fields"]["folder"], "\"v2\"");

    let admin_refused = events
        .iter()
        .filter(|e| {
            e["fields"]["message"] == "call refused before its handler"
                && e["fields"]["method"]
                    .as_str()
                    .is_some_and(|m| m.contains("Admin/LoadDataset"))
        })
        .count();
    assert_eq!(admin_refused, 1, "{events:#?}");

    // Fifty refused lookups within a second: one line, not fifty.
    let flood: Vec<_> = events
        .iter()
        .filter(|e| {
            e["fields"]["message"]
                .as_str()
                .is_some_and(|m| m.starts_with("calls refused"))
        })
        .collect();
    assert_eq!(flood.len(), 1, "{events:#?}");
    assert_eq!(flood[0]["fields"]["refused_since_last_line"], 1);

    assert!(
        logs.iter().all(|l| !l.contains(TEST_TOKEN)),
        "a token appeared in the log"
    );
}
