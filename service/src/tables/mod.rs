//! Rate tables: precomputed from a dataset's collision data on uniform log-T grids, each
//! carrying its measured interpolation error, and cached by dataset hash, species and grid.
//!
//! - [`build`]: one table from an Upsilon source, with a bound on its interpolation error.
//! - [`error_bound`]: where that error is measured and how it becomes a bound.
//! - [`source_range`]: the one definition of a transition's source temperature range.
//! - [`sources`]: a dataset transition turned into an Upsilon source through the physics layer.
//! - [`species`]: all tables of one species on one grid, indexed by transition.
//! - [`cache`]: the concurrent table cache.

pub mod build;
pub mod cache;
pub mod error_bound;
pub mod source_range;
pub mod sources;
pub mod species;

pub use build::{GridSamples, UpsilonSource, build_table, build_table_on};
pub use cache::{CacheStats, TableCache, TableKey};
pub use source_range::source_range_k;
pub use species::SpeciesTables;

use crate::dataset::Species;
use ratewell_proto::rule::{LogGrid, RuleError};
use rayon::prelude::*;

/// Why a table could not be built.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum TableError {
    /// The source gave a non-positive or non-finite Upsilon, which cannot be tabulated in log.
    #[error("transition {upper}-{lower}: Upsilon({t_k} K) = {upsilon}: must be finite and > 0 to tabulate")]
    NonPositiveUpsilon {
        /// Upper level (1-based).
        upper: u32,
        /// Lower level (1-based).
        lower: u32,
        /// Temperature, K.
        t_k: f64,
        /// The value obtained.
        upsilon: f64,
    },
    /// The transition's data could not be turned into a source.
    #[error("{species} transition {upper}-{lower}: {message}")]
    Source {
        /// Species name.
        species: String,
        /// Upper level (1-based).
        upper: u32,
        /// Lower level (1-based).
        lower: u32,
        /// What went wrong.
        message: String,
    },
    /// The physics layer refused an evaluation.
    #[error("evaluation failed: {0}")]
    Evaluation(String),
    /// The evaluation rule refused the grid or table.
    #[error(transparent)]
    Rule(#[from] RuleError),
    /// The build was asked to stop before its last table (its caller gave up); nothing of it
    /// is kept.
    #[error("table build stopped before it finished: the caller gave up")]
    Stopped,
}

/// Builds every collisional transition's table for `species` on `grid`, in parallel.
pub fn build_species_tables(species: &Species, grid: LogGrid) -> Result<SpeciesTables, TableError> {
    build_species_tables_until(species, grid, &|| false)
}

/// [`build_species_tables`], asking `stop` before each table and ending with
/// [`TableError::Stopped`] once it answers true: a build whose caller gave up ends within one
/// table's work per thread.
pub fn build_species_tables_until(
    species: &Species,
    grid: LogGrid,
    stop: &(dyn Fn() -> bool + Sync),
) -> Result<SpeciesTables, TableError> {
    let range = (grid.t_min_k(), grid.t_max_k());
    let samples = GridSamples::new(grid);
    let tables = species
        .collisions
        .par_iter()
        .map(|transition| {
            if stop() {
                return Err(TableError::Stopped);
            }
            let ts = sources::transition_source(species, transition, range)?;
            build_table_on(&samples, ts.header, ts.source.as_ref()).map_err(|e| match e {
                TableError::Evaluation(message) => TableError::Source {
                    species: species.name.clone(),
                    upper: transition.upper,
                    lower: transition.lower,
                    message,
                },
                other => other,
            })
        })
        .collect::<Result<Vec<_>, _>>()?;
    let cautions = cautions_for(species, &tables, &grid);
    Ok(SpeciesTables::new(species.name.clone(), grid, tables, cautions))
}

/// Plain-language cautions for answers from these tables.
fn cautions_for(
    species: &Species,
    tables: &[ratewell_proto::rule::RateTable],
    grid: &LogGrid,
) -> Vec<String> {
    let mut cautions = Vec::new();
    let approximate = tables.iter().filter(|t| t.header().approximate).count();
    if approximate > 0 {
        cautions.push(format!(
            "{}: {approximate} of {} transitions use approximation formulas (Van Regemorter or semi-classical): \
             order-of-magnitude rates, flagged APPROXIMATE; use validated data for safety-critical work",
            species.name,
            tables.len()
        ));
    }
    let beyond = tables
        .iter()
        .filter(|t| {
            let h = t.header();
            !h.approximate && (h.source_t_min_k > grid.t_min_k() || h.source_t_max_k < grid.t_max_k())
        })
        .count();
    if beyond > 0 {
        cautions.push(format!(
            "{}: {beyond} transitions have source data covering only part of the grid [{:.3e}, {:.3e}] K; \
             values outside their source range come from continuation rules (scaled-plane extrapolation of \
             Upsilon tables, the threshold and high-energy forms of collision strengths) and are flagged BEYOND_SOURCE",
            species.name,
            grid.t_min_k(),
            grid.t_max_k()
        ));
    }
    cautions
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::sync::atomic::{AtomicUsize, Ordering};

    #[test]
    fn a_build_asked_to_stop_ends_before_its_last_table() {
        let dataset = crate::dataset::demo_dataset().expect("demo");
        let species = dataset.species("Mk II").expect("Mk II");
        let grid = LogGrid::from_range(10.0, 1e9, 20).unwrap();
        let asked = AtomicUsize::new(0);
        let stopped =
            build_species_tables_until(species, grid, &|| asked.fetch_add(1, Ordering::Relaxed) >= 3);
        assert!(matches!(stopped, Err(TableError::Stopped)), "{stopped:?}");
        let asked = asked.into_inner();
        assert!(
            asked < species.collisions.len(),
            "asked {asked} times for {} tables: the build went on",
            species.collisions.len()
        );
        let whole = build_species_tables_until(species, grid, &|| false).expect("a build not stopped");
        assert_eq!(whole.tables.len(), species.collisions.len());
    }
}
