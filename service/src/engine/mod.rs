//! The engine: the pure core behind the gRPC handlers. It owns the loaded datasets and the
//! table cache and answers catalogue, lookup, population and comparison queries in core types
//! (no tonic, no wire messages). Handlers convert, call one method here, and convert back.
//!
//! - [`registry`]: loaded datasets by id and version, swapped in atomically.
//! - [`folders`]: the last load outcome of each data-folder entry.
//! - [`lookup`]: batched rate-coefficient lookups.
//! - [`solve`]: population solves over lists or grids of (Te, ne), in parallel.
//! - [`compare`]: consistency comparison of two datasets.
//! - [`admit`]: dataset and request limits, checked before the work they guard.
//! - [`cancel`]: the stop flag long computations read between pieces of work.
//! - [`units`]: request and answer units.
//! - [`error`]: the engine's error enum.

pub mod admit;
pub mod cancel;
pub mod compare;
pub mod density_check;
pub mod describe;
pub mod error;
pub mod folders;
pub mod lookup;
pub mod registry;
pub mod solve;
pub mod units;

pub use cancel::Cancel;
pub use error::EngineError;
pub use folders::{FolderOutcome, FolderRecord};
pub use registry::{LoadedDataset, Registry, Selector, Snapshots, SolveInputs, Stamp};

use crate::dataset::{self, Dataset};
use crate::limits::Limits;
use crate::physics::PhysicsError;
use crate::physics::elementary::log10;
use crate::physics::emission::line_terms;
use crate::physics::populations::RadiativeRate;
use crate::tables::{
    CacheStats, SpeciesTables, TableCache, TableError, TableKey, build_species_tables,
    build_species_tables_until,
};
use ratewell_proto::rule::LogGrid;
use std::collections::HashMap;
use std::path::{Path, PathBuf};
use std::sync::Arc;
use std::time::{Instant, SystemTime, UNIX_EPOCH};

/// A temperature grid request: range in K and points per decade.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct GridSpec {
    /// Lowest temperature, K.
    pub t_min_k: f64,
    /// Highest temperature, K.
    pub t_max_k: f64,
    /// Knots per decade of temperature.
    pub points_per_decade: u32,
}

impl GridSpec {
    /// The uniform log grid this spec describes: the evaluation rule's `LogGrid::from_range`
    /// (which also checks the spec and names what is wrong), with log10 taken by
    /// [`crate::physics::elementary::log10`] so the grid, and every table built on it, has the
    /// same bits on every platform.
    pub fn to_grid(self) -> Result<LogGrid, EngineError> {
        let checked = LogGrid::from_range(self.t_min_k, self.t_max_k, self.points_per_decade)?;
        let step = checked.log10_t_step();
        let log10_t_min_k = log10(self.t_min_k);
        let decades = log10(self.t_max_k) - log10_t_min_k;
        // The knot count rule of from_range: the first knot at or above t_max_k.
        let intervals = (decades / step - 1e-9).ceil().max(1.0);
        Ok(LogGrid::new(log10_t_min_k, step, intervals as usize + 1)?)
    }
}

/// Engine settings (a subset of the server configuration).
#[derive(Debug, Clone)]
pub struct EngineConfig {
    /// Grid on which every species' tables are precomputed at load.
    pub default_grid: GridSpec,
    /// Folder that `load_folder` names are resolved in.
    pub data_dir: Option<PathBuf>,
    /// Dataset, request, cache and connection limits.
    pub limits: Limits,
    /// Largest encoded answer, bytes (answers estimated over it are refused before work).
    pub max_answer_bytes: usize,
    /// Largest transitions x temperatures in one lookup.
    pub max_lookup_values: usize,
    /// Largest number of (Te, ne) points in one population solve.
    pub max_solve_points: usize,
}

impl Default for EngineConfig {
    fn default() -> Self {
        Self {
            // 10 K to 1e9 K covers neutral-gas, nebular, coronal and fusion-edge plasmas.
            default_grid: GridSpec {
                t_min_k: 10.0,
                t_max_k: 1e9,
                points_per_decade: 20,
            },
            data_dir: None,
            limits: Limits::default(),
            max_answer_bytes: 64 * 1024 * 1024,
            max_lookup_values: 4_000_000,
            max_solve_points: 100_000,
        }
    }
}

/// What a successful load did.
#[derive(Debug, Clone)]
pub struct LoadReport {
    /// The loaded dataset.
    pub stamp: Stamp,
    /// The dataset it replaced (same id and version), if any.
    pub replaced: Option<Stamp>,
    /// Number of species.
    pub species_count: usize,
    /// Number of tables built.
    pub table_count: usize,
    /// Seconds spent building tables.
    pub precompute_seconds: f64,
}

/// One folder of the data folder and how loading it went.
pub type FolderLoad = (String, Result<LoadReport, EngineError>);

/// The shared core. Cheap to clone.
#[derive(Clone)]
pub struct Engine {
    inner: Arc<Inner>,
}

struct Inner {
    config: EngineConfig,
    registry: Registry,
    cache: TableCache,
    folders: FolderRecord,
}

impl Engine {
    /// An engine with no datasets loaded.
    pub fn new(config: EngineConfig) -> Self {
        let cache = TableCache::new(config.limits.table_cache_bytes);
        Self {
            inner: Arc::new(Inner {
                config,
                registry: Registry::default(),
                cache,
                folders: FolderRecord::default(),
            }),
        }
    }

    /// The engine's settings.
    pub fn config(&self) -> &EngineConfig {
        &self.inner.config
    }

    /// Precomputes tables for `dataset` and swaps it in. CPU-heavy: call from a blocking thread.
    /// On error nothing changes.
    pub fn install(&self, dataset: Dataset) -> Result<LoadReport, EngineError> {
        let started = Instant::now();
        admit::check_dataset(&self.inner.config.limits, &dataset).map_err(dataset::DatasetError::from)?;
        let grid = self.inner.config.default_grid.to_grid()?;
        let mut tables = HashMap::new();
        let mut solve_inputs = HashMap::new();
        for species in &dataset.species {
            tables.insert(
                species.name.clone(),
                Arc::new(build_species_tables(species, grid)?),
            );
            let inputs = solve_inputs_for(species).map_err(|source| EngineError::SpeciesData {
                species: species.name.clone(),
                source,
            })?;
            solve_inputs.insert(species.name.clone(), Arc::new(inputs));
        }
        let precompute_seconds = started.elapsed().as_secs_f64();
        let stamp = Stamp {
            id: dataset.id.clone(),
            version: dataset.version.clone(),
            content_hash: dataset.content_hash.clone(),
            tables_digest: tables_digest(&dataset, &tables),
        };
        // Default-grid tables live in the loaded dataset, outside the evicting cache.
        let table_count = tables.values().map(|t| t.tables.len()).sum();
        let species_count = dataset.species.len();
        let loaded = Arc::new(LoadedDataset {
            dataset: Arc::new(dataset),
            stamp: stamp.clone(),
            default_grid: grid,
            tables,
            solve_inputs,
            loaded_at_unix_s: SystemTime::now()
                .duration_since(UNIX_EPOCH)
                .map(|d| d.as_secs() as i64)
                .unwrap_or(0),
            precompute_seconds,
        });
        let replaced = self.inner.registry.install(loaded);
        if let Some(old) = &replaced
            && !self.inner.registry.holds_hash(&old.stamp.content_hash)
        {
            self.inner.cache.remove_dataset(&old.stamp.content_hash);
        }
        let report = LoadReport {
            stamp,
            replaced: replaced.map(|r| r.stamp.clone()),
            species_count,
            table_count,
            precompute_seconds,
        };
        // The load's transient memory (parsed files, build buffers, a replaced dataset no
        // request holds any more) is free now; hand it back rather than keep the peak.
        crate::memory::release_free_memory();
        Ok(report)
    }

    /// Loads the embedded demo dataset.
    pub fn load_demo(&self) -> Result<LoadReport, EngineError> {
        self.install(dataset::demo_dataset()?)
    }

    /// Loads a dataset folder from disk (any path).
    pub fn load_path(&self, path: &Path) -> Result<LoadReport, EngineError> {
        self.install(dataset::load_folder_limited(path, &self.inner.config.limits)?)
    }

    /// Loads every dataset folder of the configured data folder (each sub-folder holding a
    /// `dataset.toml`, by name), recording each outcome ([`Self::folder_outcomes`]). A folder
    /// that fails is refused on its own: the others load. Errs only when the data folder itself
    /// cannot be read; without a data folder there is nothing to load.
    pub fn load_data_folder(&self) -> Result<Vec<FolderLoad>, EngineError> {
        let Some(root) = &self.inner.config.data_dir else {
            return Ok(Vec::new());
        };
        let mut outcomes = Vec::new();
        for path in dataset::find_dataset_dirs(root)? {
            let name = path
                .file_name()
                .map(|n| n.to_string_lossy().into_owned())
                .unwrap_or_else(|| path.display().to_string());
            let result = self.load_folder(&name);
            outcomes.push((name, result));
        }
        Ok(outcomes)
    }

    /// The last load outcome of every data-folder entry loaded by name so far.
    pub fn folder_outcomes(&self) -> Vec<(String, FolderOutcome)> {
        self.inner.folders.all()
    }

    /// Loads folder `name` under the configured data folder and records the outcome. `name`
    /// must be a plain folder name (no separators, no `..`).
    pub fn load_folder(&self, name: &str) -> Result<LoadReport, EngineError> {
        let result = self.load_folder_unrecorded(name);
        match &result {
            Ok(report) => self.inner.folders.loaded(name, report.stamp.label()),
            Err(EngineError::InvalidArgument { .. }) => {}
            Err(EngineError::Load(e)) => self.inner.folders.refused(name, e.to_string()),
            Err(e) => self.inner.folders.refused(name, e.to_string()),
        }
        result
    }

    fn load_folder_unrecorded(&self, name: &str) -> Result<LoadReport, EngineError> {
        let Some(root) = &self.inner.config.data_dir else {
            return Err(EngineError::invalid(
                "folder",
                format!("{name:?}"),
                "the server was started without a data folder (set data_dir), so only the embedded demo is available",
            ));
        };
        let plain = !name.is_empty()
            && name != "."
            && name != ".."
            && !name.contains(['/', '\\'])
            && !name.contains('\0');
        if !plain {
            return Err(EngineError::invalid(
                "folder",
                format!("{name:?}"),
                "must be one folder name inside the data folder (no path separators or ..)",
            ));
        }
        self.install(dataset::load_folder_confined(
            root,
            name,
            &self.inner.config.limits,
        )?)
    }

    /// Every loaded dataset.
    pub fn datasets(&self) -> Vec<Arc<LoadedDataset>> {
        self.inner.registry.all()
    }

    /// The dataset a selector names.
    pub fn select(&self, selector: &Selector) -> Result<Arc<LoadedDataset>, EngineError> {
        self.inner.registry.select(selector)
    }

    /// Approximate heap bytes held by tables: every loaded dataset's default-grid tables plus
    /// the cache of other grids.
    pub fn table_bytes(&self) -> usize {
        self.resident_table_bytes() + self.inner.cache.stats().bytes as usize
    }

    /// Heap bytes of the default-grid tables of the loaded datasets (never evicted).
    pub fn resident_table_bytes(&self) -> usize {
        self.datasets()
            .iter()
            .flat_map(|d| d.tables.values())
            .map(|t| t.table_bytes())
            .sum()
    }

    /// The evicting cache of tables on non-default grids: bytes, entries, evictions.
    pub fn cache_stats(&self) -> CacheStats {
        self.inner.cache.stats()
    }

    /// The tables of `species` in `loaded` on `grid` (default grid when `None`), building and
    /// caching them on first use. May be CPU-heavy for a new grid: call from a blocking thread.
    pub fn species_tables(
        &self,
        loaded: &LoadedDataset,
        species: &str,
        grid: Option<GridSpec>,
    ) -> Result<Arc<SpeciesTables>, EngineError> {
        self.species_tables_cancellable(loaded, species, grid, &Cancel::default())
    }

    /// [`Self::species_tables`], checking `cancel` before each table of a build (and while
    /// waiting for another call's build of the same tables), and stopping with
    /// [`EngineError::Cancelled`] once it is set. A stopped build leaves nothing in the cache.
    pub fn species_tables_cancellable(
        &self,
        loaded: &LoadedDataset,
        species: &str,
        grid: Option<GridSpec>,
        cancel: &Cancel,
    ) -> Result<Arc<SpeciesTables>, EngineError> {
        let default = loaded
            .tables
            .get(species)
            .ok_or_else(|| unknown_species_error(loaded, species))?;
        let Some(spec) = grid else {
            return Ok(Arc::clone(default));
        };
        let grid = spec.to_grid()?;
        if grid == loaded.default_grid {
            return Ok(Arc::clone(default));
        }
        let key = TableKey::new(&loaded.stamp.content_hash, species, &grid);
        if let Some(t) = self.inner.cache.get(&key) {
            return Ok(t);
        }
        admit::check_table_build(&self.inner.config.limits, grid.knots(), default.tables.len())?;
        let data = loaded
            .dataset
            .species(species)
            .ok_or_else(|| unknown_species_error(loaded, species))?;
        let build = || match build_species_tables_until(data, grid, &|| cancel.is_cancelled()) {
            Ok(tables) => Ok(Arc::new(tables)),
            Err(TableError::Stopped) => Err(EngineError::Cancelled),
            Err(other) => Err(other.into()),
        };
        self.inner.cache.get_or_build(key, build, || cancel.check())
    }

    /// Knots of the grid `spec` names (the default grid's when `None`), for limits checked
    /// before any table is built.
    pub fn knots_of(&self, loaded: &LoadedDataset, spec: Option<GridSpec>) -> Result<usize, EngineError> {
        Ok(match spec {
            None => loaded.default_grid.knots(),
            Some(s) => s.to_grid()?.knots(),
        })
    }
}

/// The not-found error for a species missing from `loaded`.
pub fn unknown_species_error(loaded: &LoadedDataset, species: &str) -> EngineError {
    EngineError::UnknownSpecies {
        dataset: loaded.stamp.label(),
        species: species.to_owned(),
        available: loaded
            .dataset
            .species
            .iter()
            .map(|s| s.name.as_str())
            .collect::<Vec<_>>()
            .join(", "),
    }
}

/// blake3 over the species names and their default-grid table-set digests
/// ([`ratewell_proto::digest::table_set_digest`]), species in dataset order.
fn tables_digest(dataset: &Dataset, tables: &HashMap<String, Arc<SpeciesTables>>) -> String {
    let mut hasher = blake3::Hasher::new();
    for species in &dataset.species {
        hasher.update(species.name.as_bytes());
        hasher.update(&[0]);
        if let Some(t) = tables.get(&species.name) {
            hasher.update(t.digest.as_bytes());
        }
        hasher.update(&[0]);
    }
    hasher.finalize().to_hex().to_string()
}

fn solve_inputs_for(species: &dataset::Species) -> Result<SolveInputs, PhysicsError> {
    let ground = species.levels.first().map_or(0.0, |l| l.energy_cm1);
    let energies_cm1: Vec<f64> = species.levels.iter().map(|l| l.energy_cm1 - ground).collect();
    let radiative: Vec<RadiativeRate> = species
        .radiative
        .iter()
        .filter_map(|r| {
            Some(RadiativeRate {
                upper: species.level_position(r.upper)?,
                lower: species.level_position(r.lower)?,
                a_s: r.a_per_s,
            })
        })
        .collect();
    let lines = line_terms(&energies_cm1, &radiative)?;
    Ok(SolveInputs {
        energies_cm1,
        radiative,
        lines,
    })
}

#[cfg(test)]
mod tests {
    use super::compare::CompareQuery;
    use super::lookup::{LOOKUP_BLOCK_VALUES, LookupQuery};
    use super::units::{RateUnit, TemperatureUnit};
    use super::*;
    use ratewell_proto::rule::{Direction, OutsidePolicy, RateOutputs, RateTable, Threads, write_rows};

    /// The demo (1.0.0) and its second version (1.1.0) from the repository's data folder.
    fn engine_with_both_versions() -> Engine {
        let engine = Engine::new(EngineConfig::default());
        engine.load_demo().expect("demo loads");
        engine
            .load_path(&Path::new(env!("CARGO_MANIFEST_DIR")).join("data/demo-v2"))
            .expect("demo-v2 loads");
        engine
    }

    fn demo(version: Option<&str>, expected_hash: Option<&str>) -> Selector {
        Selector {
            id: "demo".into(),
            version: version.map(str::to_owned),
            expected_hash: expected_hash.map(str::to_owned),
        }
    }

    /// A grid other than the default one (so tables are built for it), 10 K to 1e9 K.
    fn custom_grid() -> GridSpec {
        GridSpec {
            t_min_k: 10.0,
            t_max_k: 1e9,
            points_per_decade: 7,
        }
    }

    fn lookup_all(species: &str, temperatures_k: Vec<f64>, grid: Option<GridSpec>) -> LookupQuery {
        LookupQuery {
            selector: demo(None, None),
            species: species.into(),
            transitions: Vec::new(),
            temperatures: temperatures_k,
            temperature_unit: TemperatureUnit::Kelvin,
            direction: Direction::Both,
            rate_unit: RateUnit::CubicCentimetrePerSecond,
            outside: OutsidePolicy::Refuse,
            grid,
        }
    }

    fn cancelled() -> Cancel {
        let cancel = Cancel::default();
        cancel.cancel();
        cancel
    }

    #[test]
    fn a_cancelled_build_leaves_nothing_in_the_cache() {
        let engine = engine_with_both_versions();
        let loaded = engine.select(&demo(Some("1.0.0"), None)).unwrap();
        let stopped = engine.species_tables_cancellable(&loaded, "Mk II", Some(custom_grid()), &cancelled());
        assert!(matches!(stopped, Err(EngineError::Cancelled)), "{stopped:?}");
        assert_eq!(engine.cache_stats().entries, 0);
        // The default grid's tables need no build: a set flag does not refuse them.
        assert!(
            engine
                .species_tables_cancellable(&loaded, "Mk II", None, &cancelled())
                .is_ok()
        );
        let built = engine
            .species_tables_cancellable(&loaded, "Mk II", Some(custom_grid()), &Cancel::default())
            .expect("an uncancelled build");
        assert_eq!(built.tables.len(), loaded.tables["Mk II"].tables.len());
        assert_eq!(engine.cache_stats().entries, 1);
    }

    #[test]
    fn cancelled_lookups_and_comparisons_stop_with_cancelled() {
        let engine = engine_with_both_versions();
        let query = lookup_all("Mk II", vec![1e4, 2e4], None);
        assert!(matches!(
            engine.lookup_cancellable(&query, &cancelled()),
            Err(EngineError::Cancelled)
        ));
        assert!(engine.lookup_cancellable(&query, &Cancel::default()).is_ok());
        let compare = CompareQuery {
            first: demo(Some("1.0.0"), None),
            second: demo(Some("1.1.0"), None),
            species: Vec::new(),
            grid: None,
        };
        assert!(matches!(
            engine.compare_cancellable(&compare, &cancelled()),
            Err(EngineError::Cancelled)
        ));
        assert!(engine.compare_cancellable(&compare, &Cancel::default()).is_ok());
    }

    #[test]
    fn a_lookup_in_blocks_has_the_bits_of_one_batch() {
        // common practice, no source: splitting work between checks of the stop flag must not
        // change the answer.
        let engine = engine_with_both_versions();
        let temperatures: Vec<f64> = (0..1000).map(|i| 1e3 + 97.0 * f64::from(i)).collect();
        let answer = engine
            .lookup(&lookup_all("Mk II", temperatures.clone(), None))
            .unwrap();
        let loaded = engine.select(&demo(None, None)).unwrap();
        let tables = &loaded.tables["Mk II"];
        assert!(
            answer.flags.len() > 2 * LOOKUP_BLOCK_VALUES,
            "more than two blocks"
        );
        let locations: Vec<_> = temperatures.iter().map(|&t| tables.grid.locate(t)).collect();
        let rows: Vec<&RateTable> = tables.tables.iter().collect();
        let total = rows.len() * locations.len();
        let (mut exc, mut deexc, mut flags) = (vec![0.0; total], vec![0.0; total], vec![0u32; total]);
        write_rows(
            &rows,
            &locations,
            Threads::Pool,
            &mut RateOutputs::new(Direction::Both, &mut exc, &mut deexc, &mut flags).unwrap(),
        )
        .unwrap();
        let bits = |v: &[f64]| v.iter().map(|x| x.to_bits()).collect::<Vec<_>>();
        assert_eq!(bits(&answer.excitation), bits(&exc));
        assert_eq!(bits(&answer.deexcitation), bits(&deexc));
        assert_eq!(answer.flags, flags);
    }

    #[test]
    fn snapshots_keep_the_first_resolution_of_an_unpinned_selector() {
        let engine = Engine::new(EngineConfig::default());
        engine.load_demo().unwrap();
        let mut snapshots = Snapshots::default();
        let select = |s: &Selector| engine.select(s);
        let first = snapshots.resolve(&demo(None, None), select).unwrap();
        assert_eq!(first.stamp.version, "1.0.0");
        engine
            .load_path(&Path::new(env!("CARGO_MANIFEST_DIR")).join("data/demo-v2"))
            .unwrap();
        let newest = engine.select(&demo(None, None)).unwrap();
        assert_eq!(newest.stamp.version, "1.1.0");
        let again = snapshots.resolve(&demo(None, None), select).unwrap();
        assert_eq!(again.stamp, first.stamp, "the kept snapshot, not the newest");
        // Another version is resolved on its own (and kept).
        let other = snapshots.resolve(&demo(Some("1.1.0"), None), select).unwrap();
        assert_eq!(other.stamp, newest.stamp);
        // A pinned selector is resolved afresh: the newest is 1.1.0, so 1.0.0's hash is refused.
        let pinned = snapshots.resolve(&demo(None, Some(&first.stamp.content_hash)), select);
        assert!(
            matches!(pinned, Err(EngineError::HashMismatch { .. })),
            "{pinned:?}"
        );
        let pinned = snapshots.resolve(&demo(None, Some(&newest.stamp.content_hash)), select);
        assert_eq!(pinned.unwrap().stamp, newest.stamp);
        // A selector that resolves to nothing is not kept.
        let unknown = Selector {
            id: "nothing".into(),
            ..Selector::default()
        };
        assert!(snapshots.resolve(&unknown, select).is_err());
    }
}
