//! Table files end to end: tables fetched from a real server, saved, and loaded with no server
//! give the server's own lookup answer bit for bit; the served table-set digest equals the one
//! the client recomputes; a shared cache folder is filled by one fetch and read by other
//! clients (each with its own lock-file handle, as separate processes have), even after the
//! server is gone.

use ratewell_client::{Client, ClientConfig, DatasetRef, EvalOptions, OutsidePolicy, RateBuffers, RateQuery};
use ratewell_e2e::TestServer;
use ratewell_e2e::requests::{MK_II, MK_III, log_spaced};
use ratewell_proto::pb;
use std::path::PathBuf;

fn scratch(name: &str) -> PathBuf {
    std::env::temp_dir().join(format!("ratewell-e2e-{name}-{}", std::process::id()))
}

fn bits(v: &[f64]) -> Vec<u64> {
    v.iter().map(|x| x.to_bits()).collect()
}

fn client(server: &TestServer, dataset: DatasetRef, dir: Option<&PathBuf>) -> Client {
    let mut config = ClientConfig::new(format!("http://{}", server.addr())).with_dataset(dataset);
    if let Some(dir) = dir {
        config = config.with_cache_dir(dir);
    }
    Client::new(config).expect("client")
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn a_saved_table_file_answers_like_the_server_with_no_server() {
    let server = TestServer::start().await;
    let dir = scratch("saved");
    let demo = DatasetRef::new("demo").unwrap();
    let c = client(&server, demo, None);
    let temps = log_spaced(20.0, 5.0e8, 3_000);
    for species in [MK_III, MK_II] {
        let wire = server
            .rates()
            .fetch_tables(pb::FetchTablesRequest {
                dataset: Some(ratewell_e2e::requests::demo()),
                species: species.to_string(),
                grid: None,
            })
            .await
            .expect("fetch")
            .into_inner();
        let tables = c
            .fetch_tables(species, None)
            .await
            .expect("fetch through the client");
        assert_eq!(wire.table_set_digest.len(), 64, "the server sends the digest");
        assert_eq!(
            tables.digest(),
            wire.table_set_digest,
            "client and server digests agree"
        );
        let path = tables.save(&dir).expect("save");
        let offline = ratewell_client::LocalTables::load(&path).expect("load");
        assert_eq!(offline.stamp(), tables.stamp());
        let served = c
            .lookup_rates(&RateQuery::new(species, temps.clone()))
            .await
            .expect("server lookup");
        let mut out = RateBuffers::default();
        offline
            .evaluate_into(&[], &temps, EvalOptions::default(), &mut out)
            .expect("local evaluation");
        assert_eq!(bits(&out.excitation), bits(&served.excitation), "{species}");
        assert_eq!(bits(&out.deexcitation), bits(&served.deexcitation), "{species}");
        assert_eq!(out.flags, served.flags, "{species}");
    }
    std::fs::remove_dir_all(&dir).unwrap();
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn a_cache_folder_is_filled_once_and_serves_later_clients_without_the_server() {
    let server = TestServer::start().await;
    let dir = scratch("cache-folder");
    let first = client(&server, DatasetRef::new("demo").unwrap(), None)
        .fetch_tables(MK_III, None)
        .await
        .expect("reference fetch");
    let pinned = DatasetRef::new("demo")
        .unwrap()
        .pinned(&first.stamp().content_hash)
        .unwrap();
    // Four clients at once, each with its own in-process cache and lock handle.
    let mut tasks = Vec::new();
    for _ in 0..4 {
        let c = client(&server, pinned.clone(), Some(&dir));
        tasks.push(tokio::spawn(async move { c.fetch_tables(MK_III, None).await }));
    }
    for t in tasks {
        let tables = t.await.unwrap().expect("fetch through the folder");
        assert_eq!(tables.digest(), first.digest());
    }
    let files: Vec<String> = std::fs::read_dir(&dir)
        .unwrap()
        .map(|e| e.unwrap().file_name().into_string().unwrap())
        .filter(|n| n.ends_with(".rwtables"))
        .collect();
    assert_eq!(files.len(), 1, "{files:?}");
    let addr = server.addr();
    server.shutdown().await.expect("clean shutdown");
    // The server is gone: a new client with the same pin is answered from the folder.
    let config = ClientConfig::new(format!("http://{addr}"))
        .with_dataset(pinned)
        .with_cache_dir(&dir);
    let later = Client::new(config)
        .unwrap()
        .fetch_tables(MK_III, None)
        .await
        .expect("from the folder");
    assert_eq!(later.digest(), first.digest());
    let v = later.rate(2, 1, 1.0e4, OutsidePolicy::Refuse).unwrap();
    assert_eq!(v, first.rate(2, 1, 1.0e4, OutsidePolicy::Refuse).unwrap());
    std::fs::remove_dir_all(&dir).unwrap();
}
