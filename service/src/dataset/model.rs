//! The dataset model, in canonical units, as handed to the rest of the service.
//!
//! Level indices are 1-based everywhere in the model, exactly as written in the files, so a
//! message or a lookup uses the same number a person sees in the file. A loaded species has
//! levels numbered 1..=N without gaps, stored in index order, so level `i` sits at position
//! `i - 1` of [`Species::levels`] (see [`Species::level_position`]). Transitions are stored
//! sorted by `(upper, lower)`, species by name.

use serde::Serialize;

/// An immutable, content-addressed atomic dataset.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Dataset {
    /// Short identifier, e.g. `"demo"` (lower-case letters, digits, `-`, `_`, `.`).
    pub id: String,
    /// Version `MAJOR.MINOR.PATCH`, e.g. `"1.0.0"`.
    pub version: String,
    /// What the dataset holds, for people.
    pub description: String,
    /// Where the data as a whole come from (citations).
    pub provenance: String,
    /// The species, sorted by name.
    pub species: Vec<Species>,
    /// blake3 hash (64 lower-case hex digits) of the canonical form; see [`super::hash`].
    pub content_hash: String,
}

impl Dataset {
    /// The species called `name` (e.g. `"O III"`).
    pub fn species(&self, name: &str) -> Option<&Species> {
        self.species.iter().find(|s| s.name == name)
    }

    /// The first 16 hex digits of the content hash, for logs.
    pub fn short_hash(&self) -> &str {
        super::hash::short_hash(&self.content_hash)
    }
}

/// One ion of one element with its levels and transitions.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Species {
    /// Spectroscopic name, element symbol then Roman numeral, e.g. `"O III"`.
    pub name: String,
    /// Element symbol, e.g. `"O"`.
    pub element: String,
    /// Nuclear charge Z (atomic number).
    pub nuclear_charge: u32,
    /// Ion charge (spectroscopic charge minus one): 2 for O III.
    pub ion_charge: u32,
    /// Who assembled this species' data.
    pub source: String,
    /// Levels in index order 1..=N.
    pub levels: Vec<Level>,
    /// Radiative transitions sorted by `(upper, lower)`.
    pub radiative: Vec<RadiativeTransition>,
    /// Electron-impact collisional transitions sorted by `(upper, lower)`.
    pub collisions: Vec<CollisionalTransition>,
}

impl Species {
    /// Spectroscopic charge (the Roman numeral): ion charge plus one.
    pub fn spectroscopic_charge(&self) -> u32 {
        self.ion_charge + 1
    }

    /// The level with 1-based `index`.
    pub fn level(&self, index: u32) -> Option<&Level> {
        let level = self.levels.get(self.level_position(index)?)?;
        (level.index == index).then_some(level)
    }

    /// 0-based position in [`Species::levels`] of the level with 1-based `index`.
    pub fn level_position(&self, index: u32) -> Option<usize> {
        let position = usize::try_from(index).ok()?.checked_sub(1)?;
        (position < self.levels.len()).then_some(position)
    }

    /// The radiative transition from level `upper` to level `lower` (a binary search: the list
    /// is sorted by `(upper, lower)`).
    pub fn radiative_transition(&self, upper: u32, lower: u32) -> Option<&RadiativeTransition> {
        let i = self
            .radiative
            .binary_search_by_key(&(upper, lower), |t| (t.upper, t.lower))
            .ok()?;
        self.radiative.get(i)
    }

    /// The collisional transition between levels `upper` and `lower` (a binary search: the
    /// list is sorted by `(upper, lower)`).
    pub fn collisional_transition(&self, upper: u32, lower: u32) -> Option<&CollisionalTransition> {
        let i = self
            .collisions
            .binary_search_by_key(&(upper, lower), |t| (t.upper, t.lower))
            .ok()?;
        self.collisions.get(i)
    }

    /// Energy difference E(upper) - E(lower), cm^-1.
    pub fn transition_energy_cm1(&self, upper: u32, lower: u32) -> Option<f64> {
        Some(self.level(upper)?.energy_cm1 - self.level(lower)?.energy_cm1)
    }
}

/// One energy level.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Level {
    /// 1-based index, as in the file.
    pub index: u32,
    /// Free-text label, e.g. `"2p2 1D2"`.
    pub label: String,
    /// Statistical weight g (2J+1 for a level), > 0.
    pub weight: f64,
    /// Energy above the zero of the file, cm^-1 (>= 0).
    pub energy_cm1: f64,
    /// The same energy as a temperature E/k, K.
    pub energy_k: f64,
    /// Where the energy comes from.
    pub source: String,
}

/// A spontaneous radiative transition.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct RadiativeTransition {
    /// 1-based index of the upper level.
    pub upper: u32,
    /// 1-based index of the lower level.
    pub lower: u32,
    /// Einstein A coefficient, s^-1 (> 0).
    pub a_per_s: f64,
    /// Absorption oscillator strength f_lu (dimensionless), when given.
    pub oscillator_strength: Option<f64>,
    /// Where the values come from.
    pub source: String,
    /// Relative (fractional) uncertainty of A, when given (0.1 means 10 %).
    pub relative_uncertainty: Option<f64>,
}

/// An electron-impact excitation / de-excitation transition and its data.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct CollisionalTransition {
    /// 1-based index of the upper level.
    pub upper: u32,
    /// 1-based index of the lower level.
    pub lower: u32,
    /// Burgess & Tully transition type, which selects the scaling used to interpolate.
    pub kind: TransitionType,
    /// The data: a table or an approximation method.
    pub data: CollisionData,
    /// Where the data come from.
    pub source: String,
    /// Relative (fractional) uncertainty of the data, when given.
    pub relative_uncertainty: Option<f64>,
}

/// Burgess & Tully (1992) transition types: the physics layer's type, with its file spellings.
pub use crate::physics::transition::TransitionType;

/// The file spellings of [`TransitionType`], for error messages.
pub const TRANSITION_TYPES: &str = "\"allowed\", \"forbidden\", \"spin-change\", \"weak-allowed\"";

/// How the collision data of one transition are given.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub enum CollisionData {
    /// Effective collision strengths Upsilon(T) (dimensionless) on a strictly increasing grid.
    EffectiveTable {
        /// Electron temperatures, K (> 0, strictly increasing).
        temperatures_k: Vec<f64>,
        /// Upsilon at each temperature (> 0).
        upsilon: Vec<f64>,
    },
    /// Collision strengths Omega(E) (dimensionless), to be Maxwellian-averaged by the service.
    StrengthTable {
        /// Energy of the scattered (outgoing) electron E_f, Ry (>= 0, strictly increasing);
        /// incident energies in the file are converted by subtracting the transition energy.
        scattered_energies_ry: Vec<f64>,
        /// Omega at each energy (>= 0).
        omega: Vec<f64>,
    },
    /// No data: an approximation method; every answer built on it is approximate.
    Estimate(EstimateMethod),
}

impl CollisionData {
    /// True for approximation methods, which answers must flag as approximate.
    pub fn is_approximate(&self) -> bool {
        matches!(self, CollisionData::Estimate(_))
    }
}

/// An approximation method for a transition without collision data.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub enum EstimateMethod {
    /// Van Regemorter (1962) effective-Gaunt-factor formula for allowed lines.
    VanRegemorter {
        /// Absorption oscillator strength f_lu used by the formula.
        oscillator_strength: f64,
        /// True when f_lu was taken from the matching radiative transition rather than given.
        from_radiative: bool,
    },
    /// Semi-classical estimate: geometric cross-section enlarged by Coulomb focusing.
    CoulombFocusing {
        /// Dimensionless collision-strength scale of order unity (default 1).
        strength: f64,
    },
}
