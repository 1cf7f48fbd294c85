//! Atomic datasets: the model, our TOML file format, loading with located problems, the
//! canonical content hash, and the catalogue of loaded datasets.
//!
//! Modules: [`model`] (types in canonical units), [`units`] (accepted units and conversion),
//! `format` (which keys exist), `reader` (typed reads that collect problems), `validate`
//! (meaning and ranges, builds the model), [`hash`] (canonical form and blake3), `load` (texts
//! to dataset), [`catalogue`] (folders, catalogue), [`embedded`] (compiled-in demo), [`error`].
//!
//! # File format (format 1)
//!
//! A dataset is a folder holding a manifest `dataset.toml` and one TOML file per species.
//!
//! ```toml
//! # dataset.toml
//! format = 1                       # format version of this layout
//! id = "reference-ions"            # a-z 0-9 - _ . (1-64 chars)
//! version = "1.0.0"                # MAJOR.MINOR.PATCH
//! description = "What the dataset holds."
//! provenance = "Where the data as a whole come from."
//! species_files = ["o-iii.toml"]   # optional: without it, every other *.toml file
//! ```
//!
//! ```toml
//! # o-iii.toml
//! [species]
//! name = "O III"                   # element symbol + spectroscopic charge in Roman numerals
//! element = "O"
//! nuclear_charge = 8
//! ion_charge = 2                   # spectroscopic charge - 1
//! source = "Who assembled this file."
//!
//! [units]                          # optional file defaults; each block may override
//! energy = "cm-1"                  # level energies: "cm-1" | "eV" | "J" | "Ry"
//! temperature = "K"                # upsilon tables: "K" | "eV"
//! collision_energy = "Ry"          # omega tables: "cm-1" | "eV" | "J" | "Ry"
//!
//! [sources]                        # named citations, used as source = "@key"
//! energies = "Level energies from ..."
//!
//! [[level]]
//! index = 1                        # 1-based, levels must be numbered 1..=N without gaps
//! label = "2p2 3P0"
//! weight = 1                       # statistical weight g > 0
//! energy = 0.0                     # >= 0, unit from energy_unit or [units].energy
//! source = "@energies"             # "@key" into [sources], or the citation text itself
//!
//! [[radiative]]
//! upper = 4
//! lower = 3
//! a_per_s = 2.0e-2                 # Einstein A, s^-1, > 0
//! oscillator_strength = 1.0e-9     # optional absorption f_lu
//! relative_uncertainty = 0.1       # optional, fraction
//! source = "..."
//!
//! [[collision]]                    # data form (a): effective collision strengths
//! upper = 4
//! lower = 1
//! type = "spin-change"             # "allowed" | "forbidden" | "spin-change" | "weak-allowed"
//! temperatures = [5000.0, 10000.0, 20000.0]
//! temperature_unit = "K"           # or [units].temperature
//! upsilon = [0.25, 0.25, 0.26]
//! source = "..."
//!
//! [[collision]]                    # data form (b): collision strengths
//! upper = 5
//! lower = 1
//! type = "forbidden"
//! energies = [0.2, 0.5, 1.0]
//! energy_unit = "Ry"               # or [units].collision_energy
//! energy_kind = "incident"         # "incident" | "scattered" electron energy
//! omega = [0.03, 0.035, 0.04]
//! source = "..."
//!
//! [[collision]]                    # data form (c): an approximation method
//! upper = 5
//! lower = 4
//! type = "allowed"
//! estimate = "van-regemorter"      # needs oscillator_strength here or on the radiative line
//! # estimate = "coulomb-focusing" with optional strength = 1.0 (dimensionless)
//! source = "..."
//! ```
//!
//! Comments, whitespace, key order and block order carry no meaning and do not change the
//! content hash. Problems name file, 1-based line and field, and every problem of a file is
//! reported at once.

pub mod catalogue;
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

pub use catalogue::{find_dataset_dirs, load_folder};
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
