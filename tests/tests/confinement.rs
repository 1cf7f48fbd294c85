//! LoadDataset stays inside the data folder: a folder or a file that is a symbolic link out of
//! it is refused without showing where it leads or anything read there; links that stay inside
//! load; error messages show paths relative to the data folder only.

use ratewell_e2e::requests::{assert_status, refused};
use ratewell_e2e::{TempDataDir, TestServer, test_config};
use ratewell_proto::pb;
use std::os::unix::fs::symlink;
use tonic::Code;

fn load(folder: &str) -> pb::LoadDatasetRequest {
    pb::LoadDatasetRequest {
        folder: folder.to_string(),
    }
}

async fn server_with(data: &TempDataDir) -> TestServer {
    TestServer::start_with(ratewell_service::config::Config {
        data_dir: Some(data.path().to_path_buf()),
        ..test_config()
    })
    .await
}

/// The message says nothing of `outside` (its path or a secret written there).
fn assert_leaks_nothing(message: &str, outside: &TempDataDir, secret: &str) {
    let outside_path = outside.path().display().to_string();
    assert!(!message.contains(&outside_path), "path leaked: {message}");
    assert!(!message.contains(secret), "contents leaked: {message}");
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn links_out_of_the_data_folder_are_refused_without_leaks() {
    let data = TempDataDir::new("confine-data");
    let outside = TempDataDir::new("confine-outside");
    let secret = "outside-secret-7f3a";
    // A whole dataset outside, reached through a folder link.
    outside.add_demo_v2("elsewhere");
    symlink(outside.path().join("elsewhere"), data.path().join("linked-out")).expect("folder link");
    // A dataset whose species file is a link to a file outside holding a secret.
    let inner = data.add_demo_v2("file-link");
    let victim = std::fs::read_dir(&inner)
        .expect("folder")
        .map(|e| e.expect("entry").path())
        .find(|p| p.extension().is_some_and(|e| e == "toml") && !p.ends_with("dataset.toml"))
        .expect("a species file");
    let secret_file = outside.path().join("secret.toml");
    std::fs::write(&secret_file, format!("{secret} = [\n")).expect("secret");
    std::fs::remove_file(&victim).expect("remove");
    symlink(&secret_file, &victim).expect("file link");
    // A link that stays inside the data folder is fine.
    data.add_demo_v2("real");
    symlink(data.path().join("real"), data.path().join("alias")).expect("inner link");

    let server = server_with(&data).await;

    let status = refused(server.admin().load_dataset(load("linked-out")).await);
    assert_status(
        &status,
        Code::FailedPrecondition,
        &["linked-out is a symbolic link leading out"],
    );
    assert_leaks_nothing(status.message(), &outside, secret);

    let status = refused(server.admin().load_dataset(load("file-link")).await);
    let shown = format!(
        "file-link/{}",
        victim.file_name().expect("name").to_string_lossy()
    );
    assert_status(&status, Code::FailedPrecondition, &[&shown, "symbolic link"]);
    assert_leaks_nothing(status.message(), &outside, secret);

    let loaded = server
        .admin()
        .load_dataset(load("alias"))
        .await
        .expect("a link inside the data folder loads")
        .into_inner();
    assert_eq!(loaded.stamp.expect("stamp").version, "1.1.0");
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn load_errors_show_paths_relative_to_the_data_folder() {
    let data = TempDataDir::new("confine-relative");
    let broken = data.add_broken("broken");
    let server = server_with(&data).await;
    let status = refused(server.admin().load_dataset(load(&broken.folder)).await);
    assert_eq!(status.code(), Code::FailedPrecondition, "{status:?}");
    let root = data.path().display().to_string();
    assert!(
        !status.message().contains(&root),
        "absolute path shown: {}",
        status.message()
    );
    assert!(
        status.message().contains(&format!("{}/", broken.folder)),
        "the folder is named relative to the data folder: {}",
        status.message()
    );
}
