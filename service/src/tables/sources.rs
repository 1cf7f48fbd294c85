//! Turns a dataset's collisional transition into a direct source of Upsilon(T) built on the
//! physics layer, together with the header its table carries (weights, energy, source range).

use super::source_range::source_range_k;
use super::{TableError, UpsilonSource};
use crate::dataset::{CollisionData, CollisionalTransition, EstimateMethod, Species};
use crate::physics::approximations::{
    SemiClassicalEstimate, TargetCharge, hydrogenic_mean_radius_bohr, van_regemorter_upsilon,
};
use crate::physics::constants::KELVIN_PER_INVERSE_CM;
use crate::physics::maxwell::{BelowFirstPoint, CollisionStrengthTable};
use crate::physics::scaling::{BurgessTullyScaling, ScaledUpsilon};
use crate::physics::{PhysicsError, units};
use ratewell_proto::rule::TableHeader;

/// A transition's Upsilon source and its table header.
pub struct TransitionSource {
    /// What the table will carry.
    pub header: TableHeader,
    /// Direct evaluation of Upsilon(T).
    pub source: Box<dyn UpsilonSource + Send>,
}

/// Builds the source of one collisional transition of `species`. The header's source range is
/// [`source_range_k`]'s; approximations have none and get `grid_range_k`, the range the table
/// will span (their values are flagged approximate instead).
pub fn transition_source(
    species: &Species,
    transition: &CollisionalTransition,
    grid_range_k: (f64, f64),
) -> Result<TransitionSource, TableError> {
    let (upper, lower) = (transition.upper, transition.lower);
    let missing = |what: &str| TableError::Source {
        species: species.name.clone(),
        upper,
        lower,
        message: format!("{what} not found in the species"),
    };
    let level_u = species.level(upper).ok_or_else(|| missing("upper level"))?;
    let level_l = species.level(lower).ok_or_else(|| missing("lower level"))?;
    let delta_e_cm1 = level_u.energy_cm1 - level_l.energy_cm1;
    let delta_e_k = delta_e_cm1 * KELVIN_PER_INVERSE_CM;
    let delta_e_ry = units::cm1_to_ry(delta_e_cm1);
    let weighted_f = species
        .radiative_transition(upper, lower)
        .and_then(|r| r.oscillator_strength)
        .map(|f| f * level_l.weight);
    let kind = transition.kind;
    let wrap = |e: PhysicsError| TableError::Source {
        species: species.name.clone(),
        upper,
        lower,
        message: e.to_string(),
    };
    let (source, approximate): (Box<dyn UpsilonSource + Send>, bool) = match &transition.data {
        CollisionData::EffectiveTable {
            temperatures_k,
            upsilon,
        } => {
            let scaling = BurgessTullyScaling::new(kind, delta_e_k, None).map_err(wrap)?;
            let curve = ScaledUpsilon::new(scaling, temperatures_k, upsilon, weighted_f).map_err(wrap)?;
            let source = Scaled {
                curve,
                nodes_k: temperatures_k.clone(),
            };
            (Box::new(source), false)
        }
        CollisionData::StrengthTable {
            scattered_energies_ry,
            omega,
        } => {
            let table = CollisionStrengthTable::new(
                scattered_energies_ry,
                omega,
                delta_e_ry,
                kind,
                weighted_f,
                BelowFirstPoint::default(),
            )
            .map_err(wrap)?;
            (Box::new(Averaged(table)), false)
        }
        CollisionData::Estimate(EstimateMethod::VanRegemorter {
            oscillator_strength, ..
        }) => {
            let target = if species.ion_charge == 0 {
                TargetCharge::Neutral
            } else {
                TargetCharge::PositiveIon
            };
            let source = VanRegemorter {
                weighted_f: oscillator_strength * level_l.weight,
                delta_e_ry,
                target,
            };
            (Box::new(source), true)
        }
        CollisionData::Estimate(EstimateMethod::CoulombFocusing { strength }) => {
            // The lower level's binding energy is at least the transition energy (the upper
            // level is bound), so dE gives an upper bound on the hydrogenic radius. The radius
            // only shapes the energy dependence; the scale is the strength at threshold.
            let radius =
                hydrogenic_mean_radius_bohr(delta_e_ry, f64::from(species.ion_charge) + 1.0).map_err(wrap)?;
            let estimate =
                SemiClassicalEstimate::new(delta_e_ry, radius, f64::from(species.ion_charge), *strength)
                    .map_err(wrap)?;
            (Box::new(SemiClassical(estimate)), true)
        }
    };
    let range_k = source_range_k(&transition.data).unwrap_or(grid_range_k);
    Ok(TransitionSource {
        header: TableHeader {
            upper,
            lower,
            g_lower: level_l.weight,
            g_upper: level_u.weight,
            excitation_energy_k: delta_e_k,
            source_t_min_k: range_k.0,
            source_t_max_k: range_k.1,
            approximate,
        },
        source,
    })
}

fn physics_failure(e: PhysicsError) -> TableError {
    TableError::Evaluation(e.to_string())
}

/// Sparse Upsilon(T) through the scaled plane; its nodes are where the piecewise-cubic
/// interpolant's second derivative jumps.
struct Scaled {
    curve: ScaledUpsilon,
    nodes_k: Vec<f64>,
}
impl UpsilonSource for Scaled {
    fn upsilon(&self, t_k: f64) -> Result<f64, TableError> {
        Ok(self.curve.evaluate(t_k).map_err(physics_failure)?.upsilon)
    }
    fn breakpoints_k(&self) -> &[f64] {
        &self.nodes_k
    }
}

struct Averaged(CollisionStrengthTable);
impl UpsilonSource for Averaged {
    fn upsilon(&self, t_k: f64) -> Result<f64, TableError> {
        self.0.effective_collision_strength(t_k).map_err(physics_failure)
    }
}

struct VanRegemorter {
    weighted_f: f64,
    delta_e_ry: f64,
    target: TargetCharge,
}
impl UpsilonSource for VanRegemorter {
    fn upsilon(&self, t_k: f64) -> Result<f64, TableError> {
        Ok(
            van_regemorter_upsilon(self.weighted_f, self.delta_e_ry, t_k, self.target)
                .map_err(physics_failure)?
                .value,
        )
    }
}

struct SemiClassical(SemiClassicalEstimate);
impl UpsilonSource for SemiClassical {
    fn upsilon(&self, t_k: f64) -> Result<f64, TableError> {
        Ok(self
            .0
            .effective_collision_strength(t_k)
            .map_err(physics_failure)?
            .value)
    }
}
