//! Loaded datasets, by id and version. A new version (or a reload of the same one) is built
//! completely before it is swapped in under a short write lock, so readers always see either
//! the old or the new dataset, never a half-built one.

use super::EngineError;
use crate::dataset::{Dataset, validate::parse_version};
use crate::physics::emission::LineTerm;
use crate::physics::populations::RadiativeRate;
use crate::tables::SpeciesTables;
use ratewell_proto::rule::LogGrid;
use std::collections::{BTreeMap, HashMap};
use std::sync::{Arc, RwLock};

/// The dataset an answer came from.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Stamp {
    /// Dataset id.
    pub id: String,
    /// Dataset version.
    pub version: String,
    /// Content hash (hex blake3 of the canonical form).
    pub content_hash: String,
    /// Digest of the default-grid tables built from it (hex blake3).
    pub tables_digest: String,
}

impl Stamp {
    /// "id@version", for messages.
    pub fn label(&self) -> String {
        format!("{}@{}", self.id, self.version)
    }
}

/// What a request names: a dataset id, optionally a version and an expected content hash.
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct Selector {
    /// Dataset id (required).
    pub id: String,
    /// Exact version; `None` selects the newest loaded version.
    pub version: Option<String>,
    /// If set, the selected dataset's hash must equal it.
    pub expected_hash: Option<String>,
}

impl Selector {
    /// The newest loaded version of dataset `id`, whatever its content hash.
    pub fn newest(id: impl Into<String>) -> Self {
        Self {
            id: id.into(),
            ..Self::default()
        }
    }
}

/// Per-species inputs of a population solve that do not depend on (Te, ne).
#[derive(Debug)]
pub struct SolveInputs {
    /// Level energies above the ground level, cm^-1, by 0-based position.
    pub energies_cm1: Vec<f64>,
    /// Radiative rates with 0-based level positions.
    pub radiative: Vec<RadiativeRate>,
    /// Each radiative rate's line constants (same order), validated at install.
    pub lines: Vec<LineTerm>,
}

/// A dataset as served: the data, its default-grid tables and solve inputs.
#[derive(Debug)]
pub struct LoadedDataset {
    /// The immutable dataset.
    pub dataset: Arc<Dataset>,
    /// Who it is, for every answer.
    pub stamp: Stamp,
    /// The default grid its tables were precomputed on.
    pub default_grid: LogGrid,
    /// Default-grid tables by species name.
    pub tables: HashMap<String, Arc<SpeciesTables>>,
    /// Solve inputs by species name.
    pub solve_inputs: HashMap<String, Arc<SolveInputs>>,
    /// Unix seconds when loaded.
    pub loaded_at_unix_s: i64,
    /// Seconds spent precomputing tables.
    pub precompute_seconds: f64,
}

/// Versions of one dataset id, ordered by (major, minor, patch).
type Versions = BTreeMap<(u64, u64, u64), Arc<LoadedDataset>>;

/// The set of loaded datasets.
#[derive(Default)]
pub struct Registry {
    by_id: RwLock<BTreeMap<String, Versions>>,
}

impl Registry {
    /// Installs `loaded`, replacing the same id and version if present; returns the replaced one.
    pub fn install(&self, loaded: Arc<LoadedDataset>) -> Option<Arc<LoadedDataset>> {
        let key = version_key(&loaded.stamp.version);
        let mut map = self.by_id.write().unwrap_or_else(|p| p.into_inner());
        map.entry(loaded.stamp.id.clone())
            .or_default()
            .insert(key, loaded)
    }

    /// Every loaded dataset, by id then version.
    pub fn all(&self) -> Vec<Arc<LoadedDataset>> {
        let map = self.by_id.read().unwrap_or_else(|p| p.into_inner());
        map.values().flat_map(|v| v.values().cloned()).collect()
    }

    /// Whether any loaded dataset has this content hash.
    pub fn holds_hash(&self, content_hash: &str) -> bool {
        self.all().iter().any(|d| d.stamp.content_hash == content_hash)
    }

    /// The dataset a selector names.
    pub fn select(&self, selector: &Selector) -> Result<Arc<LoadedDataset>, EngineError> {
        if selector.id.is_empty() {
            return Err(EngineError::invalid(
                "dataset.id",
                "\"\"",
                "must name a loaded dataset",
            ));
        }
        let map = self.by_id.read().unwrap_or_else(|p| p.into_inner());
        let unknown = || EngineError::UnknownDataset {
            id: selector.id.clone(),
            version: selector.version.clone().unwrap_or_default(),
            available: map
                .values()
                .flat_map(|v| v.values().map(|d| d.stamp.label()))
                .collect::<Vec<_>>()
                .join(", "),
        };
        let versions = map.get(&selector.id).ok_or_else(unknown)?;
        let found = match &selector.version {
            None => versions.values().next_back(),
            Some(v) => versions.values().find(|d| &d.stamp.version == v),
        }
        .ok_or_else(unknown)?;
        if let Some(expected) = &selector.expected_hash
            && !expected.eq_ignore_ascii_case(&found.stamp.content_hash)
        {
            return Err(EngineError::HashMismatch {
                dataset: found.stamp.label(),
                expected: expected.clone(),
                actual: found.stamp.content_hash.clone(),
            });
        }
        Ok(Arc::clone(found))
    }
}

/// Datasets resolved once and then kept, for a sequence of requests that must agree (the
/// messages of one lookup stream). An unpinned selector (no content hash) is resolved at its
/// first use and answered from that same dataset afterwards, even when a reload has swapped
/// the registry meanwhile; a selector naming another id or version is resolved on its own and
/// kept likewise. A pinned selector is resolved afresh each time: its hash already fixes the
/// data. Only datasets that resolved are kept, so at most one per loaded id and version.
#[derive(Default)]
pub struct Snapshots {
    kept: HashMap<(String, Option<String>), Arc<LoadedDataset>>,
}

impl Snapshots {
    /// The dataset `selector` names: the kept one for an unpinned selector resolved before,
    /// else what `select` finds (kept when the selector is unpinned).
    pub fn resolve(
        &mut self,
        selector: &Selector,
        select: impl FnOnce(&Selector) -> Result<Arc<LoadedDataset>, EngineError>,
    ) -> Result<Arc<LoadedDataset>, EngineError> {
        if selector.expected_hash.is_some() {
            return select(selector);
        }
        let key = (selector.id.clone(), selector.version.clone());
        if let Some(loaded) = self.kept.get(&key) {
            return Ok(Arc::clone(loaded));
        }
        let loaded = select(selector)?;
        self.kept.insert(key, Arc::clone(&loaded));
        Ok(loaded)
    }
}

/// Sort key of a version string; versions that do not parse sort first.
fn version_key(version: &str) -> (u64, u64, u64) {
    parse_version(version).unwrap_or((0, 0, 0))
}
