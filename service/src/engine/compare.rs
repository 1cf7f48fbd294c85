//! Consistency comparison of two datasets (or two versions of one) on a temperature grid: the
//! largest relative difference of each shared transition's de-excitation rate coefficient.

use super::{Cancel, Engine, EngineError, GridSpec, Selector, Stamp, admit};
use crate::dataset::Species;
use ratewell_proto::rule::LogGrid;

/// Relative tolerance below which level weights and energies count as equal.
const LEVEL_TOLERANCE: f64 = 1e-9;

/// A comparison request.
#[derive(Debug, Clone)]
pub struct CompareQuery {
    /// First dataset.
    pub first: Selector,
    /// Second dataset.
    pub second: Selector,
    /// Species to compare; empty means every species present in both.
    pub species: Vec<String>,
    /// Temperatures compared on; `None` uses the first dataset's default grid.
    pub grid: Option<GridSpec>,
}

/// One transition's difference.
#[derive(Debug, Clone, PartialEq)]
pub struct TransitionDifference {
    /// Species name.
    pub species: String,
    /// Upper level (1-based).
    pub upper: u32,
    /// Lower level (1-based).
    pub lower: u32,
    /// max over the grid of |q2 - q1| / max(q1, q2).
    pub max_relative_difference: f64,
    /// Temperature of the maximum, K.
    pub at_temperature_k: f64,
}

/// The answer to a [`CompareQuery`].
#[derive(Debug, Clone, PartialEq)]
pub struct CompareAnswer {
    /// First dataset.
    pub first: Stamp,
    /// Second dataset.
    pub second: Stamp,
    /// Per shared transition, largest difference first.
    pub differences: Vec<TransitionDifference>,
    /// Transitions only in the first, "species upper-lower".
    pub only_in_first: Vec<String>,
    /// Transitions only in the second.
    pub only_in_second: Vec<String>,
    /// Levels whose weight or energy differ, "species level N".
    pub level_mismatches: Vec<String>,
}

/// Largest relative difference of two positive sequences sampled on the same temperatures,
/// with the temperature where it occurs.
pub fn max_relative_difference(a: &[f64], b: &[f64], temperatures_k: &[f64]) -> (f64, f64) {
    let mut worst = (0.0, temperatures_k.first().copied().unwrap_or(0.0));
    for ((&x, &y), &t) in a.iter().zip(b).zip(temperatures_k) {
        let scale = x.abs().max(y.abs());
        let d = if scale > 0.0 { (x - y).abs() / scale } else { 0.0 };
        if d > worst.0 {
            worst = (d, t);
        }
    }
    worst
}

impl Engine {
    /// Compares two loaded datasets. CPU work proportional to transitions x grid points.
    pub fn compare(&self, query: &CompareQuery) -> Result<CompareAnswer, EngineError> {
        self.compare_cancellable(query, &Cancel::default())
    }

    /// [`Self::compare`], checking `cancel` before each table of a build on a custom grid and
    /// before each transition compared, and stopping with [`EngineError::Cancelled`] once it
    /// is set.
    pub fn compare_cancellable(
        &self,
        query: &CompareQuery,
        cancel: &Cancel,
    ) -> Result<CompareAnswer, EngineError> {
        let first = self.select(&query.first)?;
        let second = self.select(&query.second)?;
        let spec = query.grid.unwrap_or(GridSpec {
            t_min_k: first.default_grid.t_min_k(),
            t_max_k: first.default_grid.t_max_k(),
            points_per_decade: (1.0 / first.default_grid.log10_t_step()).round() as u32,
        });
        let grid: LogGrid = spec.to_grid()?;
        let temps: Vec<f64> = (0..grid.knots()).map(|i| grid.temperature_k(i)).collect();
        let names: Vec<String> = if query.species.is_empty() {
            first
                .dataset
                .species
                .iter()
                .filter(|s| second.dataset.species(&s.name).is_some())
                .map(|s| s.name.clone())
                .collect()
        } else {
            for (i, name) in query.species.iter().enumerate() {
                for loaded in [&first, &second] {
                    if loaded.dataset.species(name).is_none() {
                        return Err(EngineError::invalid(
                            format!("species[{i}]"),
                            format!("{name:?}"),
                            format!(
                                "must be a species of both datasets; {} lacks it",
                                loaded.stamp.label()
                            ),
                        ));
                    }
                }
            }
            query.species.clone()
        };
        let transitions: usize = names
            .iter()
            .flat_map(|n| [first.dataset.species(n), second.dataset.species(n)])
            .flatten()
            .map(|s| s.collisions.len())
            .sum();
        let limits = &self.config().limits;
        admit::check_compare(limits, transitions)?;
        if query.grid.is_some() {
            // Every compared species may need tables on this grid, in both datasets.
            admit::check_table_build(limits, grid.knots(), transitions)?;
        }
        let mut answer = CompareAnswer {
            first: first.stamp.clone(),
            second: second.stamp.clone(),
            differences: Vec::new(),
            only_in_first: Vec::new(),
            only_in_second: Vec::new(),
            level_mismatches: Vec::new(),
        };
        for name in &names {
            let (Some(s1), Some(s2)) = (first.dataset.species(name), second.dataset.species(name)) else {
                continue;
            };
            answer.level_mismatches.extend(level_mismatches(s1, s2));
            let t1 = self.species_tables_cancellable(&first, name, Some(spec), cancel)?;
            let t2 = self.species_tables_cancellable(&second, name, Some(spec), cancel)?;
            for a in &t1.tables {
                cancel.check()?;
                let h = a.header();
                let Some(b) = t2.get(h.upper, h.lower) else {
                    answer
                        .only_in_first
                        .push(format!("{name} {}-{}", h.upper, h.lower));
                    continue;
                };
                let q1: Vec<f64> = temps
                    .iter()
                    .map(|&t| a.evaluate_at(&grid.locate(t)).deexcitation_cm3_s)
                    .collect();
                let q2: Vec<f64> = temps
                    .iter()
                    .map(|&t| b.evaluate_at(&grid.locate(t)).deexcitation_cm3_s)
                    .collect();
                let (max_relative_difference, at_temperature_k) = max_relative_difference(&q1, &q2, &temps);
                answer.differences.push(TransitionDifference {
                    species: name.clone(),
                    upper: h.upper,
                    lower: h.lower,
                    max_relative_difference,
                    at_temperature_k,
                });
            }
            for b in &t2.tables {
                let h = b.header();
                if t1.get(h.upper, h.lower).is_none() {
                    answer
                        .only_in_second
                        .push(format!("{name} {}-{}", h.upper, h.lower));
                }
            }
        }
        answer
            .differences
            .sort_by(|x, y| y.max_relative_difference.total_cmp(&x.max_relative_difference));
        Ok(answer)
    }
}

fn level_mismatches(a: &Species, b: &Species) -> Vec<String> {
    let differs = |x: f64, y: f64| (x - y).abs() > LEVEL_TOLERANCE * x.abs().max(y.abs()).max(1.0);
    let mut out = Vec::new();
    for la in &a.levels {
        match b.level(la.index) {
            Some(lb) if !differs(la.weight, lb.weight) && !differs(la.energy_cm1, lb.energy_cm1) => {}
            Some(_) => out.push(format!("{} level {}", a.name, la.index)),
            None => out.push(format!("{} level {} (only in first)", a.name, la.index)),
        }
    }
    for lb in &b.levels {
        if a.level(lb.index).is_none() {
            out.push(format!("{} level {} (only in second)", a.name, lb.index));
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn relative_difference_finds_the_worst_point() {
        let (d, t) = max_relative_difference(&[1.0, 2.0, 4.0], &[1.0, 2.2, 4.0], &[10.0, 20.0, 30.0]);
        assert!((d - 0.2 / 2.2).abs() < 1e-15);
        assert_eq!(t, 20.0);
    }
}
