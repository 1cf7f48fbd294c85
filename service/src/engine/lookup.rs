//! Batched rate-coefficient lookups: many transitions at many temperatures, evaluated with the
//! shared rule (each temperature located once on the species' grid).

use super::units::{RateUnit, TemperatureUnit};
use super::{Cancel, Engine, EngineError, GridSpec, Selector, Stamp, admit};
use crate::limits::{SPLIT_ADVICE, check};
use ratewell_proto::rule::{
    Direction, OutsidePolicy, RateOutputs, RateTable, RuleError, Threads, checked_location, write_rows,
};

/// A batched lookup.
#[derive(Debug, Clone)]
pub struct LookupQuery {
    /// Which dataset.
    pub selector: Selector,
    /// Species name.
    pub species: String,
    /// (upper, lower) 1-based; empty means every transition with collision data.
    pub transitions: Vec<(u32, u32)>,
    /// Temperatures in `temperature_unit`.
    pub temperatures: Vec<f64>,
    /// Unit of `temperatures`.
    pub temperature_unit: TemperatureUnit,
    /// Which rate coefficients.
    pub direction: Direction,
    /// Unit of the answer.
    pub rate_unit: RateUnit,
    /// Temperatures outside the grid: refuse or extrapolate.
    pub outside: OutsidePolicy,
    /// Table grid; `None` uses the dataset's default.
    pub grid: Option<GridSpec>,
}

/// The answer to a [`LookupQuery`]; arrays are transition-major (t * n_temperatures + j).
#[derive(Debug, Clone, PartialEq)]
pub struct LookupAnswer {
    /// Dataset the values came from.
    pub stamp: Stamp,
    /// Species name.
    pub species: String,
    /// The transitions, in answer order.
    pub transitions: Vec<(u32, u32)>,
    /// Number of temperatures.
    pub temperature_count: usize,
    /// Unit of the values.
    pub rate_unit: RateUnit,
    /// q_lu values (empty when not asked for).
    pub excitation: Vec<f64>,
    /// q_ul values (empty when not asked for).
    pub deexcitation: Vec<f64>,
    /// Flag bits per value.
    pub flags: Vec<u32>,
    /// Cautions for the user.
    pub cautions: Vec<String>,
}

/// Validates temperatures in their unit, reporting every bad element, and returns them in K.
pub fn temperatures_in_kelvin(values: &[f64], unit: TemperatureUnit) -> Result<Vec<f64>, EngineError> {
    if values.is_empty() {
        return Err(EngineError::invalid(
            "temperatures",
            "[]",
            "must hold at least one temperature",
        ));
    }
    let bad = values
        .iter()
        .enumerate()
        .filter(|(_, v)| !(v.is_finite() && **v > 0.0));
    if let Some(e) = EngineError::bad_batch(bad, |(i, v)| {
        let field = format!("temperatures[{i}]");
        let message = format!("{field} = {v} {}: must be finite and > 0", unit.symbol());
        (field, message)
    }) {
        return Err(e);
    }
    Ok(values.iter().map(|&v| unit.to_kelvin(v)).collect())
}

/// Values a lookup computes between two checks of its stop flag: a few milliseconds of work,
/// and many times what the pool needs to share a block out between threads.
pub const LOOKUP_BLOCK_VALUES: usize = 1 << 18;

impl Engine {
    /// Refuses a lookup over `max_lookup_values` or with an answer over the message limit,
    /// before any table is built or value computed.
    fn admit_lookup(&self, loaded: &super::LoadedDataset, query: &LookupQuery) -> Result<(), EngineError> {
        let rows = if query.transitions.is_empty() {
            loaded
                .tables
                .get(&query.species)
                .ok_or_else(|| super::unknown_species_error(loaded, &query.species))?
                .tables
                .len()
        } else {
            query.transitions.len()
        };
        let total = rows.saturating_mul(query.temperatures.len());
        check(
            "transitions x temperatures of the lookup",
            total as u64,
            self.config().max_lookup_values as u64,
            "max_lookup_values",
            SPLIT_ADVICE,
        )?;
        let directions = usize::from(query.direction.wants_excitation())
            + usize::from(query.direction.wants_deexcitation());
        admit::check_answer_bytes(
            admit::lookup_answer_bytes(total, directions),
            self.config().max_answer_bytes,
        )?;
        Ok(())
    }

    /// Answers a batched lookup. CPU work proportional to transitions x temperatures.
    pub fn lookup(&self, query: &LookupQuery) -> Result<LookupAnswer, EngineError> {
        self.lookup_cancellable(query, &Cancel::default())
    }

    /// [`Self::lookup`], checking `cancel` before each table of a build on a custom grid and
    /// before each block of [`LOOKUP_BLOCK_VALUES`] values, and stopping with
    /// [`EngineError::Cancelled`] once it is set.
    pub fn lookup_cancellable(
        &self,
        query: &LookupQuery,
        cancel: &Cancel,
    ) -> Result<LookupAnswer, EngineError> {
        let loaded = self.select(&query.selector)?;
        self.lookup_in(&loaded, query, cancel)
    }

    /// [`Self::lookup_cancellable`] answered from `loaded`, a dataset the caller resolved
    /// `query.selector` to beforehand (a lookup stream keeps its first resolution).
    pub fn lookup_in(
        &self,
        loaded: &super::LoadedDataset,
        query: &LookupQuery,
        cancel: &Cancel,
    ) -> Result<LookupAnswer, EngineError> {
        let temps_k = temperatures_in_kelvin(&query.temperatures, query.temperature_unit)?;
        self.admit_lookup(loaded, query)?;
        let tables = self.species_tables_cancellable(loaded, &query.species, query.grid, cancel)?;
        let positions: Vec<usize> = if query.transitions.is_empty() {
            (0..tables.tables.len()).collect()
        } else {
            query
                .transitions
                .iter()
                .enumerate()
                .map(|(index, &(upper, lower))| {
                    tables
                        .position(upper, lower)
                        .ok_or(EngineError::UnknownTransition {
                            index,
                            species: query.species.clone(),
                            upper,
                            lower,
                        })
                })
                .collect::<Result<_, _>>()?
        };
        let n_t = temps_k.len();
        let total = positions.len().saturating_mul(n_t);
        let locations = temps_k
            .iter()
            .enumerate()
            .map(|(j, &t)| checked_location(&tables.grid, j, t, query.outside))
            .collect::<Result<Vec<_>, RuleError>>()
            .map_err(EngineError::Rule)?;
        let dir = query.direction;
        let sized = |wanted: bool| if wanted { vec![0.0; total] } else { Vec::new() };
        let mut excitation = sized(dir.wants_excitation());
        let mut deexcitation = sized(dir.wants_deexcitation());
        let mut flags = vec![0u32; total];
        let rows: Vec<&RateTable> = positions.iter().map(|&p| &tables.tables[p]).collect();
        // Whole rows per block (outputs are transition-major), each block big enough for the
        // pool to share out.
        let block_rows = (LOOKUP_BLOCK_VALUES / n_t.max(1)).max(1);
        let block_values = block_rows * n_t;
        let mut excitation_blocks = excitation.chunks_mut(block_values);
        let mut deexcitation_blocks = deexcitation.chunks_mut(block_values);
        for (block, flags) in rows.chunks(block_rows).zip(flags.chunks_mut(block_values)) {
            cancel.check()?;
            // An unwanted direction's buffer is empty, and so is its block.
            let excitation = excitation_blocks.next().unwrap_or_default();
            let deexcitation = deexcitation_blocks.next().unwrap_or_default();
            write_rows(
                block,
                &locations,
                Threads::Pool,
                &mut RateOutputs::new(dir, excitation, deexcitation, flags)?,
            )?;
        }
        if query.rate_unit == RateUnit::CubicMetrePerSecond {
            excitation
                .iter_mut()
                .chain(deexcitation.iter_mut())
                .for_each(|v| *v = ratewell_proto::units::m3_s_from_cm3_s(*v));
        }
        let mut cautions = tables.cautions.clone();
        let all_flags = flags.iter().fold(0, |a, b| a | b);
        add_flag_cautions(&mut cautions, all_flags);
        Ok(LookupAnswer {
            stamp: loaded.stamp.clone(),
            species: query.species.clone(),
            transitions: positions
                .iter()
                .map(|&p| {
                    let h = tables.tables[p].header();
                    (h.upper, h.lower)
                })
                .collect(),
            temperature_count: n_t,
            rate_unit: query.rate_unit,
            excitation,
            deexcitation,
            flags,
            cautions,
        })
    }
}

/// Adds a caution for each kind of flagged value present in an answer.
pub fn add_flag_cautions(cautions: &mut Vec<String>, all_flags: u32) {
    use ratewell_proto::rule::flags;
    if all_flags & flags::APPROXIMATE != 0 {
        cautions.push(
            "some values are APPROXIMATE (estimated without collision data): treat as order of magnitude"
                .into(),
        );
    }
    if all_flags & flags::BEYOND_SOURCE != 0 {
        cautions.push(
            "some values are BEYOND_SOURCE: extrapolated outside the source data's temperature range".into(),
        );
    }
    if all_flags & flags::OUTSIDE_GRID != 0 {
        cautions.push("some values are OUTSIDE_GRID: extrapolated beyond the table grid".into());
    }
}
