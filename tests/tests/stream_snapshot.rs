//! A lookup stream answers from one dataset: an unpinned selector is resolved at the stream's
//! first message, and every later message naming it is answered from that same dataset even
//! while a reload swaps in a new version. Unary lookups running meanwhile each answer from one
//! version or the other, and the newest once the reload is done; a stream message naming the
//! new version explicitly is resolved on its own.

use ratewell_e2e::requests::{MK_III, lookup, selector};
use ratewell_e2e::{TempDataDir, TestServer, test_config};
use ratewell_proto::pb;
use std::collections::BTreeSet;
use std::sync::Arc;
use std::sync::atomic::{AtomicBool, Ordering};

/// Messages the stream answers after the reload has finished.
const AFTER_RELOAD: usize = 50;

fn hash_of(answer: &pb::LookupRatesResponse) -> String {
    answer.stamp.as_ref().expect("stamp").content_hash.clone()
}

/// The i-th stream message: every Mk III transition of the newest demo, unpinned, at a
/// temperature of its own.
fn message(i: usize) -> pb::LookupRatesRequest {
    lookup(MK_III, vec![5e3 + 10.0 * i as f64, 2e4])
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn a_stream_keeps_its_first_dataset_while_a_reload_swaps_in_a_new_version() {
    let data = TempDataDir::new("stream-snapshot");
    let server = TestServer::start_with(ratewell_service::config::Config {
        data_dir: Some(data.path().to_path_buf()),
        ..test_config()
    })
    .await;
    // Added after the start, so only a reload loads it.
    data.add_demo_v2("demo-v2");

    let (tx, mut answers) = server.open_lookup_stream(4).await;
    let mut ask = async |req: pb::LookupRatesRequest| {
        tx.send(req).await.expect("send");
        answers
            .message()
            .await
            .expect("an answer")
            .expect("the stream stays open")
    };
    let first = hash_of(&ask(message(0)).await);

    // Unary lookups all along, each with the stamp of the dataset it was answered from.
    let stop = Arc::new(AtomicBool::new(false));
    let unary = {
        let (mut rates, stop) = (server.rates(), Arc::clone(&stop));
        tokio::spawn(async move {
            let mut hashes = Vec::new();
            while !stop.load(Ordering::Relaxed) {
                let answer = rates
                    .lookup_rates(message(hashes.len()))
                    .await
                    .expect("a unary lookup")
                    .into_inner();
                assert_eq!(answer.deexcitation.len(), 20, "whole answers only");
                hashes.push(hash_of(&answer));
            }
            hashes
        })
    };
    let mut admin = server.admin();
    let reload = tokio::spawn(async move {
        admin
            .load_dataset(pb::LoadDatasetRequest {
                folder: "demo-v2".into(),
            })
            .await
            .expect("demo-v2 loads")
            .into_inner()
    });

    let mut streamed = vec![first.clone()];
    while !reload.is_finished() {
        streamed.push(hash_of(&ask(message(streamed.len())).await));
    }
    let loaded = reload.await.expect("reload task").stamp.expect("stamp");
    assert_eq!(loaded.version, "1.1.0");
    let second = loaded.content_hash;
    assert_ne!(second, first);
    for _ in 0..AFTER_RELOAD {
        streamed.push(hash_of(&ask(message(streamed.len())).await));
    }
    let newest = server
        .rates()
        .lookup_rates(message(0))
        .await
        .expect("unary after the reload")
        .into_inner();
    assert_eq!(hash_of(&newest), second, "unary lookups see the reload");
    stop.store(true, Ordering::Relaxed);
    let unary = unary.await.expect("unary task");

    let distinct: BTreeSet<&String> = streamed.iter().collect();
    assert_eq!(
        distinct,
        BTreeSet::from([&first]),
        "all {} stream answers from the dataset of the first message",
        streamed.len()
    );
    assert!(!unary.is_empty());
    for hash in &unary {
        assert!(
            *hash == first || *hash == second,
            "a unary answer from neither version: {hash}"
        );
    }

    // Another version named in the same stream is resolved on its own; the unpinned selector
    // keeps its dataset.
    let mut named = message(0);
    named.dataset = Some(selector("demo", "1.1.0"));
    assert_eq!(hash_of(&ask(named).await), second);
    assert_eq!(hash_of(&ask(message(1)).await), first);
}
