//! Temporary data folders for servers started with a `data_dir`: copies of the repository's
//! dataset folders, edited copies, and a deliberately broken dataset whose problem (file, line,
//! field) is known in advance from the text itself.

use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicUsize, Ordering};
use std::time::{SystemTime, UNIX_EPOCH};

static NEXT_ID: AtomicUsize = AtomicUsize::new(0);

/// A path inside the repository (e.g. `service/data/demo-v2`).
pub fn repo_path(relative: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .parent()
        .expect("tests/ sits inside the repository")
        .join(relative)
}

/// A uniquely named folder under [`std::env::temp_dir`], removed with its contents on drop.
#[derive(Debug)]
pub struct TempDataDir {
    path: PathBuf,
}

/// A broken dataset folder and where its one problem is.
#[derive(Debug, Clone)]
pub struct BrokenDataset {
    /// Folder name inside the data folder.
    pub folder: String,
    /// The species file that holds the problem.
    pub file: String,
    /// 1-based line of the broken value.
    pub line: usize,
    /// Field path of the broken value, e.g. `radiative[5].a_per_s`.
    pub field: String,
}

impl TempDataDir {
    /// A new empty folder named after `label`, the process id, a counter and the clock.
    pub fn new(label: &str) -> Self {
        let nanos = SystemTime::now()
            .duration_since(UNIX_EPOCH)
            .map(|d| d.as_nanos())
            .unwrap_or(0);
        let n = NEXT_ID.fetch_add(1, Ordering::Relaxed);
        let path =
            std::env::temp_dir().join(format!("ratewell-e2e-{label}-{}-{n}-{nanos}", std::process::id()));
        std::fs::create_dir_all(&path).expect("create the temporary data folder");
        Self { path }
    }

    /// The folder.
    pub fn path(&self) -> &Path {
        &self.path
    }

    /// Copies the `*.toml` files of dataset folder `source` into folder `name`; returns it.
    pub fn copy_dataset(&self, source: &Path, name: &str) -> PathBuf {
        let target = self.path.join(name);
        std::fs::create_dir_all(&target).expect("create the dataset folder");
        for entry in std::fs::read_dir(source).expect("read the source dataset folder") {
            let path = entry.expect("folder entry").path();
            if path.extension().is_some_and(|e| e == "toml") {
                let file = path.file_name().expect("a file name");
                std::fs::copy(&path, target.join(file)).expect("copy a dataset file");
            }
        }
        target
    }

    /// Copies the repository's `service/data/demo-v2` (demo 1.1.0) into folder `name`.
    pub fn add_demo_v2(&self, name: &str) -> PathBuf {
        self.copy_dataset(&repo_path("service/data/demo-v2"), name)
    }

    /// Replaces the first line of `file` in folder `name` that equals `from` (trimmed) with
    /// `to`; returns that line's 1-based number. Panics if no line matches.
    pub fn replace_line(&self, name: &str, file: &str, from: &str, to: &str) -> usize {
        let path = self.path.join(name).join(file);
        let text = std::fs::read_to_string(&path).expect("read the dataset file");
        let mut found = None;
        let lines: Vec<String> = text
            .lines()
            .enumerate()
            .map(|(i, l)| {
                if found.is_none() && l.trim() == from {
                    found = Some(i + 1);
                    to.to_string()
                } else {
                    l.to_string()
                }
            })
            .collect();
        let line = found.unwrap_or_else(|| panic!("no line {from:?} in {}", path.display()));
        std::fs::write(&path, lines.join("\n") + "\n").expect("write the dataset file");
        line
    }

    /// A copy of demo 1.1.0 in folder `name` with one Einstein A value made negative
    /// (`a_per_s = 1.31` of Mk III, the 4 -> 3 line, becomes -1.31): same id and version as
    /// the good copy, so a load that succeeded would replace it.
    pub fn add_broken(&self, name: &str) -> BrokenDataset {
        let file = "mk-iii.toml";
        self.add_demo_v2(name);
        let line = self.replace_line(name, file, "a_per_s = 1.31", "a_per_s = -1.31");
        let text = std::fs::read_to_string(self.path.join(name).join(file)).expect("read the broken file");
        // Position of the [[radiative]] block holding the line (0-based, as in field paths).
        let blocks_before = text
            .lines()
            .take(line)
            .filter(|l| l.trim() == "[[radiative]]")
            .count();
        BrokenDataset {
            folder: name.to_string(),
            file: file.to_string(),
            line,
            field: format!("radiative[{}].a_per_s", blocks_before - 1),
        }
    }
}

impl Drop for TempDataDir {
    fn drop(&mut self) {
        let _ = std::fs::remove_dir_all(&self.path);
    }
}
