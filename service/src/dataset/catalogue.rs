//! Loading datasets from folders (the engine's registry keeps the loaded ones).

use std::path::{Path, PathBuf};

use super::MANIFEST_FILE;
use super::error::DatasetError;
use super::load::assemble;
use super::model::Dataset;
use crate::limits::Limits;

/// Load the dataset in folder `dir`: its manifest `dataset.toml` and species files, under the
/// default [`Limits`].
pub fn load_folder(dir: &Path) -> Result<Dataset, DatasetError> {
    load_folder_limited(dir, &Limits::default())
}

/// [`load_folder`] refusing any file over `limits.max_file_bytes` and a folder whose files
/// total over `limits.max_dataset_bytes`, each before it is read.
pub fn load_folder_limited(dir: &Path, limits: &Limits) -> Result<Dataset, DatasetError> {
    read_folder(dir, &dir.display().to_string(), None, limits)
}

/// Load the dataset in folder `name` of the data folder `root` under `limits`, confined to
/// `root`: the folder and its files may be symbolic links only to places inside it, and every
/// path in an error is shown relative to it (no absolute paths, nothing read from outside).
pub fn load_folder_confined(root: &Path, name: &str, limits: &Limits) -> Result<Dataset, DatasetError> {
    let inside = std::fs::canonicalize(root).map_err(|source| DatasetError::Io {
        path: PathBuf::from("(the data folder)"),
        source,
    })?;
    let dir = root.join(name);
    confine(&dir, name, &inside)?;
    read_folder(&dir, name, Some(&inside), limits)
}

/// Refuses `path` (shown as `shown`) when it is a symbolic link whose target is outside
/// `inside` (a canonical folder). A missing path passes: reading it reports the real cause.
fn confine(path: &Path, shown: &str, inside: &Path) -> Result<(), DatasetError> {
    let is_link = std::fs::symlink_metadata(path).is_ok_and(|m| m.file_type().is_symlink());
    if !is_link {
        return Ok(());
    }
    match std::fs::canonicalize(path) {
        Ok(target) if target.starts_with(inside) => Ok(()),
        _ => Err(DatasetError::Escapes {
            path: shown.to_owned(),
        }),
    }
}

/// Reads folder `dir` under `limits`, naming it `shown` in errors; with `inside`, symbolic
/// links leading out of that canonical folder are refused.
fn read_folder(
    dir: &Path,
    shown: &str,
    inside: Option<&Path>,
    limits: &Limits,
) -> Result<Dataset, DatasetError> {
    let io = |shown: String| {
        let path = PathBuf::from(shown);
        move |source| DatasetError::Io { path, source }
    };
    let manifest_path = dir.join(MANIFEST_FILE);
    if !manifest_path.is_file() {
        if !dir.is_dir() {
            // Name the real cause (missing folder, permissions) rather than the manifest.
            std::fs::read_dir(dir).map_err(io(shown.to_owned()))?;
        }
        return Err(DatasetError::MissingManifest {
            location: shown.to_owned(),
        });
    }
    let mut files: Vec<(String, String)> = Vec::new();
    let mut total_bytes = 0u64;
    for entry in std::fs::read_dir(dir).map_err(io(shown.to_owned()))? {
        let path = entry.map_err(io(shown.to_owned()))?.path();
        let is_toml = path.extension().is_some_and(|e| e == "toml");
        if is_toml && let Some(name) = path.file_name().and_then(|n| n.to_str()) {
            let shown_file = format!("{shown}/{name}");
            if let Some(inside) = inside {
                confine(&path, &shown_file, inside)?;
            }
            if !path.is_file() {
                continue;
            }
            let text = super::bounded_read::read_text(&path, &shown_file, limits, &mut total_bytes)?;
            files.push((name.to_string(), text));
        }
    }
    files.sort();
    let pairs: Vec<(&str, &str)> = files.iter().map(|(n, t)| (n.as_str(), t.as_str())).collect();
    let prefix = format!("{shown}/");
    assemble(&prefix, shown, &pairs)
}

/// The sub-folders of `data_dir` that hold a manifest `dataset.toml`, sorted by path.
pub fn find_dataset_dirs(data_dir: &Path) -> Result<Vec<PathBuf>, DatasetError> {
    let io = |source| DatasetError::Io {
        path: data_dir.to_path_buf(),
        source,
    };
    let mut dirs = Vec::new();
    for entry in std::fs::read_dir(data_dir).map_err(io)? {
        let path = entry.map_err(io)?.path();
        if path.is_dir() && path.join(MANIFEST_FILE).is_file() {
            dirs.push(path);
        }
    }
    dirs.sort();
    Ok(dirs)
}
