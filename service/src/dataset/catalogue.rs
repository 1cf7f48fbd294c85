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
    load_folder_within(dir, &Limits::default())
}

/// [`load_folder`] refusing any file over `limits.max_file_bytes` and a folder whose files
/// total over `limits.max_dataset_bytes`, each before it is read.
pub fn load_folder_within(dir: &Path, limits: &Limits) -> Result<Dataset, DatasetError> {
    let io = |path: &Path| {
        let path = path.to_path_buf();
        move |source| DatasetError::Io { path, source }
    };
    let manifest_path = dir.join(MANIFEST_FILE);
    if !manifest_path.is_file() {
        if !dir.is_dir() {
            // Name the real cause (missing folder, permissions) rather than the manifest.
            std::fs::read_dir(dir).map_err(io(dir))?;
        }
        return Err(DatasetError::MissingManifest {
            location: dir.display().to_string(),
        });
    }
    let mut files: Vec<(String, String)> = Vec::new();
    let mut total_bytes = 0u64;
    for entry in std::fs::read_dir(dir).map_err(io(dir))? {
        let path = entry.map_err(io(dir))?.path();
        let is_toml = path.extension().is_some_and(|e| e == "toml");
        if is_toml
            && path.is_file()
            && let Some(name) = path.file_name().and_then(|n| n.to_str())
        {
            let text = super::bounded_read::read_text(&path, name, limits, &mut total_bytes)?;
            files.push((name.to_string(), text));
        }
    }
    files.sort();
    let pairs: Vec<(&str, &str)> = files.iter().map(|(n, t)| (n.as_str(), t.as_str())).collect();
    let prefix = format!("{}/", dir.display());
    assemble(&prefix, &dir.display().to_string(), &pairs)
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
