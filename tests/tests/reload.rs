//! Admin LoadDataset end to end: a good folder swaps in atomically; a broken one is refused
//! with FAILED_PRECONDITION naming file, line and field while the old data keep serving with
//! the same content hash; names that leave the data folder are INVALID_ARGUMENT. At start-up
//! a broken folder is refused alone: the others serve and health checking reports it.

use ratewell_e2e::dataset_text::{SpeciesText, species_files, table_count, upsilon_table};
use ratewell_e2e::requests::{MK_III, assert_status, key, lookup, refused, selector};
use ratewell_e2e::{TempDataDir, TestServer, test_config};
use ratewell_proto::pb;
use tonic::Code;
use tonic_health::pb::HealthCheckRequest;
use tonic_health::pb::health_check_response::ServingStatus;

/// A server with the embedded demo (1.0.0) and `data` as its data folder.
async fn server_with(data: &TempDataDir) -> TestServer {
    let config = ratewell_service::config::Config {
        data_dir: Some(data.path().to_path_buf()),
        ..test_config()
    };
    TestServer::start_with(config).await
}

/// Upsilon(3-2) of Mk III at 1e4 K as written in a dataset folder.
fn upsilon_32_at_1e4(folder: &str) -> f64 {
    let (temps, upsilon) =
        upsilon_table(SpeciesText::read(folder, "mk-iii.toml").collision(3, 2)).expect("an effective table");
    upsilon[temps.iter().position(|&t| t == 1e4).expect("1e4 K in the file")]
}

fn load(folder: &str) -> pb::LoadDatasetRequest {
    pb::LoadDatasetRequest {
        folder: folder.to_string(),
    }
}

/// q_ul of Mk III 3-2 at 1e4 K from the newest demo, with the answer's stamp.
async fn q32_newest(server: &TestServer) -> (f64, pb::DatasetStamp) {
    let mut req = lookup(MK_III, vec![1e4]);
    req.transitions = vec![key(3, 2)];
    let answer = server
        .rates()
        .lookup_rates(req)
        .await
        .expect("lookup")
        .into_inner();
    (answer.deexcitation[0], answer.stamp.expect("stamp"))
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn a_good_folder_swaps_in_and_a_broken_one_leaves_the_old_serving() {
    let data = TempDataDir::new("reload");
    let server = server_with(&data).await;
    let (q_before, stamp_before) = q32_newest(&server).await;
    assert_eq!(stamp_before.version, "1.0.0");

    // A new version swaps in and becomes the newest.
    data.add_demo_v2("demo-v2");
    let loaded = server
        .admin()
        .load_dataset(load("demo-v2"))
        .await
        .expect("good folder")
        .into_inner();
    let stamp = loaded.stamp.clone().expect("stamp");
    assert_eq!((stamp.id.as_str(), stamp.version.as_str()), ("demo", "1.1.0"));
    assert_ne!(stamp.content_hash, stamp_before.content_hash);
    assert!(loaded.replaced.is_none(), "1.1.0 was not loaded before");
    let folder = "service/data/demo-v2";
    assert_eq!(loaded.species_count as usize, species_files(folder).len());
    assert_eq!(
        loaded.table_count as usize,
        table_count(folder),
        "one per collision block"
    );
    let (q_after, stamp_after) = q32_newest(&server).await;
    assert_eq!(stamp_after, stamp);
    // q_ul is proportional to Upsilon (Osterbrock & Ferland 2006, eq. 3.20), and 1e4 K is one of
    // the files' own temperatures: the ratio is that of the two files' values there.
    approx::assert_relative_eq!(
        q_after / q_before,
        upsilon_32_at_1e4("service/data/demo-v2") / upsilon_32_at_1e4("service/data/demo"),
        max_relative = 1e-9
    );
    // The old version is still there by name.
    let listed = server
        .catalogue()
        .list_datasets(pb::ListDatasetsRequest {})
        .await
        .expect("list")
        .into_inner();
    let versions: Vec<String> = listed
        .datasets
        .iter()
        .map(|d| d.stamp.clone().expect("stamp").version)
        .collect();
    assert_eq!(versions, ["1.0.0", "1.1.0"]);

    // A broken copy of the same id and version is refused, naming file, line and field.
    let broken = data.add_broken("demo-v2-broken");
    let status = refused(server.admin().load_dataset(load(&broken.folder)).await);
    let located = format!("{}/{}:{}", broken.folder, broken.file, broken.line);
    assert_status(
        &status,
        Code::FailedPrecondition,
        &[
            &located,
            &broken.field,
            "-1.31",
            "must be finite and > 0",
            "previous data keep serving",
        ],
    );
    let (q_kept, stamp_kept) = q32_newest(&server).await;
    assert_eq!(stamp_kept, stamp, "the old data keep serving with the same hash");
    assert_eq!(q_kept.to_bits(), q_after.to_bits());

    // Reloading an edited good copy of 1.1.0 replaces it: a new hash, new values. The edit
    // raises Upsilon(3-2) at 1e4 K by 2 per cent.
    data.add_demo_v2("demo-v2-edited");
    let (temps, upsilon) =
        upsilon_table(SpeciesText::read("service/data/demo-v2", "mk-iii.toml").collision(3, 2))
            .expect("an effective table");
    let at = temps.iter().position(|&t| t == 1e4).expect("1e4 K in the file");
    let mut edited = upsilon.clone();
    edited[at] *= 1.02;
    data.replace_line(
        "demo-v2-edited",
        "mk-iii.toml",
        &format!("upsilon = {upsilon:?}"),
        &format!("upsilon = {edited:?}"),
    );
    let reloaded = server
        .admin()
        .load_dataset(load("demo-v2-edited"))
        .await
        .expect("edited folder")
        .into_inner();
    let new_stamp = reloaded.stamp.expect("stamp");
    assert_eq!(reloaded.replaced, Some(stamp.clone()));
    assert_eq!(new_stamp.version, "1.1.0");
    assert_ne!(new_stamp.content_hash, stamp.content_hash);
    let (q_edited, stamp_edited) = q32_newest(&server).await;
    assert_eq!(stamp_edited, new_stamp);
    approx::assert_relative_eq!(q_edited / q_after, 1.02, max_relative = 1e-9);

    // Reloading unchanged files gives the same hash: the hash is of the content.
    let again = server
        .admin()
        .load_dataset(load("demo-v2-edited"))
        .await
        .expect("same folder again")
        .into_inner();
    assert_eq!(again.stamp, Some(new_stamp.clone()));
    assert_eq!(again.replaced, Some(new_stamp));
    server.shutdown().await.expect("clean stop");
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn folder_names_that_leave_the_data_folder_are_invalid() {
    let data = TempDataDir::new("reload-names");
    data.add_demo_v2("demo-v2");
    let server = server_with(&data).await;
    for name in ["../demo-v2", "..", "sub/demo-v2", "/etc", "", ".", "a\\b"] {
        let status = refused(server.admin().load_dataset(load(name)).await);
        assert_status(
            &status,
            Code::InvalidArgument,
            &["folder = ", "no path separators or .."],
        );
    }
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn missing_or_manifestless_folders_are_refused() {
    let data = TempDataDir::new("reload-missing");
    let server = server_with(&data).await;
    let status = refused(server.admin().load_dataset(load("no-such-folder")).await);
    assert_status(
        &status,
        Code::NotFound,
        &["no-such-folder", "cannot read", "previous data keep serving"],
    );
    std::fs::create_dir(data.path().join("empty")).expect("create an empty folder");
    let status = refused(server.admin().load_dataset(load("empty")).await);
    assert_status(
        &status,
        Code::FailedPrecondition,
        &["no dataset manifest `dataset.toml`", "empty"],
    );
    // The demo is still the only dataset and still serves.
    let (_, stamp) = q32_newest(&server).await;
    assert_eq!(stamp.version, "1.0.0");
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn a_server_without_a_data_folder_refuses_loads() {
    let server = TestServer::start().await;
    let status = refused(server.admin().load_dataset(load("demo-v2")).await);
    assert_status(
        &status,
        Code::InvalidArgument,
        &["folder = \"demo-v2\"", "without a data folder"],
    );
}

/// The health-check status of `service` on `server`.
async fn health_of(server: &TestServer, service: &str) -> i32 {
    server
        .health()
        .check(HealthCheckRequest {
            service: service.to_string(),
        })
        .await
        .unwrap_or_else(|e| panic!("health of {service:?}: {e}"))
        .into_inner()
        .status
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn a_broken_dataset_at_start_up_is_refused_alone_and_reported_by_health() {
    let data = TempDataDir::new("reload-startup");
    let broken = data.add_broken("broken");
    data.add_demo_v2("demo-v2");
    let config = ratewell_service::config::Config {
        data_dir: Some(data.path().to_path_buf()),
        ..test_config()
    };
    // The server starts and serves the good folders (and the demo).
    let server = TestServer::start_with(config).await;
    let (_, stamp) = q32_newest(&server).await;
    assert_eq!(stamp.version, "1.1.0", "the good folder demo-v2 serves");
    let serving = ServingStatus::Serving as i32;
    let not_serving = ServingStatus::NotServing as i32;
    assert_eq!(health_of(&server, "").await, serving);
    assert_eq!(
        health_of(&server, "ratewell.dataset-folder/demo-v2").await,
        serving
    );
    assert_eq!(
        health_of(&server, "ratewell.dataset-folder/broken").await,
        not_serving
    );
    assert_eq!(health_of(&server, "ratewell.dataset-folders").await, not_serving);
    // Loading it again names the problem (file, line, field) ...
    let status = refused(server.admin().load_dataset(load(&broken.folder)).await);
    assert_status(
        &status,
        Code::FailedPrecondition,
        &[
            &format!("{}/{}:{}", broken.folder, broken.file, broken.line),
            &broken.field,
        ],
    );
    // ... and once it is fixed, a load brings every health entry to SERVING.
    data.replace_line(&broken.folder, &broken.file, "a_per_s = -1.31", "a_per_s = 1.31");
    server
        .admin()
        .load_dataset(load(&broken.folder))
        .await
        .expect("the fixed folder loads");
    assert_eq!(
        health_of(&server, "ratewell.dataset-folder/broken").await,
        serving
    );
    assert_eq!(health_of(&server, "ratewell.dataset-folders").await, serving);
    server.shutdown().await.expect("clean stop");
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn pinned_requests_keep_their_dataset_across_a_reload() {
    let data = TempDataDir::new("reload-pins");
    let server = server_with(&data).await;
    let (_, old) = q32_newest(&server).await;
    data.add_demo_v2("demo-v2");
    server
        .admin()
        .load_dataset(load("demo-v2"))
        .await
        .expect("good folder");
    // Asking by version and pinned hash still reaches 1.0.0 after 1.1.0 arrived.
    let mut req = lookup(MK_III, vec![1e4]);
    let mut sel = selector("demo", "1.0.0");
    sel.expected_content_hash = old.content_hash.clone();
    req.dataset = Some(sel);
    let answer = server
        .rates()
        .lookup_rates(req)
        .await
        .expect("pinned 1.0.0")
        .into_inner();
    assert_eq!(answer.stamp, Some(old.clone()));
    // Asking for the newest with the 1.0.0 pin is refused: the newest is now other content.
    let mut req = lookup(MK_III, vec![1e4]);
    let mut sel = selector("demo", "");
    sel.expected_content_hash = old.content_hash.clone();
    req.dataset = Some(sel);
    let status = refused(server.rates().lookup_rates(req).await);
    assert_status(
        &status,
        Code::FailedPrecondition,
        &["demo@1.1.0", &old.content_hash, "expected"],
    );
}
