//! All rate tables of one species on one grid.

use ratewell_proto::rule::{LogGrid, RateTable};
use std::collections::HashMap;

/// The tables of one species of one dataset on one grid, with an index by (upper, lower).
#[derive(Debug)]
pub struct SpeciesTables {
    /// Species name, e.g. "O III".
    pub species: String,
    /// The grid every table shares.
    pub grid: LogGrid,
    /// Tables in the dataset's transition order.
    pub tables: Vec<RateTable>,
    /// Cautions a user should see with any answer from these tables.
    pub cautions: Vec<String>,
    /// The table-set digest of these tables as served ([`ratewell_proto::digest`]).
    pub digest: String,
    index: HashMap<(u32, u32), usize>,
}

impl SpeciesTables {
    /// Collects tables and indexes them by (upper, lower) level (1-based).
    pub fn new(species: String, grid: LogGrid, tables: Vec<RateTable>, cautions: Vec<String>) -> Self {
        let index = tables
            .iter()
            .enumerate()
            .map(|(i, t)| ((t.header().upper, t.header().lower), i))
            .collect();
        let digest = ratewell_proto::digest::table_set_digest(&species, &grid, &tables);
        Self {
            species,
            grid,
            tables,
            cautions,
            digest,
            index,
        }
    }

    /// The table of transition upper -> lower (1-based indices), if it has collision data.
    pub fn get(&self, upper: u32, lower: u32) -> Option<&RateTable> {
        self.index.get(&(upper, lower)).map(|&i| &self.tables[i])
    }

    /// Position of transition upper -> lower in [`Self::tables`].
    pub fn position(&self, upper: u32, lower: u32) -> Option<usize> {
        self.index.get(&(upper, lower)).copied()
    }

    /// Largest measured interpolation error over all tables (relative).
    pub fn max_interpolation_error(&self) -> f64 {
        self.tables
            .iter()
            .map(RateTable::max_interpolation_error)
            .fold(0.0, f64::max)
    }

    /// Approximate heap bytes held by the tables (knots and slopes; the cubic coefficients are
    /// made where they are used, not stored).
    pub fn table_bytes(&self) -> usize {
        // Per knot: ln Upsilon + slope (2 f64).
        self.tables
            .iter()
            .map(|t| t.knot_pairs().len() * 16 + std::mem::size_of::<RateTable>())
            .sum()
    }
}
