//! Fractional level populations in statistical equilibrium at given (T_e, n_e):
//!
//!   n_j sum_k (n_e q_jk + A_jk) = sum_k n_k (n_e q_kj + A_kj),   sum_j n_j = 1,
//!
//! with q the collisional rate coefficients (cm^3 s^-1, already evaluated at T_e), A the
//! radiative rates (s^-1) and n_e in cm^-3.
//!
//! Formulation, chosen to stay accurate from n_e = 1 to 1e20 cm^-3: the ground-level balance
//! equation is replaced by the normalisation; every other row is divided by its total
//! depopulation rate D_j = sum_k (n_e q_jk + A_jk), so its diagonal is 1 whatever n_e is; the
//! system is solved by LU with partial pivoting (nalgebra) followed by one step of iterative
//! refinement with the same factors, which makes the solve componentwise backward stable
//! (Skeel 1980, Math. Comp. 35, 817, from memory). The reported residual is the largest
//! relative imbalance |in_j - out_j| / (in_j + out_j) over all levels, ground included.

use nalgebra::{DMatrix, DVector};

use super::error::{PhysicsError, require_non_negative, require_positive};

/// Largest negative round-off (as a fraction of the total population) that is set to zero;
/// anything more negative is an error.
pub const NEGATIVE_POPULATION_TOLERANCE: f64 = 1.0e-12;

/// A radiative transition upper -> lower with Einstein coefficient `a_s` (s^-1, >= 0).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct RadiativeRate {
    /// Index of the upper level.
    pub upper: usize,
    /// Index of the lower level.
    pub lower: usize,
    /// Spontaneous emission rate A, s^-1.
    pub a_s: f64,
}

/// Collisional rate coefficients between a pair of levels, already evaluated at T_e.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct CollisionalRate {
    /// Index of the upper level.
    pub upper: usize,
    /// Index of the lower level.
    pub lower: usize,
    /// Excitation rate coefficient q_lu, cm^3 s^-1 (>= 0).
    pub excitation_cm3_s: f64,
    /// De-excitation rate coefficient q_ul, cm^3 s^-1 (>= 0).
    pub deexcitation_cm3_s: f64,
}

/// Populations borrowed from a [`PopulationWorkspace`] after a solve.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PopulationView<'a> {
    /// Fractional populations, one per level, non-negative, summing to 1.
    pub fractions: &'a [f64],
    /// Largest relative imbalance |in - out| / (in + out) over the levels.
    pub max_relative_imbalance: f64,
}

/// Owned populations, as returned by [`solve_populations`].
#[derive(Debug, Clone, PartialEq)]
pub struct Populations {
    /// Fractional populations, one per level, non-negative, summing to 1.
    pub fractions: Vec<f64>,
    /// Largest relative imbalance |in - out| / (in + out) over the levels.
    pub max_relative_imbalance: f64,
}

/// Reusable storage for repeated solves of one N-level system: load the rates once per T_e with
/// [`Self::set_rates`], then call [`Self::solve`] for each n_e. The N x N matrices are kept
/// between solves; nalgebra's LU allocates only its row-permutation record (N pairs of indices)
/// per factorisation. `Send`, so one workspace per rayon worker serves a parallel batch.
#[derive(Debug, Clone)]
pub struct PopulationWorkspace {
    n: usize,
    /// radiative[(j, k)] = A_jk, s^-1 (rate from j to k).
    radiative: DMatrix<f64>,
    /// collisional[(j, k)] = q_jk, cm^3 s^-1 (rate coefficient from j to k).
    collisional: DMatrix<f64>,
    radiative_out: Vec<f64>,
    collisional_out: Vec<f64>,
    depopulation: Vec<f64>,
    system: DMatrix<f64>,
    factor_storage: Option<DMatrix<f64>>,
    solution: DVector<f64>,
    correction: DVector<f64>,
    fractions: Vec<f64>,
}

impl PopulationWorkspace {
    /// A workspace for `n_levels` (>= 1) levels, with all rates zero.
    pub fn new(n_levels: usize) -> Result<Self, PhysicsError> {
        if n_levels == 0 {
            return Err(PhysicsError::TooFewPoints {
                field: "levels",
                len: 0,
                min: 1,
            });
        }
        let n = n_levels;
        Ok(Self {
            n,
            radiative: DMatrix::zeros(n, n),
            collisional: DMatrix::zeros(n, n),
            radiative_out: vec![0.0; n],
            collisional_out: vec![0.0; n],
            depopulation: vec![0.0; n],
            system: DMatrix::zeros(n, n),
            factor_storage: Some(DMatrix::zeros(n, n)),
            solution: DVector::zeros(n),
            correction: DVector::zeros(n),
            fractions: vec![0.0; n],
        })
    }

    /// Number of levels.
    pub fn n_levels(&self) -> usize {
        self.n
    }

    /// Replace the rates. Repeated (upper, lower) pairs add up. On error the workspace is left
    /// with all rates zero.
    pub fn set_rates(
        &mut self,
        radiative: &[RadiativeRate],
        collisional: &[CollisionalRate],
    ) -> Result<(), PhysicsError> {
        let result = self.load(radiative, collisional);
        if result.is_err() {
            self.clear();
        }
        result
    }

    fn clear(&mut self) {
        self.radiative.fill(0.0);
        self.collisional.fill(0.0);
        self.radiative_out.fill(0.0);
        self.collisional_out.fill(0.0);
    }

    fn load(
        &mut self,
        radiative: &[RadiativeRate],
        collisional: &[CollisionalRate],
    ) -> Result<(), PhysicsError> {
        self.clear();
        for (i, r) in radiative.iter().enumerate() {
            self.check_pair("radiative", i, r.upper, r.lower)?;
            require_non_negative(r.a_s, "s^-1", || format!("radiative[{i}].a_s"))?;
            self.radiative[(r.upper, r.lower)] += r.a_s;
        }
        for (i, c) in collisional.iter().enumerate() {
            self.check_pair("collisional", i, c.upper, c.lower)?;
            require_non_negative(c.excitation_cm3_s, "cm^3 s^-1", || {
                format!("collisional[{i}].excitation_cm3_s")
            })?;
            require_non_negative(c.deexcitation_cm3_s, "cm^3 s^-1", || {
                format!("collisional[{i}].deexcitation_cm3_s")
            })?;
            self.collisional[(c.lower, c.upper)] += c.excitation_cm3_s;
            self.collisional[(c.upper, c.lower)] += c.deexcitation_cm3_s;
        }
        for j in 0..self.n {
            self.radiative_out[j] = self.radiative.row(j).sum();
            self.collisional_out[j] = self.collisional.row(j).sum();
        }
        Ok(())
    }

    fn check_pair(&self, list: &str, i: usize, upper: usize, lower: usize) -> Result<(), PhysicsError> {
        for (name, level) in [("upper", upper), ("lower", lower)] {
            if level >= self.n {
                return Err(PhysicsError::LevelOutOfRange {
                    field: format!("{list}[{i}].{name}"),
                    value: level,
                    n_levels: self.n,
                });
            }
        }
        if upper == lower {
            return Err(PhysicsError::SameLevel {
                field: format!("{list}[{i}]"),
                level: upper,
            });
        }
        Ok(())
    }

    /// Solve at electron density `ne_cm3` (cm^-3, > 0 and finite) with the loaded rates.
    pub fn solve(&mut self, ne_cm3: f64) -> Result<PopulationView<'_>, PhysicsError> {
        require_positive(ne_cm3, "cm^-3", || "electron_density_cm3".to_owned())?;
        let n = self.n;
        if n == 1 {
            self.fractions[0] = 1.0;
            return Ok(PopulationView {
                fractions: &self.fractions,
                max_relative_imbalance: 0.0,
            });
        }
        self.assemble(ne_cm3)?;

        let mut storage = self.factor_storage.take().unwrap_or_else(|| DMatrix::zeros(n, n));
        storage.copy_from(&self.system);
        let lu = storage.lu();
        self.solution.fill(0.0);
        self.solution[0] = 1.0;
        let mut ok = lu.solve_mut(&mut self.solution);
        if ok {
            // one step of iterative refinement: r = b - M x, M d = r, x += d
            self.correction.fill(0.0);
            self.correction[0] = 1.0;
            self.correction.gemv(-1.0, &self.system, &self.solution, 1.0);
            ok = lu.solve_mut(&mut self.correction);
            self.solution += &self.correction;
        }
        self.factor_storage = Some(lu.l_unpack());
        if !ok
            || self
                .solution
                .iter()
                .any(|v| !v.is_finite() || v.abs() > 1.0 + 1.0e-6)
        {
            return Err(PhysicsError::SingularSystem { ne_cm3 });
        }

        let mut total = 0.0;
        for j in 0..n {
            let v = self.solution[j];
            if v < -NEGATIVE_POPULATION_TOLERANCE {
                return Err(PhysicsError::NegativePopulation {
                    level: j,
                    value: v,
                    tolerance: NEGATIVE_POPULATION_TOLERANCE,
                });
            }
            self.fractions[j] = v.max(0.0);
            total += self.fractions[j];
        }
        for v in &mut self.fractions {
            *v /= total;
        }
        let max_relative_imbalance = self.imbalance(ne_cm3);
        Ok(PopulationView {
            fractions: &self.fractions,
            max_relative_imbalance,
        })
    }

    /// Fill `system`: row 0 the normalisation, row j >= 1 the balance of level j divided by D_j.
    fn assemble(&mut self, ne_cm3: f64) -> Result<(), PhysicsError> {
        let n = self.n;
        for j in 0..n {
            self.depopulation[j] = self.radiative_out[j] + ne_cm3 * self.collisional_out[j];
        }
        self.system.fill(0.0);
        for k in 0..n {
            self.system[(0, k)] = 1.0;
        }
        for j in 1..n {
            let d = self.depopulation[j];
            if d > 0.0 {
                for k in 0..n {
                    if k != j {
                        let inflow = self.radiative[(k, j)] + ne_cm3 * self.collisional[(k, j)];
                        self.system[(j, k)] = -inflow / d;
                    }
                }
            } else {
                let fed = (0..n)
                    .any(|k| k != j && self.radiative[(k, j)] + ne_cm3 * self.collisional[(k, j)] > 0.0);
                if fed {
                    return Err(PhysicsError::NoDepopulation { level: j, ne_cm3 });
                }
                // neither fed nor depopulated: an isolated level, population 0
            }
            self.system[(j, j)] = 1.0;
        }
        Ok(())
    }

    /// Largest relative imbalance between inflow and outflow over all levels.
    fn imbalance(&self, ne_cm3: f64) -> f64 {
        let n = self.n;
        let mut worst: f64 = 0.0;
        for j in 0..n {
            let out = self.fractions[j] * self.depopulation[j];
            let mut inflow = 0.0;
            for k in 0..n {
                if k != j {
                    inflow +=
                        self.fractions[k] * (self.radiative[(k, j)] + ne_cm3 * self.collisional[(k, j)]);
                }
            }
            let scale = inflow + out;
            if scale > 0.0 {
                worst = worst.max((inflow - out).abs() / scale);
            }
        }
        worst
    }
}

/// One-shot solve: fractional populations of `n_levels` levels at `ne_cm3` (cm^-3) from the
/// radiative rates (s^-1) and collisional rate coefficients (cm^3 s^-1).
pub fn solve_populations(
    n_levels: usize,
    radiative: &[RadiativeRate],
    collisional: &[CollisionalRate],
    ne_cm3: f64,
) -> Result<Populations, PhysicsError> {
    let mut workspace = PopulationWorkspace::new(n_levels)?;
    workspace.set_rates(radiative, collisional)?;
    let view = workspace.solve(ne_cm3)?;
    Ok(Populations {
        fractions: view.fractions.to_vec(),
        max_relative_imbalance: view.max_relative_imbalance,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    fn assert_send<T: Send>() {}

    #[test]
    fn workspace_is_send_and_rejects_bad_input() {
        // common practice, no source: indices in range, rates finite and >= 0
        assert_send::<PopulationWorkspace>();
        let mut ws = PopulationWorkspace::new(2).unwrap();
        let err = ws
            .set_rates(
                &[RadiativeRate {
                    upper: 2,
                    lower: 0,
                    a_s: 1.0,
                }],
                &[],
            )
            .unwrap_err();
        assert_eq!(
            err.to_string(),
            "radiative[0].upper = 2: must be a level index < 2"
        );
        let err = ws
            .set_rates(
                &[RadiativeRate {
                    upper: 1,
                    lower: 0,
                    a_s: f64::NAN,
                }],
                &[],
            )
            .unwrap_err();
        assert_eq!(
            err.to_string(),
            "radiative[0].a_s = NaN s^-1: must be >= 0 and finite"
        );
        assert!(ws.solve(0.0).is_err());
    }

    #[test]
    fn detects_closed_group_and_undepopulated_level() {
        // common practice, no source: a level fed but never emptied has no steady state
        let coll = [CollisionalRate {
            upper: 1,
            lower: 0,
            excitation_cm3_s: 1e-8,
            deexcitation_cm3_s: 0.0,
        }];
        let err = solve_populations(2, &[], &coll, 1.0).unwrap_err();
        assert!(matches!(err, PhysicsError::NoDepopulation { level: 1, .. }));
        // levels 1 and 2 only exchange with each other: singular
        let coll = [CollisionalRate {
            upper: 2,
            lower: 1,
            excitation_cm3_s: 1e-8,
            deexcitation_cm3_s: 2e-8,
        }];
        let err = solve_populations(3, &[], &coll, 1.0).unwrap_err();
        assert!(matches!(err, PhysicsError::SingularSystem { .. }), "{err:?}");
    }
}
