//! Atomic datasets: the model, our TOML file format, loading with located problems, the
//! canonical content hash, and the catalogue of loaded datasets.
//!
//! Modules: [`model`] (types in canonical units), [`units`] (accepted units and conversion),
//! `format` (which keys exist), `reader` (typed reads that collect problems), `validate`
//! (meaning and ranges, builds the model), [`hash`] (canonical form and blake3), `load` (texts
//! to dataset), [`catalogue`] (folders, catalogue), [`check`] (warnings about data that load
//! but look wrong), [`embedded`] (compiled-in demo), [`error`].
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
//!
//! # What the loader and the physics do with the data
//!
//! **Units.** Level energies are converted to cm^-1 (`"cm-1"`, `"eV"`, `"J"`, `"Ry"`),
//! temperatures to K (`"K"`, or `"eV"` meaning kT), collision energies to Rydberg, all with
//! CODATA 2018 factors; a value in the canonical unit is kept bit for bit. Every block's own
//! unit key overrides `[units]`; a table with neither is refused. Einstein A is in s^-1.
//!
//! **Checks.** Levels are numbered 1..=N without gaps, weights > 0, energies >= 0; a
//! transition's upper level must lie above its lower level; A > 0; table abscissae strictly
//! increasing; Upsilon > 0; Omega >= 0; energies >= 0; each level pair has at most one
//! collision block; `relative_uncertainty` >= 0.
//!
//! **Transition type** (Burgess & Tully 1992 types 1-4: `"allowed"`, `"forbidden"`,
//! `"spin-change"`, `"weak-allowed"`) sets two things: the scaled plane that sparse Upsilon(T)
//! tables are interpolated and extrapolated in, and the high-energy law of Omega(E) tables
//! (below). The Van Regemorter estimate accepts only the two allowed types.
//!
//! **Oscillator strengths.** The absorption f_lu of the radiative line of the same pair,
//! times g_lower, fixes the Bethe high-energy limits of the allowed types: the x = 1 limit
//! 4 g_l f / dE_Ry of an Upsilon table, the ln(E) coefficient of an Omega table's tail. Without
//! it the Upsilon table has no limit point and the Omega tail is matched to its last point.
//!
//! **(a) Effective collision strengths Upsilon(T)** (`physics::scaling`). With u = kT/dE,
//! x = ln(1 + u/C)/ln(u + C) (types 1, 4; C = e) or u/(u + C) (types 2, 3; C = 1):
//! - between the first and the last tabulated temperature, a shape-preserving cubic (PCHIP)
//!   through the data points against x, in y = Upsilon/ln(u + e) (type 1),
//!   y = Upsilon/ln(u + C) (type 4), Upsilon itself (types 2 and 3): a plane where a constant
//!   Upsilon is a straight line, so flat data stay flat to rounding;
//! - below the first temperature: that curve continued as q_1 exp((q'_1/q_1)(x - x_1)) (value
//!   and slope matched; a flat end gives a constant Upsilon as T -> 0);
//! - above the last: the scaled y = Upsilon/F (F = ln(u + e), 1, 1/(u + 1), ln(u + C) for types
//!   1-4) continued the same way from the last point, which gives the Bethe ln(u) growth
//!   (types 1, 4), a constant (type 2) or a 1/u fall (type 3); for types 1 and 4 with f_lu it
//!   is blended into the limit, y = (1 - w) y_cont + w 4 g_l f / dE_Ry with
//!   w = ((x - x_N)/(1 - x_N))^2.
//! - Source range: the first to the last tabulated temperature. Served tables (on a grid
//!   shared by all transitions) reproduce flat data to rounding on every grid interval inside
//!   that range; the grid interval that holds a data end also spans the continuation, so there
//!   a flat table may leave its value by up to the table's served error bound.
//!
//! **(b) Collision strengths Omega(E)** (`physics::maxwell`). Incident energies are turned into
//! scattered-electron energies E_f = E_i - dE, dE the difference of the two level energies
//! (converted to Ry); an incident energy equal to dE, or below it by no more than a relative
//! 1e-9 (the rounding of a value written in another unit than the levels), gives E_f = 0
//! exactly (a table from threshold); one further below is refused. The service averages over a Maxwellian exactly for this
//! model:
//! - between tabulated points Omega is linear in E_f;
//! - below the first point (when E_1 > 0) Omega is constant at its first value down to
//!   threshold;
//! - above the last point: allowed and weak-allowed, Omega = A ln(E_i/dE) + B with
//!   A = 4 g_l f / dE_Ry and B matching the last point (without f: B = 0 and A matching it; a
//!   table whose last point is at threshold then cannot be continued and is refused at table
//!   build); forbidden, constant at the last value; spin change, Omega_N (E_iN/E_i)^2.
//! - Source range: temperatures at which at most e^-5 (0.67 %) of the Maxwellian weight falls
//!   below E_1 (kT >= about 148 E_1) and at most e^-5 above E_N (kT <= E_N/5). A table from
//!   threshold has no lower limit (reported as 0.001 K, the lowest any grid starts at). Data
//!   too short for both report the one temperature where the weight outside them is least,
//!   (E_N - E_1)/(k ln(E_N/E_1)). Outside the range values are flagged BEYOND_SOURCE.
//!
//! **(c) Estimates** (`physics::approximations`), every value flagged APPROXIMATE:
//! `"van-regemorter"` (Van Regemorter 1962; allowed types only; f_lu from `oscillator_strength`
//! or the radiative line; for ions the Gaunt factor is joined smoothly to its 0.2 floor) and
//! `"coulomb-focusing"` (a semi-classical estimate whose collision strength at threshold is
//! `strength`, default 1). They have no source range.
//!
//! **Uncertainties.** `relative_uncertainty` (a fraction: 0.1 is 10 %) on a radiative or a
//! collision block is carried to the species description (the collision block's first, else
//! the radiative line's); it does not enter any computed value.

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
