//! Population solves over lists or grids of (Te, ne): rates evaluated from the species' tables
//! with the shared rule, statistical equilibrium solved per point in parallel (rayon), then
//! line emissivities, radiated power and critical densities.

use super::lookup::{add_flag_cautions, temperatures_in_kelvin};
use super::units::{DensityUnit, PowerUnit, TemperatureUnit};
use super::{Engine, EngineError, GridSpec, Selector, SolveInputs, Stamp, admit};
use crate::limits::{SPLIT_ADVICE, check};
use crate::physics::PhysicsError;
use crate::physics::emission::{
    PowerSummary, critical_densities_all_exits_cm3, critical_densities_cm3, line_powers_into,
};
use crate::physics::populations::{CollisionalRate, PopulationWorkspace};
use crate::tables::SpeciesTables;
use ratewell_proto::rule::{
    Direction, Location, OutsidePolicy, RateOutputs, checked_location, write_tables_at,
};
use rayon::prelude::*;
use std::sync::Arc;

/// The stop flag ([`super::cancel`]), also named here, where solves first took it.
pub use super::Cancel;

/// How temperatures and densities combine into points.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum PointLayout {
    /// temperatures[i] with densities[i] (equal lengths).
    Pairs,
    /// Every temperature with every density, temperature-major (i_t * n_d + i_d).
    Grid,
}

/// A population solve request.
#[derive(Debug, Clone)]
pub struct SolveQuery {
    /// Which dataset.
    pub selector: Selector,
    /// Species name.
    pub species: String,
    /// Electron temperatures in `temperature_unit`.
    pub temperatures: Vec<f64>,
    /// Unit of temperatures.
    pub temperature_unit: TemperatureUnit,
    /// Electron densities in `density_unit`.
    pub densities: Vec<f64>,
    /// Unit of densities.
    pub density_unit: DensityUnit,
    /// Pairs or grid.
    pub layout: PointLayout,
    /// Temperatures outside the table grid: refuse or extrapolate.
    pub outside: OutsidePolicy,
    /// Unit of emissivities and power in the answer.
    pub power_unit: PowerUnit,
    /// Table grid; `None` uses the dataset's default.
    pub grid: Option<GridSpec>,
    /// Report only lines with emissivity >= this fraction of the point's strongest line.
    pub min_line_fraction: f64,
}

impl SolveQuery {
    /// Every temperature (K) with every density (cm^-3) of `species` on the dataset's default
    /// grid: temperatures outside it refused, powers in W, every line reported. Change any
    /// other field with struct update syntax.
    pub fn grid(
        selector: Selector,
        species: impl Into<String>,
        temperatures_k: Vec<f64>,
        densities_cm3: Vec<f64>,
    ) -> Self {
        Self {
            selector,
            species: species.into(),
            temperatures: temperatures_k,
            temperature_unit: TemperatureUnit::Kelvin,
            densities: densities_cm3,
            density_unit: DensityUnit::PerCubicCentimetre,
            layout: PointLayout::Grid,
            outside: OutsidePolicy::Refuse,
            power_unit: PowerUnit::Watt,
            grid: None,
            min_line_fraction: 0.0,
        }
    }
}

/// One line's emission at a point.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct LineAnswer {
    /// Upper level (1-based).
    pub upper: u32,
    /// Lower level (1-based).
    pub lower: u32,
    /// Vacuum wavelength, Angstrom.
    pub wavelength_vacuum_angstrom: f64,
    /// Emissivity per ion, in the query's power unit.
    pub emissivity: f64,
}

/// The solution at one (Te, ne) point.
#[derive(Debug, Clone, PartialEq)]
pub struct PointAnswer {
    /// Electron temperature, K.
    pub temperature_k: f64,
    /// Electron density, cm^-3.
    pub density_per_cm3: f64,
    /// Fractional level populations (position 0 = level 1), summing to 1.
    pub fractions: Vec<f64>,
    /// Lines above the reporting threshold.
    pub lines: Vec<LineAnswer>,
    /// Total radiated power per ion (all lines), power unit.
    pub radiated_power: f64,
    /// Largest relative imbalance of the balance equations.
    pub residual: f64,
    /// OR of the flag bits of every rate used.
    pub flags: u32,
    /// Critical density per level, cm^-3, downward rates only
    /// ([`critical_densities_cm3`]: 0 for levels without radiative decay, infinity for levels
    /// without collisional de-excitation). They depend on the temperature only, so the points
    /// of one temperature share one list.
    pub critical_densities_per_cm3: Arc<[f64]>,
    /// The same with every collisional exit counted ([`critical_densities_all_exits_cm3`]).
    pub critical_densities_all_exits_per_cm3: Arc<[f64]>,
}

/// The answer to a [`SolveQuery`].
#[derive(Debug, Clone, PartialEq)]
pub struct SolveAnswer {
    /// Dataset the values came from.
    pub stamp: Stamp,
    /// Species name.
    pub species: String,
    /// Number of levels.
    pub level_count: usize,
    /// Unit of emissivities and power.
    pub power_unit: PowerUnit,
    /// One entry per point, in the query's layout order.
    pub points: Vec<PointAnswer>,
    /// Cautions for the user.
    pub cautions: Vec<String>,
}

fn densities_in_per_cm3(values: &[f64], unit: DensityUnit) -> Result<Vec<f64>, EngineError> {
    if values.is_empty() {
        return Err(EngineError::invalid(
            "densities",
            "[]",
            "must hold at least one density",
        ));
    }
    let bad = values
        .iter()
        .enumerate()
        .filter(|(_, v)| !(v.is_finite() && **v > 0.0));
    if let Some(e) = EngineError::bad_batch(bad, |(i, v)| {
        let field = format!("densities[{i}]");
        let message = format!("{field} = {v} {}: must be finite and > 0", unit.symbol());
        (field, message)
    }) {
        return Err(e);
    }
    Ok(values.iter().map(|&v| unit.to_per_cm3(v)).collect())
}

/// Work at one temperature: some or all of the densities solved at it, with their output
/// positions. A temperature's densities are split into several pieces when there are too few
/// temperatures to keep every thread busy.
struct TemperatureWork {
    t_k: f64,
    location: Location,
    densities: Vec<(usize, f64)>,
}

impl Engine {
    /// Refuses a solve over the point, work or answer-size limits, before any table is built
    /// or matrix allocated.
    fn admit_solve(
        &self,
        query: &SolveQuery,
        n_points: usize,
        inputs: &SolveInputs,
    ) -> Result<(), EngineError> {
        let levels = inputs.energies_cm1.len();
        check(
            "points of the solve",
            n_points as u64,
            self.config().max_solve_points as u64,
            "max_solve_points",
            SPLIT_ADVICE,
        )?;
        admit::check_solve_work(&self.config().limits, n_points, levels)?;
        // Every line is reported only with no threshold; otherwise the encoder's own limit is
        // the backstop.
        let lines = if query.min_line_fraction > 0.0 {
            0
        } else {
            inputs.lines.len()
        };
        admit::check_answer_bytes(
            admit::solve_answer_bytes(n_points, levels, lines),
            self.config().max_answer_bytes,
        )?;
        Ok(())
    }

    /// Solves statistical equilibrium at every requested point. CPU-heavy: call from a
    /// blocking thread.
    pub fn solve(&self, query: &SolveQuery) -> Result<SolveAnswer, EngineError> {
        self.solve_cancellable(query, &Cancel::default())
    }

    /// [`Self::solve`], checking `cancel` before each table of a build on a custom grid and
    /// before each point, and stopping with [`EngineError::Cancelled`] once it is set: a
    /// cancelled solve ends within one point's solve (or one table's build) per thread.
    pub fn solve_cancellable(&self, query: &SolveQuery, cancel: &Cancel) -> Result<SolveAnswer, EngineError> {
        if !(0.0..=1.0).contains(&query.min_line_fraction) {
            return Err(EngineError::invalid(
                "min_line_fraction",
                query.min_line_fraction,
                "must be within [0, 1]",
            ));
        }
        let loaded = self.select(&query.selector)?;
        let inputs = loaded
            .solve_inputs
            .get(&query.species)
            .ok_or_else(|| super::unknown_species_error(&loaded, &query.species))?;
        let temps_k = temperatures_in_kelvin(&query.temperatures, query.temperature_unit)?;
        let dens = densities_in_per_cm3(&query.densities, query.density_unit)?;
        let n_points = match query.layout {
            PointLayout::Pairs => {
                if temps_k.len() != dens.len() {
                    return Err(EngineError::invalid(
                        "densities",
                        format!("{} values", dens.len()),
                        format!(
                            "must have as many values as temperatures ({}) unless grid is set",
                            temps_k.len()
                        ),
                    ));
                }
                temps_k.len()
            }
            PointLayout::Grid => temps_k.len().saturating_mul(dens.len()),
        };
        self.admit_solve(query, n_points, inputs)?;
        let tables = self.species_tables_cancellable(&loaded, &query.species, query.grid, cancel)?;
        let locate =
            |j: usize, t: f64| checked_location(&tables.grid, j, t, query.outside).map_err(EngineError::Rule);
        let work: Vec<TemperatureWork> = match query.layout {
            PointLayout::Pairs => temps_k
                .iter()
                .zip(&dens)
                .enumerate()
                .map(|(i, (&t, &n))| {
                    Ok(TemperatureWork {
                        t_k: t,
                        location: locate(i, t)?,
                        densities: vec![(i, n)],
                    })
                })
                .collect::<Result<_, EngineError>>()?,
            PointLayout::Grid => temps_k
                .iter()
                .enumerate()
                .map(|(i, &t)| {
                    Ok(TemperatureWork {
                        t_k: t,
                        location: locate(i, t)?,
                        densities: dens
                            .iter()
                            .enumerate()
                            .map(|(d, &n)| (i * dens.len() + d, n))
                            .collect(),
                    })
                })
                .collect::<Result<_, EngineError>>()?,
        };
        let work = split_for_threads(work, rayon::current_num_threads());
        let n_levels = inputs.energies_cm1.len();
        let power_factor = query.power_unit.from_watt_factor();
        // Every line's fixed part once; each point copies it and fills in the emissivities.
        let lines: Vec<LineAnswer> = inputs
            .lines
            .iter()
            .map(|l| LineAnswer {
                upper: l.upper as u32 + 1,
                lower: l.lower as u32 + 1,
                wavelength_vacuum_angstrom: l.wavelength_vacuum_angstrom,
                emissivity: 0.0,
            })
            .collect();
        let shared = PieceInputs {
            tables: &tables,
            inputs,
            line_template: &lines,
            power_factor,
            min_line_fraction: query.min_line_fraction,
            cancel,
        };
        let solved: Vec<Vec<(usize, PointAnswer)>> = work
            .par_iter()
            .map_init(
                || Scratch::new(n_levels, tables.tables.len(), inputs.lines.len()),
                |scratch, w| {
                    cancel.check()?;
                    solve_at_temperature(scratch, &shared, w)
                },
            )
            .collect::<Result<_, EngineError>>()?;
        // Pieces are built in output order and collect keeps their order, so flattening puts
        // every point at its position (checked in debug builds).
        let mut points: Vec<PointAnswer> = Vec::with_capacity(n_points);
        for (i, p) in solved.into_iter().flatten() {
            debug_assert_eq!(i, points.len());
            points.push(p);
        }
        debug_assert_eq!(points.len(), n_points);
        let mut cautions = tables.cautions.clone();
        add_flag_cautions(&mut cautions, points.iter().fold(0, |a, p| a | p.flags));
        Ok(SolveAnswer {
            stamp: loaded.stamp.clone(),
            species: query.species.clone(),
            level_count: n_levels,
            power_unit: query.power_unit,
            points,
            cautions,
        })
    }
}

/// Fewest points per piece when a temperature's densities are split (below this, evaluating
/// the temperature's rates again for each piece costs more than the extra parallelism gains).
const MIN_POINTS_PER_PIECE: usize = 4;

/// Splits temperatures' density lists so that there are about four pieces per thread, keeping
/// at least [`MIN_POINTS_PER_PIECE`] points in a piece; order and output positions are kept.
fn split_for_threads(work: Vec<TemperatureWork>, threads: usize) -> Vec<TemperatureWork> {
    let wanted = 4 * threads.max(1);
    if work.len() >= wanted {
        return work;
    }
    let pieces_per_temperature = wanted.div_ceil(work.len().max(1));
    let mut out = Vec::with_capacity(work.len() * pieces_per_temperature);
    for w in work {
        let chunk = w
            .densities
            .len()
            .div_ceil(pieces_per_temperature)
            .max(MIN_POINTS_PER_PIECE);
        for densities in w.densities.chunks(chunk) {
            out.push(TemperatureWork {
                t_k: w.t_k,
                location: w.location,
                densities: densities.to_vec(),
            });
        }
    }
    out
}

/// Per-thread storage reused from one piece of work to the next.
struct Scratch {
    workspace: Result<PopulationWorkspace, PhysicsError>,
    rates: Vec<CollisionalRate>,
    excitation: Vec<f64>,
    deexcitation: Vec<f64>,
    flags: Vec<u32>,
    line_powers_w: Vec<f64>,
}

impl Scratch {
    fn new(n_levels: usize, n_tables: usize, n_lines: usize) -> Self {
        Self {
            workspace: PopulationWorkspace::new(n_levels),
            rates: Vec::with_capacity(n_tables),
            excitation: vec![0.0; n_tables],
            deexcitation: vec![0.0; n_tables],
            flags: vec![0; n_tables],
            line_powers_w: Vec::with_capacity(n_lines),
        }
    }
}

/// What every piece of work of one solve reads.
#[derive(Clone, Copy)]
struct PieceInputs<'a> {
    tables: &'a SpeciesTables,
    inputs: &'a SolveInputs,
    /// Every line with its fixed part filled in (emissivity 0).
    line_template: &'a [LineAnswer],
    /// Watt to the answer's power unit.
    power_factor: f64,
    min_line_fraction: f64,
    cancel: &'a Cancel,
}

/// Evaluates every collisional rate at one temperature and solves each density there,
/// checking the stop flag before each density (a point of a large species is a large solve).
fn solve_at_temperature(
    scratch: &mut Scratch,
    shared: &PieceInputs<'_>,
    work: &TemperatureWork,
) -> Result<Vec<(usize, PointAnswer)>, EngineError> {
    let PieceInputs {
        tables,
        inputs,
        line_template,
        power_factor,
        min_line_fraction,
        cancel,
    } = *shared;
    let Scratch {
        workspace,
        rates,
        excitation,
        deexcitation,
        flags: value_flags,
        line_powers_w,
    } = scratch;
    let workspace = workspace.as_mut().map_err(|e| EngineError::Solve(e.clone()))?;
    write_tables_at(
        &tables.tables,
        &work.location,
        &mut RateOutputs::new(Direction::Both, excitation, deexcitation, value_flags)?,
    )?;
    let flags = value_flags.iter().fold(0u32, |a, &f| a | f);
    rates.clear();
    rates.extend(
        tables
            .tables
            .iter()
            .zip(excitation.iter().zip(deexcitation.iter()))
            .map(|(t, (&exc, &deexc))| {
                let h = t.header();
                CollisionalRate {
                    upper: h.upper as usize - 1,
                    lower: h.lower as usize - 1,
                    excitation_cm3_s: exc,
                    deexcitation_cm3_s: deexc,
                }
            }),
    );
    workspace.set_rates(&inputs.radiative, rates)?;
    let n_levels = inputs.energies_cm1.len();
    let served =
        |c: Vec<Option<f64>>| -> Arc<[f64]> { c.into_iter().map(|c| c.unwrap_or(f64::INFINITY)).collect() };
    let critical = served(critical_densities_cm3(n_levels, &inputs.radiative, rates)?);
    let critical_all = served(critical_densities_all_exits_cm3(
        n_levels,
        &inputs.radiative,
        rates,
    )?);
    let mut out = Vec::with_capacity(work.densities.len());
    for &(index, ne) in &work.densities {
        cancel.check()?;
        let view = workspace.solve(ne).map_err(|reason| EngineError::Degenerate {
            temperature_k: work.t_k,
            density_per_cm3: ne,
            reason,
            grid_min_k: tables.grid.t_min_k(),
            grid_max_k: tables.grid.t_max_k(),
        })?;
        let fractions = view.fractions.to_vec();
        let residual = view.max_relative_imbalance;
        let PowerSummary {
            total_w: power_w,
            strongest_w: strongest,
        } = line_powers_into(&inputs.lines, &fractions, line_powers_w);
        let threshold = min_line_fraction * strongest;
        let lines: Vec<LineAnswer> = if threshold <= 0.0 {
            // Every line is kept (powers are >= 0): the template with emissivities filled in.
            line_template
                .iter()
                .zip(line_powers_w.iter())
                .map(|(line, &w)| LineAnswer {
                    emissivity: w * power_factor,
                    ..*line
                })
                .collect()
        } else {
            let kept = line_powers_w.iter().filter(|&&w| w >= threshold).count();
            let mut lines = Vec::with_capacity(kept);
            lines.extend(
                line_template
                    .iter()
                    .zip(line_powers_w.iter())
                    .filter(|&(_, &w)| w >= threshold)
                    .map(|(line, &w)| LineAnswer {
                        emissivity: w * power_factor,
                        ..*line
                    }),
            );
            lines
        };
        out.push((
            index,
            PointAnswer {
                temperature_k: work.t_k,
                density_per_cm3: ne,
                fractions,
                lines,
                radiated_power: power_w * power_factor,
                residual,
                flags,
                critical_densities_per_cm3: Arc::clone(&critical),
                critical_densities_all_exits_per_cm3: Arc::clone(&critical_all),
            },
        ));
    }
    Ok(out)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn work(temperatures: usize, densities: usize) -> Vec<TemperatureWork> {
        let grid = ratewell_proto::rule::LogGrid::from_range(1e3, 1e6, 10).unwrap();
        (0..temperatures)
            .map(|i| TemperatureWork {
                t_k: 1e4 + i as f64,
                location: grid.locate(1e4 + i as f64),
                densities: (0..densities)
                    .map(|d| (i * densities + d, 10f64.powi(d as i32)))
                    .collect(),
            })
            .collect()
    }

    /// Every (position, density) of the input once, in order, each with its own temperature.
    fn flatten(w: &[TemperatureWork]) -> Vec<(f64, usize, f64)> {
        w.iter()
            .flat_map(|p| p.densities.iter().map(move |&(i, n)| (p.t_k, i, n)))
            .collect()
    }

    #[test]
    fn splitting_keeps_every_point_once_in_order() {
        // common practice, no source: splitting work for threads must not change the answer.
        for (temps, dens, threads) in [(1, 1000, 2), (2, 7, 2), (8, 256, 2), (3, 2, 8), (20, 5, 2)] {
            let before = work(temps, dens);
            let expected = flatten(&before);
            let after = split_for_threads(before, threads);
            assert_eq!(flatten(&after), expected, "{temps} x {dens} on {threads}");
            assert!(after.iter().all(|p| !p.densities.is_empty()));
            if temps * dens >= 4 * threads * MIN_POINTS_PER_PIECE && temps < 4 * threads {
                assert!(
                    after.len() >= 4 * threads,
                    "{temps} x {dens}: {} pieces",
                    after.len()
                );
            }
        }
    }
}
