//! Atomic datasets: the model, our TOML file format, loading with located problems, the
//! canonical content hash, and the catalogue of loaded datasets.
//!
//! Modules: [`model`] (types in canonical units), [`units`] (accepted units and conversion),
//! `format` (which keys exist), `reader` (typed reads that collect problems), `validate`
//! (meaning and ranges, builds the model), [`hash`] (canonical form and blake3), `load` (texts
//! to dataset), [`catalogue`] (folders, catalogue), [`check`] (warnings about data that load
//! but look wrong), [`embedded`] (compiled-in demo), [`error`].
//!
//! # File format
//!
//! The format users write, and every rule the loader and the physics apply to it, is documented
//! in `docs/datasets.md` at the repository root, with a worked example that
//! `tests/dataset_worked_example.rs` runs as written. [`FORMAT_VERSION`] is the layout's version.

mod bounded_read;
pub mod catalogue;
pub mod check;
pub mod embedded;
pub mod error;
mod format;
pub mod hash;
mod lines;
mod load;
pub mod model;
mod reader;
pub mod units;
pub mod validate;

pub use catalogue::{find_dataset_dirs, load_folder, load_folder_confined, load_folder_limited};
pub use embedded::{EMBEDDED_DEMO_FILES, EMBEDDED_DEMO_ORIGIN, demo_dataset};
pub use error::{DatasetError, Problem};
pub use format::FORMAT_VERSION;
pub use hash::{canonical_bytes, content_hash, short_hash};
pub use load::load_dataset_from_texts;
pub use model::{
    CollisionData, CollisionalTransition, Dataset, EstimateMethod, Level, RadiativeTransition, Species,
    TransitionType,
};
pub use units::{EnergyUnit, TemperatureUnit};
pub use validate::{MAX_NUCLEAR_CHARGE, is_valid_id, parse_version};

/// File name of a dataset manifest.
pub const MANIFEST_FILE: &str = "dataset.toml";
