//! Population solves over lists or grids of (Te, ne): rates evaluated from the species' tables
//! with the shared rule, statistical equilibrium solved per point in parallel (rayon), then
//! line emissivities, radiated power and critical densities.

use super::lookup::{add_flag_cautions, temperatures_in_kelvin};
use super::units::{DensityUnit, PowerUnit, TemperatureUnit};
use super::{Engine, EngineError, GridSpec, Selector, SolveInputs, Stamp};
use crate::physics::emission::{critical_densities_cm3, line_emissions};
use crate::physics::populations::{CollisionalRate, PopulationWorkspace};
use crate::tables::SpeciesTables;
use ratewell_proto::rule::{Location, OutsidePolicy, RuleError, checked_location};
use rayon::prelude::*;
use std::sync::Arc;
use std::sync::atomic::{AtomicBool, Ordering};

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
    /// Critical density per level, cm^-3 (0 for levels without radiative decay, infinity for
    /// levels without collisional depopulation).
    pub critical_densities_per_cm3: Vec<f64>,
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
    let violations: Vec<(String, String)> = values
        .iter()
        .enumerate()
        .filter(|(_, v)| !(v.is_finite() && **v > 0.0))
        .map(|(i, v)| {
            let field = format!("densities[{i}]");
            let message = format!("{field} = {v} {}: must be finite and > 0", unit.symbol());
            (field, message)
        })
        .collect();
    if !violations.is_empty() {
        return Err(EngineError::BadBatch { violations });
    }
    Ok(values.iter().map(|&v| unit.to_per_cm3(v)).collect())
}

/// Work for one temperature: the densities solved at it, with their output positions.
struct TemperatureWork {
    t_k: f64,
    location: Location,
    densities: Vec<(usize, f64)>,
}

/// A flag that asks a long computation to stop early (set when its caller gave up, e.g. at a
/// client's deadline). Cheap to clone.
#[derive(Debug, Clone, Default)]
pub struct Cancel(Arc<AtomicBool>);

impl Cancel {
    /// Asks the computation to stop.
    pub fn cancel(&self) {
        self.0.store(true, Ordering::Relaxed);
    }
    /// Whether stopping was asked for.
    pub fn is_cancelled(&self) -> bool {
        self.0.load(Ordering::Relaxed)
    }
}

impl Engine {
    /// Solves statistical equilibrium at every requested point. CPU-heavy: call from a
    /// blocking thread.
    pub fn solve(&self, query: &SolveQuery) -> Result<SolveAnswer, EngineError> {
        self.solve_cancellable(query, &Cancel::default())
    }

    /// [`Self::solve`], checking `cancel` before each temperature's work and stopping with
    /// [`EngineError::Cancelled`] once it is set.
    pub fn solve_cancellable(&self, query: &SolveQuery, cancel: &Cancel) -> Result<SolveAnswer, EngineError> {
        if !(0.0..=1.0).contains(&query.min_line_fraction) {
            return Err(EngineError::invalid(
                "min_line_fraction",
                query.min_line_fraction,
                "must be within [0, 1]",
            ));
        }
        let loaded = self.select(&query.selector)?;
        let tables = self.species_tables(&loaded, &query.species, query.grid)?;
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
        let limit = self.config().max_solve_points;
        if n_points > limit {
            return Err(EngineError::TooLarge {
                field: "points".into(),
                value: n_points,
                limit,
            });
        }
        let locate = |j: usize, t: f64| {
            checked_location(&tables.grid, j, t, query.outside).map_err(|e| match e {
                RuleError::OutsideGrid { .. } => EngineError::OutOfRange(e.to_string()),
                other => EngineError::Rule(other),
            })
        };
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
        let n_levels = inputs.energies_cm1.len();
        let power_factor = query.power_unit.from_watt_factor();
        let solved: Vec<Vec<(usize, PointAnswer)>> = work
            .par_iter()
            .map_init(
                || PopulationWorkspace::new(n_levels),
                |workspace, w| {
                    if cancel.is_cancelled() {
                        return Err(EngineError::Cancelled);
                    }
                    let workspace = workspace.as_mut().map_err(|e| EngineError::Solve(e.clone()))?;
                    solve_at_temperature(
                        workspace,
                        &tables,
                        inputs,
                        w,
                        power_factor,
                        query.min_line_fraction,
                    )
                },
            )
            .collect::<Result<_, EngineError>>()?;
        let mut points: Vec<Option<PointAnswer>> = vec![None; n_points];
        for (i, p) in solved.into_iter().flatten() {
            points[i] = Some(p);
        }
        let points: Vec<PointAnswer> = points.into_iter().flatten().collect();
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

/// Evaluates every collisional rate at one temperature and solves each density there.
fn solve_at_temperature(
    workspace: &mut PopulationWorkspace,
    tables: &SpeciesTables,
    inputs: &SolveInputs,
    work: &TemperatureWork,
    power_factor: f64,
    min_line_fraction: f64,
) -> Result<Vec<(usize, PointAnswer)>, EngineError> {
    let mut flags = 0u32;
    let collisional: Vec<CollisionalRate> = tables
        .tables
        .iter()
        .map(|t| {
            let v = t.evaluate_at(&work.location);
            flags |= v.flags;
            let h = t.header();
            CollisionalRate {
                upper: h.upper as usize - 1,
                lower: h.lower as usize - 1,
                excitation_cm3_s: v.excitation_cm3_s,
                deexcitation_cm3_s: v.deexcitation_cm3_s,
            }
        })
        .collect();
    workspace.set_rates(&inputs.radiative, &collisional)?;
    let critical: Vec<f64> =
        critical_densities_cm3(inputs.energies_cm1.len(), &inputs.radiative, &collisional)?
            .into_iter()
            .map(|c| c.unwrap_or(f64::INFINITY))
            .collect();
    let mut out = Vec::with_capacity(work.densities.len());
    for &(index, ne) in &work.densities {
        let view = workspace.solve(ne)?;
        let fractions = view.fractions.to_vec();
        let residual = view.max_relative_imbalance;
        let emissions = line_emissions(&fractions, &inputs.energies_cm1, &inputs.radiative)?;
        let power_w: f64 = emissions.iter().map(|l| l.emissivity_w_per_ion).sum();
        let strongest = emissions
            .iter()
            .map(|l| l.emissivity_w_per_ion)
            .fold(0.0, f64::max);
        let lines = emissions
            .iter()
            .filter(|l| l.emissivity_w_per_ion >= min_line_fraction * strongest)
            .map(|l| LineAnswer {
                upper: l.upper as u32 + 1,
                lower: l.lower as u32 + 1,
                wavelength_vacuum_angstrom: l.wavelength_vacuum_angstrom,
                emissivity: l.emissivity_w_per_ion * power_factor,
            })
            .collect();
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
                critical_densities_per_cm3: critical.clone(),
            },
        ));
    }
    Ok(out)
}
