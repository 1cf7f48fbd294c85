//! Start-up with one bad dataset folder: the good folders are served, the bad one is refused
//! on its own, and the log names its file, line and field.

use ratewell_service::config::Config;
use ratewell_service::engine::{FolderOutcome, Selector};
use ratewell_service::server::build_engine;
use std::io::Write;
use std::path::{Path, PathBuf};
use std::sync::{Arc, Mutex};

/// A temporary data folder holding copies of `folders` (paths under tests/data), removed on drop.
struct DataDir(PathBuf);

impl DataDir {
    fn with(label: &str, folders: &[&str]) -> Self {
        let root = std::env::temp_dir().join(format!("ratewell-startup-{label}-{}", std::process::id()));
        let _ = std::fs::remove_dir_all(&root);
        let data = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/data");
        for folder in folders {
            let source = data.join(folder);
            let target = root.join(source.file_name().unwrap());
            std::fs::create_dir_all(&target).unwrap();
            for entry in std::fs::read_dir(&source).unwrap() {
                let path = entry.unwrap().path();
                std::fs::copy(&path, target.join(path.file_name().unwrap())).unwrap();
            }
        }
        Self(root)
    }
}

impl Drop for DataDir {
    fn drop(&mut self) {
        let _ = std::fs::remove_dir_all(&self.0);
    }
}

/// Collects everything the log writes.
#[derive(Clone, Default)]
struct Captured(Arc<Mutex<Vec<u8>>>);

impl Write for Captured {
    fn write(&mut self, buf: &[u8]) -> std::io::Result<usize> {
        self.0.lock().unwrap().extend_from_slice(buf);
        Ok(buf.len())
    }
    fn flush(&mut self) -> std::io::Result<()> {
        Ok(())
    }
}

#[test]
fn a_bad_folder_is_refused_alone_and_logged_with_file_line_and_field() {
    let data = DataDir::with("one-bad", &["real-ions", "bad/broken-species"]);
    let config = Config {
        data_dir: Some(data.0.clone()),
        ..Config::default()
    };
    let log = Captured::default();
    let writer = log.clone();
    let subscriber = tracing_subscriber::fmt()
        .with_ansi(false)
        .with_writer(move || writer.clone())
        .finish();
    let engine =
        tracing::subscriber::with_default(subscriber, || build_engine(&config)).expect("the server starts");

    // The demo and the good folder serve.
    for id in ["demo", "reference-ions"] {
        engine
            .select(&Selector {
                id: id.into(),
                ..Default::default()
            })
            .unwrap_or_else(|e| panic!("{id} not served: {e}"));
    }
    assert!(
        engine
            .select(&Selector {
                id: "broken-species".into(),
                ..Default::default()
            })
            .is_err()
    );
    let outcomes = engine.folder_outcomes();
    assert_eq!(outcomes.len(), 2, "{outcomes:?}");
    assert!(
        matches!(&outcomes[0], (name, FolderOutcome::Refused { serving_earlier: false, .. }) if name == "broken-species")
    );
    assert!(
        matches!(&outcomes[1], (name, FolderOutcome::Loaded { dataset }) if name == "real-ions" && dataset == "reference-ions@1.0.0")
    );

    // ab-iv.toml line 24 holds weight = 0 and line 31 an unknown energy unit (the fixture's
    // own comment); each problem is logged with file, line and field.
    let text = String::from_utf8(log.0.lock().unwrap().clone()).unwrap();
    for words in [
        &[
            "ERROR",
            "dataset folder refused at start-up; the other datasets are served",
            "folder=broken-species",
        ][..],
        &[
            "dataset problem",
            "ab-iv.toml",
            "line=24",
            "field=level[1].weight",
        ][..],
        &[
            "dataset problem",
            "ab-iv.toml",
            "line=31",
            "field=level[2].energy_unit",
        ][..],
        &["WARN", "ratewell.dataset-folders", "NOT_SERVING"][..],
    ] {
        assert!(
            text.lines().any(|l| words.iter().all(|w| l.contains(w))),
            "no log line with {words:?} in:\n{text}"
        );
    }
    assert!(!text.contains("previous data keep serving"), "{text}");
}

#[test]
fn an_unreadable_data_folder_still_stops_the_start() {
    // A data folder that does not exist is a configuration error, not a dataset problem.
    let config = Config {
        data_dir: Some(std::env::temp_dir().join("ratewell-startup-no-such-folder")),
        ..Config::default()
    };
    let error = build_engine(&config).err().expect("refused").to_string();
    assert!(error.contains("ratewell-startup-no-such-folder"), "{error}");
}
