//! Loading datasets from folders and keeping the loaded ones, keyed by id and version.

use std::path::{Path, PathBuf};

use super::MANIFEST_FILE;
use super::error::DatasetError;
use super::hash::SHORT_HASH_LEN;
use super::load::assemble;
use super::model::Dataset;
use super::validate::parse_version;

/// Load the dataset in folder `dir`: its manifest `dataset.toml` and species files.
pub fn load_folder(dir: &Path) -> Result<Dataset, DatasetError> {
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
    for entry in std::fs::read_dir(dir).map_err(io(dir))? {
        let path = entry.map_err(io(dir))?.path();
        let is_toml = path.extension().is_some_and(|e| e == "toml");
        if is_toml
            && path.is_file()
            && let Some(name) = path.file_name().and_then(|n| n.to_str())
        {
            let text = std::fs::read_to_string(&path).map_err(io(&path))?;
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

/// A loaded dataset and where it came from.
#[derive(Debug, Clone)]
pub struct CatalogueEntry {
    /// The dataset.
    pub dataset: Dataset,
    /// Its folder, or a name such as `embedded:demo` for compiled-in data.
    pub origin: String,
}

/// The datasets a server offers, unique by `(id, version)`.
#[derive(Debug, Clone, Default)]
pub struct Catalogue {
    entries: Vec<CatalogueEntry>,
}

impl Catalogue {
    /// An empty catalogue.
    pub fn new() -> Self {
        Catalogue::default()
    }

    /// Load every dataset folder of `data_dir` (see [`find_dataset_dirs`]). Fails when any of
    /// them fails, reporting all failures, so a caller never serves a partial reload.
    pub fn load_dir(data_dir: &Path) -> Result<Self, DatasetError> {
        let mut catalogue = Catalogue::new();
        let mut errors = Vec::new();
        for dir in find_dataset_dirs(data_dir)? {
            let result =
                load_folder(&dir).and_then(|dataset| catalogue.insert(dataset, dir.display().to_string()));
            if let Err(e) = result {
                errors.push(e);
            }
        }
        match errors.len() {
            0 => Ok(catalogue),
            1 => Err(errors.remove(0)),
            _ => Err(DatasetError::Several { errors }),
        }
    }

    /// Add a dataset; refuses a second dataset with the same id and version.
    pub fn insert(&mut self, dataset: Dataset, origin: impl Into<String>) -> Result<(), DatasetError> {
        let origin = origin.into();
        if let Some(first) = self
            .entries
            .iter()
            .find(|e| e.dataset.id == dataset.id && e.dataset.version == dataset.version)
        {
            return Err(DatasetError::Duplicate {
                id: dataset.id,
                version: dataset.version,
                first: first.origin.clone(),
                second: origin,
            });
        }
        self.entries.push(CatalogueEntry { dataset, origin });
        self.entries.sort_by(|a, b| {
            let key = |d: &Dataset| (d.id.clone(), parse_version(&d.version));
            key(&a.dataset).cmp(&key(&b.dataset))
        });
        Ok(())
    }

    /// The dataset with this id and version.
    pub fn get(&self, id: &str, version: &str) -> Option<&Dataset> {
        self.entry(id, version).map(|e| &e.dataset)
    }

    /// The entry (dataset and origin) with this id and version.
    pub fn entry(&self, id: &str, version: &str) -> Option<&CatalogueEntry> {
        self.entries
            .iter()
            .find(|e| e.dataset.id == id && e.dataset.version == version)
    }

    /// The highest version (compared as MAJOR.MINOR.PATCH numbers) of dataset `id`.
    pub fn latest(&self, id: &str) -> Option<&Dataset> {
        self.datasets()
            .filter(|d| d.id == id)
            .max_by_key(|d| parse_version(&d.version))
    }

    /// The dataset whose content hash is `hash`, or starts with `hash` when at least
    /// 16 hex digits are given and exactly one dataset matches.
    pub fn by_hash(&self, hash: &str) -> Option<&Dataset> {
        if hash.len() < SHORT_HASH_LEN {
            return None;
        }
        let mut matches = self.datasets().filter(|d| d.content_hash.starts_with(hash));
        let first = matches.next()?;
        matches.next().is_none().then_some(first)
    }

    /// All datasets, sorted by id then version.
    pub fn datasets(&self) -> impl Iterator<Item = &Dataset> {
        self.entries.iter().map(|e| &e.dataset)
    }

    /// All entries, sorted by id then version.
    pub fn entries(&self) -> &[CatalogueEntry] {
        &self.entries
    }

    /// Number of datasets.
    pub fn len(&self) -> usize {
        self.entries.len()
    }

    /// True when there are no datasets.
    pub fn is_empty(&self) -> bool {
        self.entries.is_empty()
    }
}
