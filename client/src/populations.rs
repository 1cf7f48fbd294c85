//! Level-population questions, split into chunks for long work and merged back.

use crate::dataset::{DatasetRef, check_same_stamp};
use crate::error::ClientError;
use crate::transition::TableGrid;
use crate::units::{DensityUnit, PowerUnit, TemperatureUnit, check_densities, check_temperatures};
use ratewell_proto::pb;
use ratewell_proto::rule::OutsidePolicy;

/// A statistical-equilibrium question for one species: either (temperature, density) pairs,
/// or a grid of every temperature with every density.
#[derive(Debug, Clone, PartialEq)]
pub struct PopulationQuery {
    /// Species name.
    pub species: String,
    /// Electron temperatures, `temperature_unit`.
    pub temperatures: Vec<f64>,
    /// Unit of the temperatures.
    pub temperature_unit: TemperatureUnit,
    /// Electron densities, `density_unit`.
    pub densities: Vec<f64>,
    /// Unit of the densities.
    pub density_unit: DensityUnit,
    /// Every temperature with every density (true) or pairs of equal-length arrays (false).
    pub grid: bool,
    /// Refuse or extrapolate (flagged) temperatures outside the table grid.
    pub outside: OutsidePolicy,
    /// Unit of emissivities and radiated power.
    pub power_unit: PowerUnit,
    /// Table grid; `None` means the dataset's default grid.
    pub table_grid: Option<TableGrid>,
    /// Report only lines at least this fraction of the strongest (0 = all), within [0, 1].
    pub min_line_fraction: f64,
}

impl PopulationQuery {
    /// Every temperature (K) with every density (cm^-3).
    pub fn grid(species: impl Into<String>, temperatures_k: Vec<f64>, densities_cm3: Vec<f64>) -> Self {
        Self::with_layout(species.into(), temperatures_k, densities_cm3, true)
    }

    /// Pairs (`temperatures_k[i]`, `densities_cm3[i]`); the two arrays must have equal length.
    pub fn points(species: impl Into<String>, temperatures_k: Vec<f64>, densities_cm3: Vec<f64>) -> Self {
        Self::with_layout(species.into(), temperatures_k, densities_cm3, false)
    }

    fn with_layout(species: String, temperatures: Vec<f64>, densities: Vec<f64>, grid: bool) -> Self {
        Self {
            species,
            temperatures,
            temperature_unit: TemperatureUnit::Kelvin,
            densities,
            density_unit: DensityUnit::PerCubicCentimetre,
            grid,
            outside: OutsidePolicy::Refuse,
            power_unit: PowerUnit::Watt,
            table_grid: None,
            min_line_fraction: 0.0,
        }
    }

    /// Checks the arrays and fields, naming the first bad one.
    pub fn validate(&self) -> Result<(), ClientError> {
        check_temperatures(&self.temperatures, self.temperature_unit)?;
        check_densities(&self.densities, self.density_unit)?;
        if !self.grid && self.temperatures.len() != self.densities.len() {
            return Err(ClientError::invalid(
                "densities",
                format!("{} values", self.densities.len()),
                format!(
                    "must match the {} temperatures when pairing points (or ask for a grid)",
                    self.temperatures.len()
                ),
            ));
        }
        if !(0.0..=1.0).contains(&self.min_line_fraction) {
            return Err(ClientError::invalid(
                "min_line_fraction",
                self.min_line_fraction,
                "must be within [0, 1]",
            ));
        }
        Ok(())
    }

    /// Number of (temperature, density) points the question asks for.
    pub fn point_count(&self) -> usize {
        if self.grid {
            self.temperatures.len() * self.densities.len()
        } else {
            self.temperatures.len()
        }
    }

    /// Splits into questions of at most `per_call` temperatures (grid: each with every density)
    /// or `per_call` points (pairs), in order.
    pub(crate) fn chunks(&self, per_call: usize) -> Vec<PopulationQuery> {
        let per_call = per_call.max(1);
        let n = self.temperatures.len();
        (0..n)
            .step_by(per_call)
            .map(|start| {
                let end = (start + per_call).min(n);
                let mut q = self.clone();
                q.temperatures = self.temperatures[start..end].to_vec();
                if !self.grid {
                    q.densities = self.densities[start..end].to_vec();
                }
                q
            })
            .collect()
    }

    /// The wire request for a dataset.
    pub(crate) fn to_wire(&self, dataset: &DatasetRef) -> pb::SolvePopulationsRequest {
        let outside = match self.outside {
            OutsidePolicy::Refuse => pb::OutsideGrid::Refuse,
            OutsidePolicy::Extrapolate => pb::OutsideGrid::Extrapolate,
        };
        pb::SolvePopulationsRequest {
            dataset: Some(dataset.to_selector()),
            species: self.species.clone(),
            temperatures: self.temperatures.clone(),
            temperature_unit: self.temperature_unit.to_wire(),
            densities: self.densities.clone(),
            density_unit: self.density_unit.to_wire(),
            grid: self.grid,
            outside_grid: outside as i32,
            power_unit: self.power_unit.to_wire(),
            table_grid: self.table_grid.map(TableGrid::to_wire),
            min_line_fraction: self.min_line_fraction,
        }
    }
}

/// Checks one answer's shape: the point count asked for, and one critical density per level
/// per point.
pub(crate) fn check_answer(
    answer: &pb::SolvePopulationsResponse,
    expected_points: usize,
) -> Result<(), ClientError> {
    let malformed = |message: String| ClientError::Malformed {
        operation: "SolvePopulations",
        message,
    };
    if answer.points.len() != expected_points {
        return Err(malformed(format!(
            "{} points, expected {expected_points}",
            answer.points.len()
        )));
    }
    let levels = answer.level_count as usize;
    if answer.critical_densities_per_cm3.len() != expected_points * levels {
        return Err(malformed(format!(
            "{} critical densities, expected {} points x {levels} levels",
            answer.critical_densities_per_cm3.len(),
            expected_points
        )));
    }
    if let Some((i, p)) = answer
        .points
        .iter()
        .enumerate()
        .find(|(_, p)| p.fractions.len() != levels)
    {
        return Err(malformed(format!(
            "point {i} has {} level fractions, expected {levels}",
            p.fractions.len()
        )));
    }
    Ok(())
}

/// Appends a later chunk's answer to the first one (same dataset and level count).
pub(crate) fn merge(
    into: &mut pb::SolvePopulationsResponse,
    next: pb::SolvePopulationsResponse,
) -> Result<(), ClientError> {
    if let (Some(a), Some(b)) = (&into.stamp, &next.stamp) {
        check_same_stamp("SolvePopulations", a, b)?;
    }
    if into.level_count != next.level_count {
        return Err(ClientError::Malformed {
            operation: "SolvePopulations",
            message: format!(
                "level count changed between chunks: {} then {}",
                into.level_count, next.level_count
            ),
        });
    }
    into.points.extend(next.points);
    into.critical_densities_per_cm3
        .extend(next.critical_densities_per_cm3);
    into.critical_densities_all_exits_per_cm3
        .extend(next.critical_densities_all_exits_per_cm3);
    for c in next.cautions {
        if !into.cautions.contains(&c) {
            into.cautions.push(c);
        }
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn questions_are_checked_and_split_in_order() {
        let q = PopulationQuery::grid("X", vec![1e4, 2e4, 3e4, 4e4, 5e4], vec![1e2, 1e4]);
        assert!(q.validate().is_ok());
        assert_eq!(q.point_count(), 10);
        let parts = q.chunks(2);
        assert_eq!(parts.len(), 3);
        assert_eq!(parts[2].temperatures, vec![5e4]);
        assert!(parts.iter().all(|p| p.densities.len() == 2));
        assert_eq!(parts.iter().map(PopulationQuery::point_count).sum::<usize>(), 10);

        let p = PopulationQuery::points("X", vec![1e4, 2e4, 3e4], vec![1e2, 1e3, 1e4]);
        let parts = p.chunks(2);
        assert_eq!(parts[1].temperatures, vec![3e4]);
        assert_eq!(parts[1].densities, vec![1e4]);

        let bad = PopulationQuery::points("X", vec![1e4, 2e4], vec![1e2]);
        let e = bad.validate().unwrap_err().to_string();
        assert_eq!(
            e,
            "densities = 1 values: must match the 2 temperatures when pairing points (or ask for a grid)"
        );
        let mut bad = q.clone();
        bad.densities[1] = -3.0;
        assert_eq!(
            bad.validate().unwrap_err().to_string(),
            "densities[1] = -3 cm-3: must be finite and > 0"
        );
    }

    #[test]
    fn answers_with_the_wrong_shape_are_malformed() {
        let point = pb::PopulationPoint {
            fractions: vec![0.9, 0.1],
            ..Default::default()
        };
        let mut a = pb::SolvePopulationsResponse {
            points: vec![point.clone()],
            critical_densities_per_cm3: vec![0.0, 1e3],
            level_count: 2,
            ..Default::default()
        };
        assert!(check_answer(&a, 1).is_ok());
        assert!(check_answer(&a, 2).is_err());
        a.critical_densities_per_cm3.pop();
        assert!(
            check_answer(&a, 1)
                .unwrap_err()
                .to_string()
                .contains("critical densities")
        );
        let b = pb::SolvePopulationsResponse {
            points: vec![point],
            critical_densities_per_cm3: vec![0.0, 2e3],
            level_count: 3,
            ..Default::default()
        };
        assert!(merge(&mut a, b).is_err());
    }
}
