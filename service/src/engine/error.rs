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
    #[error("{} bad values: {}", .violations.len(), join(.violations))]
    BadBatch {
        /// (field path, description) per bad element.
        violations: Vec<(String, String)>,
    },
    /// A value lies outside what the data cover and extrapolation was not allowed.
    #[error("{0}")]
    OutOfRange(String),
    /// A batch or request exceeds a configured limit.
    #[error("{field} = {value}: exceeds the limit of {limit}")]
    TooLarge {
        /// What was too large.
        field: String,
        /// Its size.
        value: usize,
        /// The configured limit.
        limit: usize,
    },
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
    /// The caller gave up (its deadline passed) and the computation stopped early.
    #[error("computation stopped: the caller's deadline passed")]
    Cancelled,
    /// The population solve failed.
    #[error("population solve failed: {0}")]
    Solve(#[from] PhysicsError),
}

impl EngineError {
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

fn join(violations: &[(String, String)]) -> String {
    let shown: Vec<String> = violations.iter().take(5).map(|(_, m)| m.clone()).collect();
    let more = violations.len().saturating_sub(5);
    if more > 0 {
        format!("{}; and {more} more", shown.join("; "))
    } else {
        shown.join("; ")
    }
}
