//! Rate-coefficient questions and answers shared by server lookups and local evaluation:
//! the query, the evaluation options, and the transition-major result.

use crate::dataset::{DatasetRef, check_same_stamp};
use crate::error::ClientError;
use crate::transition::{TableGrid, Transition};
use crate::units::{RateUnit, TemperatureUnit};
use ratewell_proto::pb;
use ratewell_proto::rule::{Direction, OutsidePolicy, flags};

/// How values are evaluated: input temperature unit, output rate unit, which directions, and
/// what to do outside the table grid.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct EvalOptions {
    /// Unit of the temperatures given.
    pub temperature_unit: TemperatureUnit,
    /// Unit of the rate coefficients returned.
    pub rate_unit: RateUnit,
    /// Excitation, de-excitation or both.
    pub direction: Direction,
    /// Refuse or extrapolate (flagged) outside the grid.
    pub outside: OutsidePolicy,
    /// Spread batches of more than 65,536 values over rayon's global thread pool (same bits).
    /// Off by default: the library then runs on the calling thread only and starts no threads,
    /// as an MPI rank or an OpenMP loop expects.
    pub parallel: bool,
}

impl Default for EvalOptions {
    fn default() -> Self {
        Self {
            temperature_unit: TemperatureUnit::Kelvin,
            rate_unit: RateUnit::CubicCentimetrePerSecond,
            direction: Direction::Both,
            outside: OutsidePolicy::Refuse,
            parallel: false,
        }
    }
}

/// A batched rate-coefficient question: many transitions at many temperatures of one species.
#[derive(Debug, Clone, PartialEq)]
pub struct RateQuery {
    /// Species name as the dataset spells it.
    pub species: String,
    /// Transitions to evaluate; empty means every transition with collision data.
    pub transitions: Vec<Transition>,
    /// Temperatures, in `options.temperature_unit`.
    pub temperatures: Vec<f64>,
    /// Units, directions and grid policy.
    pub options: EvalOptions,
    /// Table grid; `None` means the dataset's default grid.
    pub grid: Option<TableGrid>,
}

impl RateQuery {
    /// Every transition of `species` at `temperatures` (K), both directions, cm^3 s^-1,
    /// refusing temperatures outside the grid.
    pub fn new(species: impl Into<String>, temperatures: Vec<f64>) -> Self {
        Self {
            species: species.into(),
            transitions: Vec::new(),
            temperatures,
            options: EvalOptions::default(),
            grid: None,
        }
    }

    /// Only these transitions, in this order.
    pub fn with_transitions(mut self, transitions: Vec<Transition>) -> Self {
        self.transitions = transitions;
        self
    }

    /// Other evaluation options.
    pub fn with_options(mut self, options: EvalOptions) -> Self {
        self.options = options;
        self
    }

    /// A non-default table grid.
    pub fn with_grid(mut self, grid: TableGrid) -> Self {
        self.grid = Some(grid);
        self
    }

    /// The wire request for the given dataset, temperatures `range` only.
    pub(crate) fn to_wire(
        &self,
        dataset: &DatasetRef,
        range: std::ops::Range<usize>,
    ) -> pb::LookupRatesRequest {
        let direction = match self.options.direction {
            Direction::Excitation => pb::Direction::Excitation,
            Direction::Deexcitation => pb::Direction::Deexcitation,
            Direction::Both => pb::Direction::Both,
        };
        let outside = match self.options.outside {
            OutsidePolicy::Refuse => pb::OutsideGrid::Refuse,
            OutsidePolicy::Extrapolate => pb::OutsideGrid::Extrapolate,
        };
        pb::LookupRatesRequest {
            dataset: Some(dataset.to_selector()),
            species: self.species.clone(),
            transitions: self.transitions.iter().map(|t| t.to_wire()).collect(),
            temperatures: self.temperatures[range].to_vec(),
            temperature_unit: self.options.temperature_unit.to_wire(),
            direction: direction as i32,
            rate_unit: self.options.rate_unit.to_wire(),
            outside_grid: outside as i32,
            grid: self.grid.map(TableGrid::to_wire),
        }
    }
}

/// Rate coefficients for many transitions at many temperatures, laid out transition-major:
/// `deexcitation[t * temperature_count + j]` is transition `t` at temperature `j` (the layout of
/// the server's LookupRatesResponse). Arrays for a direction not asked for are empty.
#[derive(Debug, Clone, PartialEq)]
pub struct RateLookup {
    /// The dataset the values came from (checked against the request).
    pub stamp: pb::DatasetStamp,
    /// The species.
    pub species: String,
    /// The transitions, in row order.
    pub transitions: Vec<Transition>,
    /// Number of temperatures (row length).
    pub temperature_count: usize,
    /// Unit of the values.
    pub rate_unit: RateUnit,
    /// Excitation rate coefficients q_lu, `rate_unit`.
    pub excitation: Vec<f64>,
    /// De-excitation rate coefficients q_ul, `rate_unit`.
    pub deexcitation: Vec<f64>,
    /// [`ratewell_proto::rule::flags`] bits per value.
    pub flags: Vec<u32>,
    /// Cautions from the server or the fetched tables.
    pub cautions: Vec<String>,
}

impl RateLookup {
    /// An answer from the wire, checking array lengths against the request.
    pub(crate) fn from_wire(
        response: pb::LookupRatesResponse,
        stamp: pb::DatasetStamp,
        expected_temperatures: usize,
        direction: Direction,
    ) -> Result<Self, ClientError> {
        let malformed = |message: String| ClientError::Malformed {
            operation: "LookupRates",
            message,
        };
        let n_temp = response.temperature_count as usize;
        if n_temp != expected_temperatures {
            return Err(malformed(format!(
                "temperature_count = {n_temp}, but {expected_temperatures} temperatures were sent"
            )));
        }
        let n = response.transitions.len() * n_temp;
        let mut excitation = response.excitation;
        let mut deexcitation = response.deexcitation;
        for (name, wanted, values) in [
            ("excitation", direction.wants_excitation(), &mut excitation),
            ("deexcitation", direction.wants_deexcitation(), &mut deexcitation),
        ] {
            if wanted && values.len() != n {
                return Err(malformed(format!(
                    "{name} has {} values, expected {n}",
                    values.len()
                )));
            }
            if !wanted {
                values.clear();
            }
        }
        if response.flags.len() != n {
            return Err(malformed(format!(
                "flags has {} values, expected {n}",
                response.flags.len()
            )));
        }
        Ok(Self {
            stamp,
            species: response.species,
            transitions: response.transitions.into_iter().map(Transition::from).collect(),
            temperature_count: n_temp,
            rate_unit: crate::units::answer_rate_unit(response.rate_unit)?,
            excitation,
            deexcitation,
            flags: response.flags,
            cautions: response.cautions,
        })
    }

    /// Joins answers for consecutive chunks of temperatures (same transitions, same dataset)
    /// into one, in one pass over the values (each row of the result is the chunks' rows of
    /// that transition, in order).
    pub(crate) fn concat_temperatures(parts: Vec<RateLookup>) -> Result<RateLookup, ClientError> {
        let mut parts = parts.into_iter();
        let Some(mut first) = parts.next() else {
            return Err(ClientError::Malformed {
                operation: "LookupRatesStream",
                message: "no answer".into(),
            });
        };
        let rest: Vec<RateLookup> = parts.collect();
        for next in &rest {
            check_same_stamp("LookupRatesStream", &first.stamp, &next.stamp)?;
            if next.transitions != first.transitions || next.rate_unit != first.rate_unit {
                return Err(ClientError::Malformed {
                    operation: "LookupRatesStream",
                    message: "a later part of the answer lists other transitions or units".into(),
                });
            }
        }
        let rows = first.transitions.len();
        let total: usize = first.temperature_count + rest.iter().map(|p| p.temperature_count).sum::<usize>();
        let all: Vec<&RateLookup> = std::iter::once(&first).chain(&rest).collect();
        /// Row `r` of the result is row `r` of every part, in order (transition-major layout).
        fn join<T: Copy>(
            all: &[&RateLookup],
            field: impl Fn(&RateLookup) -> &[T],
            rows: usize,
            total: usize,
        ) -> Vec<T> {
            if all.iter().all(|p| field(p).is_empty()) {
                return Vec::new();
            }
            let mut out = Vec::with_capacity(rows * total);
            for row in 0..rows {
                for p in all {
                    let n = p.temperature_count;
                    out.extend_from_slice(&field(p)[row * n..(row + 1) * n]);
                }
            }
            out
        }
        let excitation = join(&all, |p| &p.excitation, rows, total);
        let deexcitation = join(&all, |p| &p.deexcitation, rows, total);
        let flags = join(&all, |p| &p.flags, rows, total);
        for next in rest {
            for c in next.cautions {
                if !first.cautions.contains(&c) {
                    first.cautions.push(c);
                }
            }
        }
        first.excitation = excitation;
        first.deexcitation = deexcitation;
        first.flags = flags;
        first.temperature_count = total;
        Ok(first)
    }

    /// Index of transition `t` at temperature `j` in the value arrays.
    pub fn index(&self, t: usize, j: usize) -> usize {
        t * self.temperature_count + j
    }

    /// OR of every value's flags.
    pub fn all_flags(&self) -> u32 {
        self.flags.iter().fold(0, |a, &f| a | f)
    }

    /// Plain-language cautions derived from the flags: one line per transition that has
    /// approximate, beyond-source or outside-grid values.
    pub fn flag_cautions(&self) -> Vec<String> {
        let n = self.temperature_count;
        let mut out = Vec::new();
        for (t, tr) in self.transitions.iter().enumerate() {
            let row = &self.flags[t * n..(t + 1) * n];
            let count = |bit: u32| row.iter().filter(|&&f| f & bit != 0).count();
            if count(flags::APPROXIMATE) > 0 {
                out.push(format!(
                    "{tr}: approximate collision data (formula estimate, not computed or measured)"
                ));
            }
            let beyond = count(flags::BEYOND_SOURCE);
            if beyond > 0 {
                out.push(format!(
                    "{tr}: {beyond} of {n} temperatures outside the source data range (scaled extrapolation)"
                ));
            }
            let outside = count(flags::OUTSIDE_GRID);
            if outside > 0 {
                out.push(format!(
                    "{tr}: {outside} of {n} temperatures outside the table grid (extrapolated)"
                ));
            }
        }
        out
    }
}

/// Reusable output buffers for [`crate::LocalTables::evaluate_into`]; resized as needed, so a
/// loop that evaluates many batches allocates once.
#[derive(Debug, Clone, Default)]
pub struct RateBuffers {
    /// Excitation rate coefficients, transition-major (empty if not asked for).
    pub excitation: Vec<f64>,
    /// De-excitation rate coefficients, transition-major (empty if not asked for).
    pub deexcitation: Vec<f64>,
    /// Flags per value, transition-major.
    pub flags: Vec<u32>,
    /// Number of temperatures in the last evaluation (row length).
    pub temperature_count: usize,
    pub(crate) locations: Vec<ratewell_proto::rule::Location>,
    pub(crate) table_indices: Vec<usize>,
}

impl RateBuffers {
    /// Sizes the buffers for `n` values in `direction` (contents are overwritten by the caller).
    pub(crate) fn prepare(&mut self, n: usize, direction: Direction) {
        // Every slot is overwritten by the evaluation, so buffers of the right length are
        // reused as they are (no clearing pass over them).
        let size = |v: &mut Vec<f64>, wanted: bool| {
            if wanted {
                v.resize(n, 0.0);
            } else {
                v.clear();
            }
        };
        size(&mut self.excitation, direction.wants_excitation());
        size(&mut self.deexcitation, direction.wants_deexcitation());
        self.flags.resize(n, 0);
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn stamp() -> pb::DatasetStamp {
        pb::DatasetStamp {
            id: "demo".into(),
            version: "1".into(),
            content_hash: "ab".into(),
            ..Default::default()
        }
    }

    fn lookup(n_temp: usize, base: f64) -> RateLookup {
        let transitions = vec![
            Transition { upper: 2, lower: 1 },
            Transition { upper: 3, lower: 1 },
        ];
        let n = transitions.len() * n_temp;
        RateLookup {
            stamp: stamp(),
            species: "X".into(),
            transitions,
            temperature_count: n_temp,
            rate_unit: RateUnit::CubicCentimetrePerSecond,
            excitation: (0..n).map(|i| base + i as f64).collect(),
            deexcitation: Vec::new(),
            flags: vec![0; n],
            cautions: vec![],
        }
    }

    // The transition-major layout is the contract of rates.proto (LookupRatesResponse).
    #[test]
    fn chunks_merge_into_the_transition_major_layout() {
        let a = lookup(2, 0.0); // rows [0, 1], [2, 3]
        let b = lookup(3, 10.0); // rows [10, 11, 12], [13, 14, 15]
        let c = lookup(1, 20.0); // rows [20], [21]
        let a = RateLookup::concat_temperatures(vec![a, b, c]).unwrap();
        assert_eq!(a.temperature_count, 6);
        assert_eq!(
            a.excitation,
            vec![0.0, 1.0, 10.0, 11.0, 12.0, 20.0, 2.0, 3.0, 13.0, 14.0, 15.0, 21.0]
        );
        assert_eq!(a.flags.len(), 12);
        assert!(a.deexcitation.is_empty());
        assert_eq!(a.index(1, 2), 8);
        assert_eq!(a.excitation[a.index(1, 2)], 13.0);
    }

    #[test]
    fn wire_answers_with_wrong_lengths_are_malformed() {
        let resp = pb::LookupRatesResponse {
            stamp: Some(stamp()),
            species: "X".into(),
            transitions: vec![pb::TransitionKey { upper: 2, lower: 1 }],
            temperature_count: 2,
            rate_unit: 1,
            excitation: vec![1.0, 2.0],
            deexcitation: vec![1.0],
            flags: vec![0, 0],
            cautions: vec![],
        };
        let err = RateLookup::from_wire(resp.clone(), stamp(), 2, Direction::Both).unwrap_err();
        assert!(
            err.to_string().contains("deexcitation has 1 values, expected 2"),
            "{err}"
        );
        let ok = RateLookup::from_wire(resp.clone(), stamp(), 2, Direction::Excitation).unwrap();
        assert!(ok.deexcitation.is_empty());
        assert!(RateLookup::from_wire(resp, stamp(), 3, Direction::Excitation).is_err());
    }

    #[test]
    fn flag_cautions_name_the_transition_and_count() {
        let mut l = lookup(4, 0.0);
        l.flags[0] = flags::OUTSIDE_GRID | flags::BEYOND_SOURCE;
        l.flags[1] = flags::BEYOND_SOURCE;
        l.flags[4] = flags::APPROXIMATE;
        let c = l.flag_cautions();
        assert_eq!(c.len(), 3, "{c:?}");
        assert!(c[0].starts_with("2-1: 2 of 4 temperatures outside the source data range"));
        assert!(c[1].starts_with("2-1: 1 of 4 temperatures outside the table grid"));
        assert!(c[2].starts_with("3-1: approximate"));
        assert_eq!(l.all_flags(), 7);
    }
}
