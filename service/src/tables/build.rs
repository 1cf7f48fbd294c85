//! Building one rate table from a source of effective collision strengths, and bounding its
//! interpolation error against that source ([`super::error_bound`]).
//!
//! Every temperature the build evaluates the source at is 10^(log10 T_min + position x step)
//! computed with [`crate::physics::elementary::exp10`], so the table's bits do not depend on
//! the platform's maths library.

use super::TableError;
use super::error_bound::{
    DENSE_DIVISIONS, MODEL_FRACTIONS, dense_interval_bound, model_interval_bound, relative_error_bound,
};
use crate::physics::elementary::{exp10, ln, log10};
use ratewell_proto::rule::{Location, LogGrid, RateTable, TableHeader};

/// Direct evaluation of a transition's effective collision strength from its source data.
pub trait UpsilonSource: Sync {
    /// Upsilon at `t_k` (K), evaluated from the source data without tabulation.
    fn upsilon(&self, t_k: f64) -> Result<f64, TableError>;

    /// Temperatures (K, increasing) at which the source's second derivative in T may jump,
    /// such as the nodes of a piecewise interpolant; none for an analytic source.
    fn breakpoints_k(&self) -> &[f64] {
        &[]
    }
}

/// Temperature (K) at `position` steps from the first knot of `grid` (knot i at position i).
pub fn grid_temperature_k(grid: &LogGrid, position: f64) -> f64 {
    exp10(grid.log10_t_min_k() + position * grid.log10_t_step())
}

/// The temperatures every table on one grid is evaluated at, located once for all of them:
/// the knots, and [`MODEL_FRACTIONS`] of every interval.
#[derive(Debug, Clone)]
pub struct GridSamples {
    grid: LogGrid,
    knots_k: Vec<f64>,
    /// Per interval, the model fractions' temperatures and locations.
    model: Vec<[(f64, Location); 3]>,
}

impl GridSamples {
    /// The samples of `grid`.
    pub fn new(grid: LogGrid) -> Self {
        let knots_k = (0..grid.knots())
            .map(|i| grid_temperature_k(&grid, i as f64))
            .collect();
        let model = (0..grid.knots() - 1)
            .map(|i| {
                MODEL_FRACTIONS.map(|frac| {
                    let t_k = grid_temperature_k(&grid, i as f64 + frac);
                    (t_k, grid.locate(t_k))
                })
            })
            .collect();
        Self { grid, knots_k, model }
    }

    /// The grid.
    pub fn grid(&self) -> LogGrid {
        self.grid
    }
}

/// Tabulates `source` on `grid` (ln Upsilon at the knots), builds the shape-preserving table and
/// records a bound on its relative error against the source over the whole grid
/// ([`super::error_bound`] says how it is measured).
pub fn build_table(
    header: TableHeader,
    grid: LogGrid,
    source: &dyn UpsilonSource,
) -> Result<RateTable, TableError> {
    build_table_on(&GridSamples::new(grid), header, source)
}

/// [`build_table`] with the grid's sample temperatures worked out beforehand (shared by every
/// table of a species).
pub fn build_table_on(
    samples: &GridSamples,
    header: TableHeader,
    source: &dyn UpsilonSource,
) -> Result<RateTable, TableError> {
    let grid = samples.grid;
    let (upper, lower) = (header.upper, header.lower);
    let mut ln_upsilon = Vec::with_capacity(grid.knots());
    for &t_k in &samples.knots_k {
        ln_upsilon.push(positive_ln(source.upsilon(t_k)?, upper, lower, t_k)?);
    }
    let table = RateTable::from_knots(header, grid, ln_upsilon)?;
    let log_error = |t_k: f64, loc: &Location| -> Result<f64, TableError> {
        let direct = positive_ln(source.upsilon(t_k)?, upper, lower, t_k)?;
        Ok(table.ln_upsilon_at(loc) - direct)
    };
    let breaks = breakpoint_intervals(&grid, source.breakpoints_k());
    let mut max_log_error: f64 = 0.0;
    for (i, model) in samples.model.iter().enumerate() {
        let bound = if breaks.binary_search(&i).is_ok() {
            let mut d = [0.0; DENSE_DIVISIONS - 1];
            for (k, v) in d.iter_mut().enumerate() {
                let t_k = grid_temperature_k(&grid, i as f64 + (k + 1) as f64 / DENSE_DIVISIONS as f64);
                *v = log_error(t_k, &grid.locate(t_k))?;
            }
            dense_interval_bound(&d)
        } else {
            let mut d = [0.0; 3];
            for (v, (t_k, loc)) in d.iter_mut().zip(model) {
                *v = log_error(*t_k, loc)?;
            }
            model_interval_bound(d)
        };
        max_log_error = max_log_error.max(bound);
    }
    let max_abs_ln = table.ln_upsilon().fold(0.0f64, |m, v| m.max(v.abs()));
    Ok(table.with_max_interpolation_error(relative_error_bound(max_log_error, max_abs_ln)))
}

/// Sorted indices of the grid intervals that hold a breakpoint strictly inside. A breakpoint
/// within rounding of a knot leaves both neighbouring intervals smooth, so they need nothing
/// more than the model.
fn breakpoint_intervals(grid: &LogGrid, breakpoints_k: &[f64]) -> Vec<usize> {
    let intervals = grid.knots() - 1;
    let mut out: Vec<usize> = Vec::new();
    for &t in breakpoints_k {
        if !(t.is_finite() && t > 0.0) {
            continue;
        }
        let position = (log10(t) - grid.log10_t_min_k()) / grid.log10_t_step();
        let nearest_knot = position.round();
        if (position - nearest_knot).abs() < 1e-6 || !(position > 0.0 && position < intervals as f64) {
            continue;
        }
        out.push(position.floor() as usize);
    }
    out.sort_unstable();
    out.dedup();
    out
}

fn positive_ln(upsilon: f64, upper: u32, lower: u32, t_k: f64) -> Result<f64, TableError> {
    if upsilon.is_finite() && upsilon > 0.0 {
        Ok(ln(upsilon))
    } else {
        Err(TableError::NonPositiveUpsilon {
            upper,
            lower,
            t_k,
            upsilon,
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    struct PowerLaw;
    impl UpsilonSource for PowerLaw {
        fn upsilon(&self, t_k: f64) -> Result<f64, TableError> {
            Ok(0.2 * (t_k / 1e4).powf(0.3))
        }
    }

    struct Bumpy;
    impl UpsilonSource for Bumpy {
        fn upsilon(&self, t_k: f64) -> Result<f64, TableError> {
            let x = t_k.log10();
            Ok(1.0 + 0.5 * (3.0 * x).sin())
        }
    }

    fn header() -> TableHeader {
        TableHeader {
            upper: 2,
            lower: 1,
            g_lower: 1.0,
            g_upper: 3.0,
            excitation_energy_k: 1e4,
            source_t_min_k: 1e3,
            source_t_max_k: 1e6,
            approximate: false,
        }
    }

    #[test]
    fn a_power_law_is_exact_in_log_space() {
        // ln Upsilon is linear in log10 T, which the monotone cubic reproduces exactly
        // (common practice, no source).
        let grid = LogGrid::from_range(1e3, 1e6, 5).unwrap();
        let t = build_table(header(), grid, &PowerLaw).unwrap();
        assert!(
            t.max_interpolation_error() < 1e-13,
            "{}",
            t.max_interpolation_error()
        );
    }

    #[test]
    fn measured_error_shrinks_with_finer_grids() {
        // Piecewise cubic Hermite error falls at least as h^3 for smooth data (de Boor, A
        // Practical Guide to Splines, ch. IV); check the measured error follows.
        let coarse = build_table(header(), LogGrid::from_range(1e3, 1e6, 5).unwrap(), &Bumpy).unwrap();
        let fine = build_table(header(), LogGrid::from_range(1e3, 1e6, 20).unwrap(), &Bumpy).unwrap();
        assert!(coarse.max_interpolation_error() > 0.0);
        assert!(fine.max_interpolation_error() < coarse.max_interpolation_error() / 8.0);
    }

    struct BetheLike;
    impl UpsilonSource for BetheLike {
        fn upsilon(&self, t_k: f64) -> Result<f64, TableError> {
            Ok(0.3 + 0.2 * (1.0 + t_k / 2e4).ln())
        }
    }

    #[test]
    fn a_monotone_log_growth_interpolates_to_1e_5_at_20_per_decade() {
        // A smooth monotone Upsilon(T) like an allowed line's (constant, then logarithmic
        // growth: Burgess & Tully 1992, type 1 behaviour) needs no extrema-limited slopes, so
        // the cubic is accurate to about h^3 (common practice, no source).
        let grid = LogGrid::from_range(1e2, 1e8, 20).unwrap();
        let t = build_table(header(), grid, &BetheLike).unwrap();
        assert!(
            t.max_interpolation_error() < 1e-5,
            "{}",
            t.max_interpolation_error()
        );
    }

    struct Broken;
    impl UpsilonSource for Broken {
        fn upsilon(&self, _t_k: f64) -> Result<f64, TableError> {
            Ok(-1.0)
        }
    }

    #[test]
    fn a_non_positive_source_is_an_error() {
        let grid = LogGrid::from_range(1e3, 1e6, 5).unwrap();
        let err = build_table(header(), grid, &Broken).unwrap_err();
        assert!(err.to_string().contains("2-1"), "{err}");
    }
}
