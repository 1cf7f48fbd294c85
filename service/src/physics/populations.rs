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
//! system is solved by LU with partial pivoting followed by one step of iterative refinement
//! with the same factors, which makes the solve componentwise backward stable (Skeel 1980,
//! Math. Comp. 35, 817, from memory). The reported residual is the largest relative imbalance
//! |in_j - out_j| / (in_j + out_j) over all levels, ground included.
//!
//! Two LU kernels, both from crates: nalgebra's unblocked LU, which has the least overhead for
//! small systems, and faer's blocked, cache-aware LU for large ones (measured crossover near
//! [`BLOCKED_LU_MIN_LEVELS`] levels; see DEVELOPERS.md, benchmarks). Both factor the same
//! matrix with partial pivoting; results agree to rounding.

use dyn_stack::{MemBuffer, MemStack, StackReq};
use faer::linalg::lu::partial_pivoting::{factor as faer_factor, solve as faer_solve};
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

/// Systems with at least this many levels are factored with faer's blocked LU, smaller ones
/// with nalgebra's unblocked LU (measured: faer 10.3 us vs nalgebra 11.4 us at 50 levels,
/// 2.1 vs 1.4 us at 20, 213 vs 583 us at 200, on the 2-core benchmark machine).
pub const BLOCKED_LU_MIN_LEVELS: usize = 40;

/// Systems of at most this many levels are factored in nalgebra's fixed-size (stack) matrices.
/// Keep in step with the literal sizes listed in `solve_unblocked` (nalgebra needs literals).
pub const STATIC_MAX_LEVELS: usize = 12;

/// Which LU factorisation a [`PopulationWorkspace`] uses. Both pivot by rows (partial
/// pivoting); they differ only in speed and in the order of rounding.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Factorisation {
    /// nalgebra's unblocked LU: the least overhead, fastest for small systems.
    Unblocked,
    /// faer's blocked, cache-aware LU: fastest for large systems.
    Blocked,
}

impl Factorisation {
    /// The faster kernel for `n_levels` levels (see [`BLOCKED_LU_MIN_LEVELS`]).
    pub fn for_levels(n_levels: usize) -> Self {
        if n_levels >= BLOCKED_LU_MIN_LEVELS {
            Self::Blocked
        } else {
            Self::Unblocked
        }
    }
}

/// faer's factor storage: the matrix, its row permutation both ways and working memory.
struct BlockedLu {
    factors: Vec<f64>,
    perm: Vec<usize>,
    perm_inv: Vec<usize>,
    scratch: MemBuffer,
}

impl BlockedLu {
    fn new(n: usize) -> Self {
        let req = StackReq::any_of(&[
            faer_factor::lu_in_place_scratch::<usize, f64>(n, n, faer::Par::Seq, Default::default()),
            faer_solve::solve_in_place_scratch::<usize, f64>(n, 1, faer::Par::Seq),
        ]);
        Self {
            factors: vec![0.0; n * n],
            perm: vec![0; n],
            perm_inv: vec![0; n],
            scratch: MemBuffer::new(req),
        }
    }
}

impl std::fmt::Debug for BlockedLu {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("BlockedLu")
            .field("levels", &self.perm.len())
            .finish_non_exhaustive()
    }
}

/// A clone gets fresh storage: factors are overwritten by every solve anyway.
impl Clone for BlockedLu {
    fn clone(&self) -> Self {
        Self::new(self.perm.len())
    }
}

/// Reusable storage for repeated solves of one N-level system: load the rates once per T_e with
/// [`Self::set_rates`], then call [`Self::solve`] for each n_e. All matrices are kept between
/// solves; nalgebra's LU allocates only its row-permutation record (N pairs of indices) per
/// factorisation, faer's LU nothing. `Send`, so one workspace per rayon worker serves a
/// parallel batch.
///
/// Rates are stored by destination: `radiative_in[(j, k)]` is A from k into j, so column k
/// holds everything level k feeds, and the system is assembled column by column in memory
/// order.
#[derive(Debug, Clone)]
pub struct PopulationWorkspace {
    n: usize,
    /// radiative_in[(j, k)] = A_kj, s^-1 (rate from k into j).
    radiative_in: DMatrix<f64>,
    /// collisional_in[(j, k)] = q_kj, cm^3 s^-1 (rate coefficient from k into j).
    collisional_in: DMatrix<f64>,
    radiative_out: Vec<f64>,
    collisional_out: Vec<f64>,
    depopulation: Vec<f64>,
    inverse_depopulation: Vec<f64>,
    system: DMatrix<f64>,
    factorisation: Factorisation,
    unblocked_storage: Option<DMatrix<f64>>,
    blocked: Option<BlockedLu>,
    solution: DVector<f64>,
    correction: DVector<f64>,
    fractions: DVector<f64>,
    inflow: DVector<f64>,
}

impl PopulationWorkspace {
    /// A workspace for `n_levels` (>= 1) levels, with all rates zero, factoring with the
    /// faster kernel for its size.
    pub fn new(n_levels: usize) -> Result<Self, PhysicsError> {
        Self::with_factorisation(n_levels, Factorisation::for_levels(n_levels))
    }

    /// [`Self::new`] with a chosen LU kernel.
    pub fn with_factorisation(n_levels: usize, factorisation: Factorisation) -> Result<Self, PhysicsError> {
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
            radiative_in: DMatrix::zeros(n, n),
            collisional_in: DMatrix::zeros(n, n),
            radiative_out: vec![0.0; n],
            collisional_out: vec![0.0; n],
            depopulation: vec![0.0; n],
            inverse_depopulation: vec![0.0; n],
            system: DMatrix::zeros(n, n),
            factorisation,
            unblocked_storage: (factorisation == Factorisation::Unblocked).then(|| DMatrix::zeros(n, n)),
            blocked: (factorisation == Factorisation::Blocked).then(|| BlockedLu::new(n)),
            solution: DVector::zeros(n),
            correction: DVector::zeros(n),
            fractions: DVector::zeros(n),
            inflow: DVector::zeros(n),
        })
    }

    /// Number of levels.
    pub fn n_levels(&self) -> usize {
        self.n
    }

    /// The LU kernel in use.
    pub fn factorisation(&self) -> Factorisation {
        self.factorisation
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
        self.radiative_in.fill(0.0);
        self.collisional_in.fill(0.0);
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
            self.radiative_in[(r.lower, r.upper)] += r.a_s;
        }
        for (i, c) in collisional.iter().enumerate() {
            self.check_pair("collisional", i, c.upper, c.lower)?;
            require_non_negative(c.excitation_cm3_s, "cm^3 s^-1", || {
                format!("collisional[{i}].excitation_cm3_s")
            })?;
            require_non_negative(c.deexcitation_cm3_s, "cm^3 s^-1", || {
                format!("collisional[{i}].deexcitation_cm3_s")
            })?;
            self.collisional_in[(c.upper, c.lower)] += c.excitation_cm3_s;
            self.collisional_in[(c.lower, c.upper)] += c.deexcitation_cm3_s;
        }
        for k in 0..self.n {
            self.radiative_out[k] = self.radiative_in.column(k).sum();
            self.collisional_out[k] = self.collisional_in.column(k).sum();
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
                fractions: self.fractions.as_slice(),
                max_relative_imbalance: 0.0,
            });
        }
        self.assemble(ne_cm3)?;
        let ok = match self.factorisation {
            Factorisation::Unblocked => self.solve_unblocked(),
            Factorisation::Blocked => self.solve_blocked(),
        };
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
        self.fractions /= total;
        let max_relative_imbalance = self.imbalance(ne_cm3);
        Ok(PopulationView {
            fractions: self.fractions.as_slice(),
            max_relative_imbalance,
        })
    }

    /// nalgebra LU of `system`, solve for e_0, one refinement step. False if singular.
    /// Systems of up to [`STATIC_MAX_LEVELS`] levels use nalgebra's fixed-size matrices (the
    /// same LU, on the stack, with no per-call allocation).
    fn solve_unblocked(&mut self) -> bool {
        /// The solve in `$size`-level fixed-size storage (nalgebra needs literal sizes here).
        macro_rules! fixed {
            ($($size:literal)*) => {
                match self.n {
                    $($size => {
                        let system =
                            nalgebra::SMatrix::<f64, $size, $size>::from_column_slice(self.system.as_slice());
                        return solve_refined(&system, self.solution.as_mut_slice());
                    })*
                    _ => {}
                }
            };
        }
        fixed!(2 3 4 5 6 7 8 9 10 11 12);
        self.solve_dynamic()
    }

    /// [`Self::solve_unblocked`] in heap storage, for any size.
    fn solve_dynamic(&mut self) -> bool {
        let n = self.n;
        let mut storage = self
            .unblocked_storage
            .take()
            .unwrap_or_else(|| DMatrix::zeros(n, n));
        storage.copy_from(&self.system);
        let lu = storage.lu();
        self.solution.fill(0.0);
        self.solution[0] = 1.0;
        let mut ok = lu.solve_mut(&mut self.solution);
        if ok {
            residual_into(&mut self.correction, &self.system, &self.solution);
            ok = lu.solve_mut(&mut self.correction);
            self.solution += &self.correction;
        }
        self.unblocked_storage = Some(lu.l_unpack());
        ok
    }

    /// faer blocked LU of `system`, solve for e_0, one refinement step. False if a pivot is
    /// exactly zero (faer does not report singularity; the finiteness check catches the rest).
    fn solve_blocked(&mut self) -> bool {
        let n = self.n;
        let lu = self.blocked.get_or_insert_with(|| BlockedLu::new(n));
        lu.factors.copy_from_slice(self.system.as_slice());
        let factors = faer::MatMut::from_column_major_slice_mut(&mut lu.factors, n, n);
        let (_, perm) = faer_factor::lu_in_place(
            factors,
            &mut lu.perm,
            &mut lu.perm_inv,
            faer::Par::Seq,
            MemStack::new(&mut lu.scratch),
            Default::default(),
        );
        let factors = faer::MatRef::from_column_major_slice(&lu.factors, n, n);
        if (0..n).any(|i| factors[(i, i)] == 0.0) {
            return false;
        }
        self.solution.fill(0.0);
        self.solution[0] = 1.0;
        let solve = |rhs: &mut DVector<f64>, scratch: &mut MemBuffer| {
            faer_solve::solve_in_place(
                factors,
                factors,
                perm,
                faer::MatMut::from_column_major_slice_mut(rhs.as_mut_slice(), n, 1),
                faer::Par::Seq,
                MemStack::new(scratch),
            );
        };
        solve(&mut self.solution, &mut lu.scratch);
        residual_into(&mut self.correction, &self.system, &self.solution);
        solve(&mut self.correction, &mut lu.scratch);
        self.solution += &self.correction;
        true
    }

    /// Fill `system`: row 0 the normalisation, row j >= 1 the balance of level j divided by
    /// D_j. Column k is what level k feeds, scaled row by row, so each column is one pass over
    /// contiguous memory.
    fn assemble(&mut self, ne_cm3: f64) -> Result<(), PhysicsError> {
        let n = self.n;
        for j in 0..n {
            let d = self.radiative_out[j] + ne_cm3 * self.collisional_out[j];
            self.depopulation[j] = d;
            self.inverse_depopulation[j] = if d > 0.0 { 1.0 / d } else { 0.0 };
            if j > 0 && d <= 0.0 {
                let fed = (0..n).any(|k| {
                    k != j && self.radiative_in[(j, k)] + ne_cm3 * self.collisional_in[(j, k)] > 0.0
                });
                if fed {
                    return Err(PhysicsError::NoDepopulation { level: j, ne_cm3 });
                }
                // neither fed nor depopulated: an isolated level, population 0
            }
        }
        let columns = self
            .system
            .as_mut_slice()
            .chunks_exact_mut(n)
            .zip(self.radiative_in.as_slice().chunks_exact(n))
            .zip(self.collisional_in.as_slice().chunks_exact(n));
        for (k, ((column, radiative), collisional)) in columns.enumerate() {
            for (((m, &a), &q), &inv) in column
                .iter_mut()
                .zip(radiative)
                .zip(collisional)
                .zip(&self.inverse_depopulation)
                .skip(1)
            {
                *m = -(a + ne_cm3 * q) * inv;
            }
            column[0] = 1.0;
            if k > 0 {
                column[k] = 1.0;
            }
        }
        Ok(())
    }

    /// Largest relative imbalance between inflow and outflow over all levels.
    fn imbalance(&mut self, ne_cm3: f64) -> f64 {
        // inflow = (A_in + n_e q_in) x, as two matrix-vector products
        self.inflow.gemv(1.0, &self.radiative_in, &self.fractions, 0.0);
        self.inflow
            .gemv(ne_cm3, &self.collisional_in, &self.fractions, 1.0);
        let mut worst: f64 = 0.0;
        for j in 0..self.n {
            let out = self.fractions[j] * self.depopulation[j];
            let inflow = self.inflow[j];
            let scale = inflow + out;
            if scale > 0.0 {
                worst = worst.max((inflow - out).abs() / scale);
            }
        }
        worst
    }
}

/// The residual r = e_0 - M x of solution `x` of `system` M, into `out`.
fn residual_into(out: &mut DVector<f64>, system: &DMatrix<f64>, x: &DVector<f64>) {
    out.fill(0.0);
    out[0] = 1.0;
    out.gemv(-1.0, system, x, 1.0);
}

/// LU solve of `system x = e_0` with one refinement step, in fixed-size storage, into `out`.
/// False if singular.
fn solve_refined<D>(system: &nalgebra::OMatrix<f64, D, D>, out: &mut [f64]) -> bool
where
    D: nalgebra::DimName + nalgebra::DimMin<D, Output = D>,
    nalgebra::DefaultAllocator: nalgebra::allocator::Allocator<D, D> + nalgebra::allocator::Allocator<D>,
{
    let lu = system.clone().lu();
    let mut e0 = nalgebra::OVector::<f64, D>::zeros();
    e0[0] = 1.0;
    let Some(mut x) = lu.solve(&e0) else {
        return false;
    };
    let residual = &e0 - system * &x;
    let Some(d) = lu.solve(&residual) else {
        return false;
    };
    x += d;
    out.copy_from_slice(x.as_slice());
    true
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
        // the blocked kernel detects it too
        let mut ws = PopulationWorkspace::with_factorisation(3, Factorisation::Blocked).unwrap();
        ws.set_rates(&[], &coll).unwrap();
        let err = ws.solve(1.0).unwrap_err();
        assert!(matches!(err, PhysicsError::SingularSystem { .. }), "{err:?}");
    }
}
