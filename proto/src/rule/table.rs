//! One transition's table: its header, knots and slopes, the per-interval cubic made from them,
//! and the scalar rule that evaluates it at one location.

use super::cubic::ln_upsilon_cubic;
use super::errors::RuleError;
use super::flags::{self, value_flags};
use super::grid::{Location, LogGrid, OutsidePolicy, checked_location};
use super::kernels::Kernel;
use super::math::{exp, ln};
use super::outputs::RateOutputs;
use super::slopes::monotone_slopes;
use crate::constants::rate_prefactor_cm3_s_k_half;

/// What a table describes: the transition, its weights and energy, and its source range.
#[derive(Debug, Clone, PartialEq)]
pub struct TableHeader {
    /// Upper level index (1-based).
    pub upper: u32,
    /// Lower level index (1-based).
    pub lower: u32,
    /// Statistical weight of the lower level.
    pub g_lower: f64,
    /// Statistical weight of the upper level.
    pub g_upper: f64,
    /// Transition energy as a temperature equivalent dE/k, K.
    pub excitation_energy_k: f64,
    /// Lowest temperature covered by the source data, K.
    pub source_t_min_k: f64,
    /// Highest temperature covered by the source data, K.
    pub source_t_max_k: f64,
    /// Whether the data come from an approximation formula.
    pub approximate: bool,
}

/// Rate coefficients at one temperature.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct RateValue {
    /// Effective collision strength (dimensionless).
    pub upsilon: f64,
    /// Excitation rate coefficient q_lu, cm^3 s^-1.
    pub excitation_cm3_s: f64,
    /// De-excitation rate coefficient q_ul, cm^3 s^-1.
    pub deexcitation_cm3_s: f64,
    /// [`flags`] bits.
    pub flags: u32,
}

/// One transition's table, ready to evaluate.
#[derive(Debug, Clone, PartialEq)]
pub struct RateTable {
    header: TableHeader,
    grid: LogGrid,
    /// Per knot: ln Upsilon and its slope d(ln Upsilon)/d(log10 T), side by side so one
    /// interval's cubic reads one contiguous run of four numbers.
    knots: Vec<[f64; 2]>,
    max_interpolation_error: f64,
    ln_prefactor_ul: f64,
    ln_weight_ratio: f64,
    base_flags: u32,
    /// Source range with the relative slack of [`RateTable::flags_at`], K.
    source_lo_k: f64,
    source_hi_k: f64,
}

impl RateTable {
    /// Builds a table from ln Upsilon at the grid knots, computing the shape-preserving slopes.
    pub fn from_knots(header: TableHeader, grid: LogGrid, ln_upsilon: Vec<f64>) -> Result<Self, RuleError> {
        check_knots(&header, &grid, "ln_upsilon", &ln_upsilon)?;
        let slopes = monotone_slopes(&ln_upsilon, grid.log10_t_step());
        Self::from_parts(header, grid, ln_upsilon, slopes, 0.0)
    }

    /// Builds a table from knots and slopes as served (slopes are taken as given, not recomputed).
    pub fn from_parts(
        header: TableHeader,
        grid: LogGrid,
        ln_upsilon: Vec<f64>,
        slopes: Vec<f64>,
        max_interpolation_error: f64,
    ) -> Result<Self, RuleError> {
        check_knots(&header, &grid, "ln_upsilon", &ln_upsilon)?;
        check_knots(&header, &grid, "slopes", &slopes)?;
        let knots = ln_upsilon.iter().zip(&slopes).map(|(&y, &m)| [y, m]).collect();
        Self::from_knot_pairs(header, grid, knots, max_interpolation_error)
    }

    /// As [`Self::from_parts`], from (ln Upsilon, slope) pairs, one per knot.
    pub fn from_knot_pairs(
        header: TableHeader,
        grid: LogGrid,
        knots: Vec<[f64; 2]>,
        max_interpolation_error: f64,
    ) -> Result<Self, RuleError> {
        for (field, column) in [("ln_upsilon", 0), ("slopes", 1)] {
            check_knots_by(
                &header,
                &grid,
                field,
                knots.len(),
                knots.iter().map(|k| k[column]),
            )?;
        }
        let bad = |field: &'static str, message: String| RuleError::BadTable {
            upper: header.upper,
            lower: header.lower,
            field,
            message,
        };
        for (field, g) in [("g_lower", header.g_lower), ("g_upper", header.g_upper)] {
            if !g.is_finite() || g <= 0.0 {
                return Err(bad(field, format!("{g}: must be finite and > 0")));
            }
        }
        if !header.excitation_energy_k.is_finite() || header.excitation_energy_k < 0.0 {
            return Err(bad(
                "excitation_energy_k",
                format!("{} K: must be finite and >= 0", header.excitation_energy_k),
            ));
        }
        if !(header.source_t_min_k > 0.0
            && header.source_t_max_k >= header.source_t_min_k
            && header.source_t_max_k.is_finite())
        {
            return Err(bad(
                "source_t_min_k",
                format!(
                    "source range [{}, {}] K: must satisfy 0 < min <= max < inf",
                    header.source_t_min_k, header.source_t_max_k
                ),
            ));
        }
        if !max_interpolation_error.is_finite() || max_interpolation_error < 0.0 {
            return Err(bad(
                "max_interpolation_error",
                format!("{max_interpolation_error}: must be finite and >= 0"),
            ));
        }
        let ln_prefactor_ul = ln(rate_prefactor_cm3_s_k_half()) - ln(header.g_upper);
        let ln_weight_ratio = ln(header.g_upper) - ln(header.g_lower);
        let base_flags = if header.approximate { flags::APPROXIMATE } else { 0 };
        let source_lo_k = header.source_t_min_k * (1.0 - 1e-12);
        let source_hi_k = header.source_t_max_k * (1.0 + 1e-12);
        Ok(Self {
            header,
            grid,
            knots,
            max_interpolation_error,
            ln_prefactor_ul,
            ln_weight_ratio,
            base_flags,
            source_lo_k,
            source_hi_k,
        })
    }

    /// Records the measured interpolation error bound (relative; how it is measured is stated
    /// in the contract, `RateTable.max_interpolation_error`).
    pub fn with_max_interpolation_error(mut self, error: f64) -> Self {
        self.max_interpolation_error = error;
        self
    }

    /// The table's transition and source description.
    pub fn header(&self) -> &TableHeader {
        &self.header
    }
    /// The table's grid.
    pub fn grid(&self) -> &LogGrid {
        &self.grid
    }
    /// ln Upsilon at the knots.
    pub fn ln_upsilon(&self) -> impl ExactSizeIterator<Item = f64> + '_ {
        self.knots.iter().map(|k| k[0])
    }
    /// d(ln Upsilon)/d(log10 T) at the knots.
    pub fn slopes(&self) -> impl ExactSizeIterator<Item = f64> + '_ {
        self.knots.iter().map(|k| k[1])
    }
    /// (ln Upsilon, slope) per knot.
    pub fn knot_pairs(&self) -> &[[f64; 2]] {
        &self.knots
    }
    /// Bound on the relative interpolation error, as measured when the table was built.
    pub fn max_interpolation_error(&self) -> f64 {
        self.max_interpolation_error
    }

    /// ln Upsilon at a location on this table's grid.
    #[inline]
    pub fn ln_upsilon_at(&self, loc: &Location) -> f64 {
        ln_upsilon_cubic(
            &self.knots,
            self.grid.log10_t_step(),
            loc.interval,
            loc.frac,
            loc.side,
        )
    }

    /// Flags of a value at a location (approximate, beyond source, outside grid).
    #[inline]
    pub fn flags_at(&self, loc: &Location) -> u32 {
        value_flags(
            self.base_flags,
            loc.side,
            loc.t_k,
            self.source_lo_k,
            self.source_hi_k,
        )
    }

    /// ln q_ul (cm^3 s^-1) at a location.
    #[inline]
    pub(super) fn ln_deexcitation_at(&self, loc: &Location) -> f64 {
        self.ln_upsilon_at(loc) + self.ln_prefactor_ul - 0.5 * loc.ln_t
    }

    /// ln q_lu from ln q_ul at the same location.
    #[inline]
    pub(super) fn ln_excitation_from(&self, ln_q_ul: f64, loc: &Location) -> f64 {
        ln_q_ul + self.ln_weight_ratio - self.header.excitation_energy_k * loc.inv_t
    }

    /// Everything at a location, with no grid-policy check.
    #[inline]
    pub fn evaluate_at(&self, loc: &Location) -> RateValue {
        let ln_ups = self.ln_upsilon_at(loc);
        let ln_q_ul = ln_ups + self.ln_prefactor_ul - 0.5 * loc.ln_t;
        RateValue {
            upsilon: exp(ln_ups),
            excitation_cm3_s: exp(self.ln_excitation_from(ln_q_ul, loc)),
            deexcitation_cm3_s: exp(ln_q_ul),
            flags: self.flags_at(loc),
        }
    }

    /// Rate coefficients at one temperature (K), applying the grid policy.
    pub fn evaluate(&self, t_k: f64, outside: OutsidePolicy) -> Result<RateValue, RuleError> {
        let loc = checked_location(&self.grid, 0, t_k, outside)?;
        Ok(self.evaluate_at(&loc))
    }

    /// Writes the values at `loc` into slot `j` of `out`, refused unless `j < out.len()`.
    /// For many locations prefer [`Self::write_located`], which gives the same bits faster.
    #[inline]
    pub fn write_at(&self, loc: &Location, j: usize, out: &mut RateOutputs<'_>) -> Result<(), RuleError> {
        if j >= out.len() {
            return Err(RuleError::BufferLength {
                field: "flags",
                got: out.len(),
                expected: j + 1,
            });
        }
        let ln_q_ul = self.ln_deexcitation_at(loc);
        if out.direction.wants_deexcitation() {
            out.deexcitation[j] = exp(ln_q_ul);
        }
        if out.direction.wants_excitation() {
            out.excitation[j] = exp(self.ln_excitation_from(ln_q_ul, loc));
        }
        out.flags[j] = self.flags_at(loc);
        Ok(())
    }

    /// What the batched kernels need of this table.
    pub(super) fn kernel(&self) -> Kernel<'_> {
        Kernel {
            knots: &self.knots,
            step: self.grid.log10_t_step(),
            ln_prefactor_ul: self.ln_prefactor_ul,
            ln_weight_ratio: self.ln_weight_ratio,
            excitation_energy_k: self.header.excitation_energy_k,
            base_flags: self.base_flags,
            source_lo_k: self.source_lo_k,
            source_hi_k: self.source_hi_k,
        }
    }
}

fn check_knots(
    header: &TableHeader,
    grid: &LogGrid,
    field: &'static str,
    values: &[f64],
) -> Result<(), RuleError> {
    check_knots_by(header, grid, field, values.len(), values.iter().copied())
}

fn check_knots_by(
    header: &TableHeader,
    grid: &LogGrid,
    field: &'static str,
    count: usize,
    mut values: impl Iterator<Item = f64>,
) -> Result<(), RuleError> {
    let bad = |message: String| RuleError::BadTable {
        upper: header.upper,
        lower: header.lower,
        field,
        message,
    };
    if count != grid.knots() {
        return Err(bad(format!(
            "{count} values for a grid of {} knots",
            grid.knots()
        )));
    }
    if let Some((i, v)) = values.by_ref().enumerate().find(|(_, v)| !v.is_finite()) {
        return Err(bad(format!("value[{i}] = {v}: must be finite")));
    }
    Ok(())
}
