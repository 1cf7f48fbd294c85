//! Critical densities far outside the densities population solves are tested for: a warning
//! of `ratewell-server --check-dataset`. A level whose critical density lies far below or far
//! above that range stays in one density limit at every density the solve is meant for; in
//! hand-written data this most often means an A value or a collision strength in the wrong
//! unit (it can also be real: the warning says what it found and leaves the judgement).

use super::solve::SolveQuery;
use super::{Engine, EngineError, Selector};
use crate::dataset::check::Warning;

/// Electron densities over which population solves are tested stable, cm^-3.
pub const TESTED_DENSITY_RANGE_CM3: (f64, f64) = (1.0, 1.0e20);
/// How far outside [`TESTED_DENSITY_RANGE_CM3`] a critical density must lie to be warned of.
pub const FAR_OUTSIDE_FACTOR: f64 = 1.0e3;
/// Temperature the critical densities are computed at (clamped into the species' grid), K.
pub const CHECK_TEMPERATURE_K: f64 = 1.0e4;

impl Engine {
    /// One warning per level (of every species of the selected dataset) whose critical
    /// density (downward rates only, as served) at [`CHECK_TEMPERATURE_K`] lies more than
    /// [`FAR_OUTSIDE_FACTOR`] outside [`TESTED_DENSITY_RANGE_CM3`]. Levels with no radiative
    /// decay or no collisional de-excitation have no critical density and are skipped.
    pub fn critical_density_warnings(&self, selector: &Selector) -> Result<Vec<Warning>, EngineError> {
        let loaded = self.select(selector)?;
        let pinned = Selector {
            id: loaded.stamp.id.clone(),
            version: Some(loaded.stamp.version.clone()),
            expected_hash: Some(loaded.stamp.content_hash.clone()),
        };
        let grid = loaded.default_grid;
        let t_k = CHECK_TEMPERATURE_K.clamp(grid.t_min_k(), grid.t_max_k());
        let (low, high) = TESTED_DENSITY_RANGE_CM3;
        let mut out = Vec::new();
        for species in &loaded.dataset.species {
            let query = SolveQuery::grid(pinned.clone(), species.name.clone(), vec![t_k], vec![1.0]);
            let answer = self.solve(&query)?;
            let Some(point) = answer.points.first() else {
                continue;
            };
            for (j, &n_c) in point.critical_densities_per_cm3.iter().enumerate() {
                if n_c == 0.0 || !n_c.is_finite() {
                    continue;
                }
                let side = if n_c < low / FAR_OUTSIDE_FACTOR {
                    "below"
                } else if n_c > high * FAR_OUTSIDE_FACTOR {
                    "above"
                } else {
                    continue;
                };
                out.push(Warning {
                    species: species.name.clone(),
                    message: format!(
                        "level {} has a critical density of {n_c:.3e} cm^-3 at {t_k} K, more than \
                         {FAR_OUTSIDE_FACTOR:e} times {side} the {low:e} to {high:e} cm^-3 that \
                         population solves are tested for: it stays in one density limit at every \
                         such density (check the units of its A values and collision data)",
                        j + 1
                    ),
                });
            }
        }
        Ok(out)
    }
}
