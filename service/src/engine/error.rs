//! The error type of the engine (the pure core behind the gRPC handlers). Each variant maps to
//! one gRPC status code in `api::status`.

use crate::dataset::DatasetError;
use crate::physics::PhysicsError;
use crate::tables::TableError;
use ratewell_proto::rule::RuleError;

/// Why the engine refused or failed a request.
#[derive(Debug, thiserror::Error)]
pub enum EngineError {
    /// A request field has a value outside its allowed range.
    #[error("{field} = {value}: {allowed}")]
    InvalidArgument {
        /// Field path, e.g. `temperatures[3]`.
        field: String,
        /// The offending value as written.
        value: String,
        /// What is allowed.
        allowed: String,
    },
    /// Several elements of a batch are bad; each entry is (field, message).
    #[error("{total} bad values: {}", join(.violations, *.total))]
    BadBatch {
        /// (field path, description) of the first [`MAX_KEPT_VIOLATIONS`] bad elements.
        violations: Vec<(String, String)>,
        /// How many elements are bad in all.
        total: usize,
    },
    /// The balance equations have no usable solution at one requested point: the inputs are
    /// outside the range where the solve is well conditioned.
    #[error(
        "no usable solution at T = {temperature_k} K, n_e = {density_per_cm3} cm^-3 ({reason}); \
         solves are tested stable for n_e from 1 to 1e20 cm^-3 and T within the table grid \
         [{grid_min_k}, {grid_max_k}] K"
    )]
    Degenerate {
        /// Electron temperature of the point, K.
        temperature_k: f64,
        /// Electron density of the point, cm^-3.
        density_per_cm3: f64,
        /// What the solver found.
        reason: PhysicsError,
        /// Lowest temperature of the species' grid, K.
        grid_min_k: f64,
        /// Highest temperature of the species' grid, K.
        grid_max_k: f64,
    },
    /// A request would cause more work or a larger answer than a configured limit allows.
    #[error("{0}")]
    TooLarge(#[from] crate::limits::LimitError),
    /// No loaded dataset matches the selector.
    #[error("dataset {id}{}: not loaded (loaded: {available})", version_suffix(.version))]
    UnknownDataset {
        /// Requested id.
        id: String,
        /// Requested version (empty = newest).
        version: String,
        /// What is loaded, "id@version" joined by ", ".
        available: String,
    },
    /// The dataset has no such species.
    #[error("species \"{species}\": not in dataset {dataset} (species: {available})")]
    UnknownSpecies {
        /// Dataset "id@version".
        dataset: String,
        /// Requested species.
        species: String,
        /// The dataset's species joined by ", ".
        available: String,
    },
    /// The species has no collision data for this transition.
    #[error(
        "transitions[{index}] = {upper}-{lower}: no collisional transition between these levels in {species}"
    )]
    UnknownTransition {
        /// Position in the request.
        index: usize,
        /// Species name.
        species: String,
        /// Upper level (1-based).
        upper: u32,
        /// Lower level (1-based).
        lower: u32,
    },
    /// The selected dataset's content hash differs from the one the caller pinned.
    #[error("dataset {dataset} has content hash {actual}, but the request expected {expected}")]
    HashMismatch {
        /// Dataset "id@version".
        dataset: String,
        /// The hash the caller expected.
        expected: String,
        /// The hash the server holds.
        actual: String,
    },
    /// A dataset could not be loaded; the previous version (if any) keeps serving.
    #[error("dataset load failed, previous data keep serving: {0}")]
    Load(#[from] DatasetError),
    /// Tables could not be built from the data.
    #[error("table build failed: {0}")]
    Table(#[from] TableError),
    /// The evaluation rule refused an input.
    #[error(transparent)]
    Rule(#[from] RuleError),
    /// The caller gave up (its deadline passed, it went away, or the server is stopping) and
    /// the computation stopped early.
    #[error(
        "computation stopped early: the caller gave up (deadline passed, client gone or server stopping)"
    )]
    Cancelled,
    /// The population solve failed.
    #[error("population solve failed: {0}")]
    Solve(#[from] PhysicsError),
    /// A species of a dataset being installed cannot be prepared for solves (its radiative
    /// data do not make rates): the data must change; the previous data keep serving.
    #[error("dataset load failed, previous data keep serving: species {species}: {source}")]
    SpeciesData {
        /// The species.
        species: String,
        /// What the physics refused.
        source: PhysicsError,
    },
}

/// Bad elements of a batch kept with their description; the rest are only counted.
pub const MAX_KEPT_VIOLATIONS: usize = 16;

impl EngineError {
    /// A [`Self::BadBatch`] of the bad elements `bad` yields, keeping the first
    /// [`MAX_KEPT_VIOLATIONS`] (built by `describe`) and counting the rest; `None` if there are
    /// none.
    pub fn bad_batch<T>(
        bad: impl Iterator<Item = T>,
        describe: impl Fn(T) -> (String, String),
    ) -> Option<Self> {
        let mut violations = Vec::new();
        let mut total = 0;
        for item in bad {
            if total < MAX_KEPT_VIOLATIONS {
                violations.push(describe(item));
            }
            total += 1;
        }
        (total > 0).then_some(Self::BadBatch { violations, total })
    }

    /// An invalid-argument error naming field, value and allowed range.
    pub fn invalid(field: impl Into<String>, value: impl ToString, allowed: impl Into<String>) -> Self {
        Self::InvalidArgument {
            field: field.into(),
            value: value.to_string(),
            allowed: allowed.into(),
        }
    }
}

fn version_suffix(version: &str) -> String {
    if version.is_empty() {
        String::new()
    } else {
        format!("@{version}")
    }
}

fn join(violations: &[(String, String)], total: usize) -> String {
    let shown: Vec<String> = violations.iter().take(5).map(|(_, m)| m.clone()).collect();
    let more = total.saturating_sub(shown.len());
    if more > 0 {
        format!("{}; and {more} more", shown.join("; "))
    } else {
        shown.join("; ")
    }
}
