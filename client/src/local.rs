//! Fetched tables evaluated in the caller's process with the one evaluation rule of
//! `ratewell_proto::rule`, so local values equal the server's bit for bit.

use crate::dataset::stamp_label;
use crate::error::ClientError;
use crate::rates::{EvalOptions, RateBuffers, RateLookup, RateQuery};
use crate::transition::Transition;
use crate::units::RateUnit;
use crate::units::check_temperatures;
use ratewell_proto::digest::table_set_digest;
use ratewell_proto::pb;
use ratewell_proto::rule::{
    Location, LogGrid, OutsidePolicy, RateOutputs, RateTable, RateValue, Threads, checked_location,
    write_rows,
};
use ratewell_proto::wire::{grid_from_wire, grid_to_wire, table_from_wire, table_to_wire};
use std::collections::HashMap;

/// All rate tables of one species on one grid, with the stamp of the dataset they came from.
#[derive(Debug, Clone)]
pub struct LocalTables {
    stamp: pb::DatasetStamp,
    species: String,
    grid: LogGrid,
    tables: Vec<RateTable>,
    index: HashMap<Transition, usize>,
    cautions: Vec<String>,
    digest: String,
}

impl LocalTables {
    /// Builds the tables from a FetchTables answer (knots and slopes taken as served). The
    /// table-set digest is recomputed from the tables; an answer that carries a different one
    /// is refused (the tables were changed on the way).
    pub fn from_wire(response: pb::FetchTablesResponse) -> Result<Self, ClientError> {
        let malformed = |message: String| ClientError::Malformed {
            operation: "FetchTables",
            message,
        };
        let stamp = response
            .stamp
            .ok_or_else(|| malformed("no dataset stamp".into()))?;
        let grid = grid_from_wire(
            response
                .grid
                .as_ref()
                .ok_or_else(|| malformed("no grid".into()))?,
        )?;
        let tables = response
            .tables
            .into_iter()
            .map(|wire| table_from_wire(wire, grid))
            .collect::<Result<Vec<_>, _>>()?;
        let digest = table_set_digest(&response.species, &grid, &tables);
        if !response.table_set_digest.is_empty() && !response.table_set_digest.eq_ignore_ascii_case(&digest) {
            return Err(malformed(format!(
                "the tables do not match their table-set digest (carried {}, computed {digest})",
                response.table_set_digest
            )));
        }
        Self::assemble(stamp, response.species, grid, tables, response.cautions, digest)
    }

    /// Puts checked parts together: `digest` must be the table-set digest of `tables`
    /// (computed or verified by the caller). Refuses a transition that appears twice.
    pub(crate) fn assemble(
        stamp: pb::DatasetStamp,
        species: String,
        grid: LogGrid,
        tables: Vec<RateTable>,
        cautions: Vec<String>,
        digest: String,
    ) -> Result<Self, ClientError> {
        let mut index = HashMap::with_capacity(tables.len());
        for (i, table) in tables.iter().enumerate() {
            let key = Transition {
                upper: table.header().upper,
                lower: table.header().lower,
            };
            if index.insert(key, i).is_some() {
                return Err(ClientError::Malformed {
                    operation: "FetchTables",
                    message: format!("transition {key} appears twice"),
                });
            }
        }
        Ok(Self {
            stamp,
            species,
            grid,
            tables,
            index,
            cautions,
            digest,
        })
    }

    /// The wire form of these tables (as a FetchTables answer, digest included).
    pub fn to_wire(&self) -> pb::FetchTablesResponse {
        pb::FetchTablesResponse {
            stamp: Some(self.stamp.clone()),
            species: self.species.clone(),
            grid: Some(grid_to_wire(&self.grid)),
            tables: self.tables.iter().map(table_to_wire).collect(),
            cautions: self.cautions.clone(),
            table_set_digest: self.digest.clone(),
        }
    }

    /// Hex blake3 digest of this table set as served ([`ratewell_proto::digest`]): equal
    /// digests mean equal bits from every evaluation.
    pub fn digest(&self) -> &str {
        &self.digest
    }

    /// The dataset the tables came from.
    pub fn stamp(&self) -> &pb::DatasetStamp {
        &self.stamp
    }
    /// The species.
    pub fn species(&self) -> &str {
        &self.species
    }
    /// The grid shared by every table.
    pub fn grid(&self) -> &LogGrid {
        &self.grid
    }
    /// The tables, in the server's order.
    pub fn tables(&self) -> &[RateTable] {
        &self.tables
    }
    /// The server's cautions about these tables.
    pub fn cautions(&self) -> &[String] {
        &self.cautions
    }
    /// The transitions that have tables, in the server's order.
    pub fn transitions(&self) -> Vec<Transition> {
        self.tables
            .iter()
            .map(|t| Transition {
                upper: t.header().upper,
                lower: t.header().lower,
            })
            .collect()
    }

    /// The table of transition `upper`-`lower`.
    pub fn table(&self, upper: u32, lower: u32) -> Result<&RateTable, ClientError> {
        self.index
            .get(&Transition { upper, lower })
            .map(|&i| &self.tables[i])
            .ok_or_else(|| self.unknown(Transition { upper, lower }))
    }

    fn unknown(&self, t: Transition) -> ClientError {
        ClientError::UnknownTransition {
            species: self.species.clone(),
            upper: t.upper,
            lower: t.lower,
            dataset: stamp_label(&self.stamp),
        }
    }

    /// Upsilon and both rate coefficients (cm^3 s^-1) of one transition at `t_k` (K).
    ///
    /// ```no_run
    /// # async fn demo(client: &ratewell_client::Client) -> Result<(), ratewell_client::ClientError> {
    /// use ratewell_client::OutsidePolicy;
    /// let tables = client.fetch_tables("X", None).await?;
    /// let v = tables.rate(4, 1, 1.0e4, OutsidePolicy::Refuse)?;
    /// println!("q_ul = {:e} cm3/s, flags {}", v.deexcitation_cm3_s, v.flags);
    /// # Ok(()) }
    /// ```
    pub fn rate(
        &self,
        upper: u32,
        lower: u32,
        t_k: f64,
        policy: OutsidePolicy,
    ) -> Result<RateValue, ClientError> {
        Ok(self.table(upper, lower)?.evaluate(t_k, policy)?)
    }

    /// Evaluates many transitions (empty: every table) at many temperatures into `out`,
    /// transition-major (`value[t * n_temperatures + j]`). Each temperature is located once on
    /// the shared grid; the rule's `write_rows` then writes every table's row.
    ///
    /// ```no_run
    /// # fn demo(tables: &ratewell_client::LocalTables) -> Result<(), ratewell_client::ClientError> {
    /// use ratewell_client::{EvalOptions, RateBuffers, Transition};
    /// let transitions = ["2-1".parse::<Transition>()?, "3-1".parse()?];
    /// let mut out = RateBuffers::default();
    /// tables.evaluate_into(&transitions, &[5.0e3, 1.0e4], EvalOptions::default(), &mut out)?;
    /// let q_ul_3_1_at_1e4 = out.deexcitation[1 * 2 + 1];
    /// # Ok(()) }
    /// ```
    pub fn evaluate_into(
        &self,
        transitions: &[Transition],
        temperatures: &[f64],
        options: EvalOptions,
        out: &mut RateBuffers,
    ) -> Result<(), ClientError> {
        let rows = if transitions.is_empty() {
            self.tables.len()
        } else {
            transitions.len()
        };
        let n = temperatures.len();
        out.prepare(rows * n, options.direction);
        out.temperature_count = n;
        let RateBuffers {
            excitation,
            deexcitation,
            flags,
            locations,
            table_indices,
            ..
        } = out;
        self.evaluate_with(
            transitions,
            temperatures,
            options,
            excitation,
            deexcitation,
            flags,
            locations,
            table_indices,
        )
    }

    /// As [`Self::evaluate_into`], into caller-owned slices (for callers that own their
    /// memory, such as other languages): each wanted direction's slice and `flags` hold
    /// exactly `rows * temperatures.len()` values (rows: `transitions.len()`, or every table
    /// when empty); an unwanted direction's slice may be empty. Safe to call from many threads
    /// at once on one table set.
    pub fn evaluate_to_slices(
        &self,
        transitions: &[Transition],
        temperatures: &[f64],
        options: EvalOptions,
        excitation: &mut [f64],
        deexcitation: &mut [f64],
        flags: &mut [u32],
    ) -> Result<(), ClientError> {
        thread_local! {
            static SCRATCH: std::cell::RefCell<(Vec<Location>, Vec<usize>)> =
                const { std::cell::RefCell::new((Vec::new(), Vec::new())) };
        }
        SCRATCH.with(|scratch| {
            let mut scratch = scratch.borrow_mut();
            let (locations, table_indices) = &mut *scratch;
            self.evaluate_with(
                transitions,
                temperatures,
                options,
                excitation,
                deexcitation,
                flags,
                locations,
                table_indices,
            )
        })
    }

    #[allow(clippy::too_many_arguments)]
    fn evaluate_with(
        &self,
        transitions: &[Transition],
        temperatures: &[f64],
        options: EvalOptions,
        excitation: &mut [f64],
        deexcitation: &mut [f64],
        flags: &mut [u32],
        locations: &mut Vec<Location>,
        table_indices: &mut Vec<usize>,
    ) -> Result<(), ClientError> {
        check_temperatures(temperatures, options.temperature_unit)?;
        locations.clear();
        for (j, &t) in temperatures.iter().enumerate() {
            let t_k = options.temperature_unit.to_kelvin(t);
            locations.push(checked_location(&self.grid, j, t_k, options.outside)?);
        }
        table_indices.clear();
        if transitions.is_empty() {
            table_indices.extend(0..self.tables.len());
        } else {
            for &t in transitions {
                let i = *self.index.get(&t).ok_or_else(|| self.unknown(t))?;
                table_indices.push(i);
            }
        }
        let direction = options.direction;
        let rows: Vec<&RateTable> = table_indices.iter().map(|&ti| &self.tables[ti]).collect();
        let threads = if options.parallel {
            Threads::Pool
        } else {
            Threads::Caller
        };
        let mut out = RateOutputs::new(direction, excitation, deexcitation, flags)?;
        write_rows(&rows, locations, threads, &mut out)?;
        let unit = options.rate_unit;
        if unit != RateUnit::CubicCentimetrePerSecond {
            for v in excitation.iter_mut().chain(deexcitation.iter_mut()) {
                *v = unit.from_cm3_s(*v);
            }
        }
        Ok(())
    }

    /// Evaluates a whole [`RateQuery`] locally, answering in the same form as a server lookup.
    /// The query's grid is not consulted: these tables are on the grid they were fetched on.
    pub fn evaluate(&self, query: &RateQuery) -> Result<RateLookup, ClientError> {
        if query.species != self.species {
            return Err(ClientError::invalid(
                "species",
                format!("{:?}", query.species),
                format!("these tables are for {:?}", self.species),
            ));
        }
        let mut out = RateBuffers::default();
        self.evaluate_into(&query.transitions, &query.temperatures, query.options, &mut out)?;
        let transitions = if query.transitions.is_empty() {
            self.transitions()
        } else {
            query.transitions.clone()
        };
        Ok(RateLookup {
            stamp: self.stamp.clone(),
            species: self.species.clone(),
            transitions,
            temperature_count: query.temperatures.len(),
            rate_unit: query.options.rate_unit,
            excitation: out.excitation,
            deexcitation: out.deexcitation,
            flags: out.flags,
            cautions: self.cautions.clone(),
        })
    }
}

#[cfg(test)]
pub(crate) mod tests {
    use super::*;
    use crate::units::{RateUnit, TemperatureUnit};
    use ratewell_proto::constants::KELVIN_PER_EV;
    use ratewell_proto::rule::{Direction, TableHeader, flags};

    /// An invented three-level species "X" on a 1e3..1e6 K grid (demo numbers, not real data).
    pub(crate) fn invented_response(content_hash: &str) -> pb::FetchTablesResponse {
        let grid = LogGrid::from_range(1e3, 1e6, 10).unwrap();
        let mk = |upper, lower, g_u, de_k, approximate: bool, scale: f64| {
            let header = TableHeader {
                upper,
                lower,
                g_lower: 2.0,
                g_upper: g_u,
                excitation_energy_k: de_k,
                source_t_min_k: 3e3,
                source_t_max_k: 3e5,
                approximate,
            };
            let y = (0..grid.knots())
                .map(|i| scale * (0.3 + 0.1 * (i as f64 * 0.7).sin()))
                .collect();
            table_to_wire(&RateTable::from_knots(header, grid, y).unwrap())
        };
        pb::FetchTablesResponse {
            stamp: Some(pb::DatasetStamp {
                id: "demo".into(),
                version: "1.0.0".into(),
                content_hash: content_hash.into(),
                ..Default::default()
            }),
            species: "X".into(),
            grid: Some(grid_to_wire(&grid)),
            tables: vec![
                mk(2, 1, 4.0, 2.0e4, false, 1.0),
                mk(3, 1, 6.0, 3.5e4, false, 0.5),
                mk(3, 2, 6.0, 1.5e4, true, -1.0),
            ],
            cautions: vec!["3-2: approximate".into()],
            table_set_digest: String::new(),
        }
    }

    fn tables() -> LocalTables {
        LocalTables::from_wire(invented_response("ab")).unwrap()
    }

    fn temperatures() -> Vec<f64> {
        (0..97).map(|i| 1.0e3 * 10f64.powf(i as f64 * 0.031)).collect()
    }

    // The contract (one evaluation rule): batched local values equal the rule's
    // scalar evaluation of the same table bit for bit, in the server's transition-major layout.
    #[test]
    fn batched_evaluation_is_the_rule_bit_for_bit() {
        let t = tables();
        let temps = temperatures();
        let trs: Vec<Transition> = vec!["3-2".parse().unwrap(), "2-1".parse().unwrap()];
        let mut out = RateBuffers::default();
        t.evaluate_into(&trs, &temps, EvalOptions::default(), &mut out)
            .unwrap();
        assert_eq!(out.deexcitation.len(), 2 * temps.len());
        for (row, tr) in trs.iter().enumerate() {
            let table = t.table(tr.upper, tr.lower).unwrap();
            for (j, &tk) in temps.iter().enumerate() {
                let v = table.evaluate(tk, OutsidePolicy::Refuse).unwrap();
                let k = row * temps.len() + j;
                assert_eq!(out.deexcitation[k].to_bits(), v.deexcitation_cm3_s.to_bits());
                assert_eq!(out.excitation[k].to_bits(), v.excitation_cm3_s.to_bits());
                assert_eq!(out.flags[k], v.flags);
                let s = t.rate(tr.upper, tr.lower, tk, OutsidePolicy::Refuse).unwrap();
                assert_eq!(s, v);
            }
        }
    }

    #[test]
    fn caller_owned_slices_get_the_same_bits_and_wrong_lengths_are_refused() {
        let t = tables();
        let temps = temperatures();
        let options = EvalOptions {
            rate_unit: RateUnit::CubicMetrePerSecond,
            ..EvalOptions::default()
        };
        let mut out = RateBuffers::default();
        t.evaluate_into(&[], &temps, options, &mut out).unwrap();
        let n = 3 * temps.len();
        let (mut e, mut d, mut f) = (vec![0.0; n], vec![0.0; n], vec![0u32; n]);
        t.evaluate_to_slices(&[], &temps, options, &mut e, &mut d, &mut f)
            .unwrap();
        let bits = |v: &[f64]| v.iter().map(|x| x.to_bits()).collect::<Vec<_>>();
        assert_eq!(bits(&e), bits(&out.excitation));
        assert_eq!(bits(&d), bits(&out.deexcitation));
        assert_eq!(f, out.flags);
        let err = t
            .evaluate_to_slices(&[], &temps, options, &mut e[..n - 1], &mut d, &mut f)
            .unwrap_err();
        assert!(matches!(err, ClientError::Rule(_)), "{err}");
    }

    // Opt-in parallelism changes only which thread computes a row (common practice, no
    // source): 3 tables x 30,000 temperatures is above the 65,536-value threshold.
    #[test]
    fn the_opt_in_parallel_path_gives_the_same_bits() {
        let t = tables();
        let temps: Vec<f64> = (0..30_000).map(|i| 1.0e3 * 10f64.powf(i as f64 * 1e-4)).collect();
        let (mut one, mut many) = (RateBuffers::default(), RateBuffers::default());
        t.evaluate_into(&[], &temps, EvalOptions::default(), &mut one)
            .unwrap();
        let parallel = EvalOptions {
            parallel: true,
            ..EvalOptions::default()
        };
        t.evaluate_into(&[], &temps, parallel, &mut many).unwrap();
        let bits = |v: &[f64]| v.iter().map(|x| x.to_bits()).collect::<Vec<_>>();
        assert_eq!(bits(&one.excitation), bits(&many.excitation));
        assert_eq!(bits(&one.deexcitation), bits(&many.deexcitation));
        assert_eq!(one.flags, many.flags);
    }

    #[test]
    fn units_convert_in_and_out() {
        let t = tables();
        let temps_ev = [0.5, 1.0, 2.0];
        let options = EvalOptions {
            temperature_unit: TemperatureUnit::ElectronVolt,
            rate_unit: RateUnit::CubicMetrePerSecond,
            direction: Direction::Deexcitation,
            outside: OutsidePolicy::Refuse,
            parallel: false,
        };
        let mut out = RateBuffers::default();
        t.evaluate_into(&[], &temps_ev, options, &mut out).unwrap();
        assert!(out.excitation.is_empty());
        assert_eq!(out.deexcitation.len(), 3 * 3);
        let table = t.table(2, 1).unwrap();
        for (j, &e) in temps_ev.iter().enumerate() {
            let v = table.evaluate(e * KELVIN_PER_EV, OutsidePolicy::Refuse).unwrap();
            // 1 cm^3 = 1e-6 m^3 (SI definition of the metre and centimetre).
            assert_eq!(
                out.deexcitation[j].to_bits(),
                (v.deexcitation_cm3_s * 1e-6).to_bits()
            );
        }
    }

    #[test]
    fn outside_the_grid_is_refused_or_flagged() {
        let t = tables();
        let mut out = RateBuffers::default();
        let err = t
            .evaluate_into(&[], &[5e3, 2e7], EvalOptions::default(), &mut out)
            .unwrap_err();
        assert!(
            err.to_string()
                .starts_with("temperatures[1] = 20000000 K: outside the table grid"),
            "{err}"
        );
        let opts = EvalOptions {
            outside: OutsidePolicy::Extrapolate,
            ..EvalOptions::default()
        };
        t.evaluate_into(&[], &[5e3, 2e7], opts, &mut out).unwrap();
        assert_eq!(out.flags[1] & flags::OUTSIDE_GRID, flags::OUTSIDE_GRID);
        assert_eq!(out.flags[0], 0);
        // Table 3-2 is approximate: every value says so.
        assert_eq!(out.flags[4] & flags::APPROXIMATE, flags::APPROXIMATE);
        let err = t
            .evaluate_into(&[], &[5e3, -1.0], EvalOptions::default(), &mut out)
            .unwrap_err();
        assert_eq!(err.to_string(), "temperatures[1] = -1 K: must be finite and > 0");
    }

    #[test]
    fn unknown_transitions_and_species_are_named() {
        let t = tables();
        let mut out = RateBuffers::default();
        let err = t
            .evaluate_into(
                &["4-1".parse().unwrap()],
                &[1e4],
                EvalOptions::default(),
                &mut out,
            )
            .unwrap_err();
        assert_eq!(
            err.to_string(),
            "species X: no rate table for transition 4-1 in dataset demo@1.0.0"
        );
        let q = RateQuery::new("Y", vec![1e4]);
        assert!(
            t.evaluate(&q)
                .unwrap_err()
                .to_string()
                .starts_with("species = \"Y\"")
        );
        let l = t.evaluate(&RateQuery::new("X", vec![1e4, 2e4])).unwrap();
        assert_eq!(l.transitions.len(), 3);
        assert_eq!(l.temperature_count, 2);
    }

    #[test]
    fn malformed_answers_are_refused() {
        let mut r = invented_response("ab");
        r.tables.push(r.tables[0].clone());
        assert!(
            LocalTables::from_wire(r)
                .unwrap_err()
                .to_string()
                .contains("appears twice")
        );
        let mut r = invented_response("ab");
        r.tables[0].slopes.pop();
        assert!(matches!(LocalTables::from_wire(r), Err(ClientError::Rule(_))));
        let mut r = invented_response("ab");
        r.grid = None;
        assert!(LocalTables::from_wire(r).is_err());
    }
}
