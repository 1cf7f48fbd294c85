//! Building one rate table from a source of effective collision strengths, and measuring its
//! interpolation error against that source.

use super::TableError;
use ratewell_proto::rule::{LogGrid, RateTable, Side, TableHeader};

/// Direct evaluation of a transition's effective collision strength from its source data.
pub trait UpsilonSource: Sync {
    /// Upsilon at `t_k` (K), evaluated from the source data without tabulation.
    fn upsilon(&self, t_k: f64) -> Result<f64, TableError>;
}

/// Tabulates `source` on `grid` (ln Upsilon at the knots), builds the shape-preserving table and
/// records its largest relative error against the source at the midpoints (in log T) of every
/// grid interval, where interpolation error is largest.
pub fn build_table(
    header: TableHeader,
    grid: LogGrid,
    source: &dyn UpsilonSource,
) -> Result<RateTable, TableError> {
    let (upper, lower) = (header.upper, header.lower);
    let mut ln_upsilon = Vec::with_capacity(grid.knots());
    for i in 0..grid.knots() {
        let t_k = grid.temperature_k(i);
        ln_upsilon.push(positive_ln(source.upsilon(t_k)?, upper, lower, t_k)?);
    }
    let table = RateTable::from_knots(header, grid, ln_upsilon)?;
    let mut max_error: f64 = 0.0;
    for i in 0..grid.knots() - 1 {
        let t_k = grid.midpoint_k(i);
        let direct = source.upsilon(t_k)?;
        let loc = grid.locate(t_k);
        debug_assert_eq!(loc.side, Side::Inside);
        let tabulated = table.ln_upsilon_at(&loc).exp();
        max_error = max_error.max(((tabulated - direct) / direct).abs());
    }
    Ok(table.with_max_interpolation_error(max_error))
}

fn positive_ln(upsilon: f64, upper: u32, lower: u32, t_k: f64) -> Result<f64, TableError> {
    if upsilon.is_finite() && upsilon > 0.0 {
        Ok(upsilon.ln())
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
