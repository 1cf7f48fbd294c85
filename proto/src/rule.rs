//! The one evaluation rule for a served rate table.
//!
//! A table holds the smooth part only: ln Upsilon at knots of a uniform grid in log10(T/K), and
//! the shape-preserving (monotone piecewise cubic Hermite, Fritsch-Butland weighted harmonic
//! mean slopes) derivative at each knot. Evaluation finds the interval by arithmetic, evaluates
//! the cubic in log10 T, and applies the analytic factors exactly:
//!
//! q_ul = C Upsilon / (g_u sqrt(T)),   q_lu = (g_u / g_l) q_ul exp(-dE / kT),
//!
//! computed as one exponential of a sum of logarithms. Because Upsilon = exp(cubic), every value
//! is positive; because the slopes are monotone-preserving, the interpolant never overshoots
//! the knot values. The server and the client library both call this module, so a lookup
//! answered by the server and one evaluated locally from the same table agree bit for bit.

use crate::constants::rate_prefactor_cm3_s_k_half;
use std::f64::consts::LOG10_E;

/// Bit flags attached to each evaluated value (same numbers as the wire enum `ValueFlag`).
pub mod flags {
    /// The collision data come from an approximation formula.
    pub const APPROXIMATE: u32 = 1;
    /// The temperature lies outside the source data's range (scaled extrapolation).
    pub const BEYOND_SOURCE: u32 = 2;
    /// The temperature lies outside the table grid (extrapolated by this rule).
    pub const OUTSIDE_GRID: u32 = 4;
}

/// Relative slack, in grid steps, within which a temperature at a grid end counts as inside.
const END_SLACK_STEPS: f64 = 1e-9;

/// Errors of the evaluation rule. Messages name the field, value and allowed range.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum RuleError {
    /// A temperature that is not a finite positive number.
    #[error("temperature[{index}] = {value_k} K: must be finite and > 0")]
    TemperatureNotPositive {
        /// Position in the request.
        index: usize,
        /// Offending value, K.
        value_k: f64,
    },
    /// A temperature outside the grid while extrapolation is refused.
    #[error(
        "temperature[{index}] = {value_k} K: outside the table grid [{min_k}, {max_k}] K and extrapolation was not allowed"
    )]
    OutsideGrid {
        /// Position in the request.
        index: usize,
        /// Offending value, K.
        value_k: f64,
        /// Lowest grid temperature, K.
        min_k: f64,
        /// Highest grid temperature, K.
        max_k: f64,
    },
    /// A grid description that cannot define a table.
    #[error("grid {field} = {value}: {allowed}")]
    BadGrid {
        /// Offending field.
        field: &'static str,
        /// Offending value.
        value: f64,
        /// What is allowed.
        allowed: &'static str,
    },
    /// A table whose contents are inconsistent.
    #[error("table {upper}-{lower} {field}: {message}")]
    BadTable {
        /// Upper level index (1-based).
        upper: u32,
        /// Lower level index (1-based).
        lower: u32,
        /// Offending field.
        field: &'static str,
        /// What is wrong.
        message: String,
    },
    /// Output slices of the wrong length.
    #[error("output buffer {field} has length {got}, expected {expected}")]
    BufferLength {
        /// Which buffer.
        field: &'static str,
        /// Its length.
        got: usize,
        /// The length needed.
        expected: usize,
    },
}

/// What to do with a temperature outside the table grid.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum OutsidePolicy {
    /// Return [`RuleError::OutsideGrid`].
    #[default]
    Refuse,
    /// Extrapolate linearly in (log10 T, ln Upsilon) from the end knot, flagged OUTSIDE_GRID.
    Extrapolate,
}

/// Which rate coefficients a batched evaluation fills.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Direction {
    /// Excitation q_lu only.
    Excitation,
    /// De-excitation q_ul only.
    Deexcitation,
    /// Both.
    Both,
}

impl Direction {
    /// Whether excitation values are produced.
    pub fn wants_excitation(self) -> bool {
        matches!(self, Direction::Excitation | Direction::Both)
    }
    /// Whether de-excitation values are produced.
    pub fn wants_deexcitation(self) -> bool {
        matches!(self, Direction::Deexcitation | Direction::Both)
    }
}

/// A uniform grid in log10(T / K).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct LogGrid {
    log10_t_min_k: f64,
    log10_t_step: f64,
    knots: usize,
    inv_step: f64,
}

impl LogGrid {
    /// A grid from its first knot log10(T/K), its step in log10 T and its number of knots (>= 2).
    pub fn new(log10_t_min_k: f64, log10_t_step: f64, knots: usize) -> Result<Self, RuleError> {
        if !log10_t_min_k.is_finite() || !(-3.0..=12.0).contains(&log10_t_min_k) {
            return Err(RuleError::BadGrid {
                field: "log10_t_min_k",
                value: log10_t_min_k,
                allowed: "must be finite, within [-3, 12]",
            });
        }
        if !log10_t_step.is_finite() || log10_t_step <= 0.0 || log10_t_step > 2.0 {
            return Err(RuleError::BadGrid {
                field: "log10_t_step",
                value: log10_t_step,
                allowed: "must be finite, within (0, 2]",
            });
        }
        if !(2..=100_000).contains(&knots) {
            return Err(RuleError::BadGrid {
                field: "knots",
                value: knots as f64,
                allowed: "must be within [2, 100000]",
            });
        }
        Ok(Self {
            log10_t_min_k,
            log10_t_step,
            knots,
            inv_step: 1.0 / log10_t_step,
        })
    }

    /// The grid starting at `t_min_k` with `points_per_decade` knots per decade, extended to the
    /// first knot at or above `t_max_k`.
    pub fn from_range(t_min_k: f64, t_max_k: f64, points_per_decade: u32) -> Result<Self, RuleError> {
        if !t_min_k.is_finite() || t_min_k <= 0.0 {
            return Err(RuleError::BadGrid {
                field: "t_min_k",
                value: t_min_k,
                allowed: "must be finite and > 0 K",
            });
        }
        if !t_max_k.is_finite() || t_max_k <= t_min_k {
            return Err(RuleError::BadGrid {
                field: "t_max_k",
                value: t_max_k,
                allowed: "must be finite and > t_min_k",
            });
        }
        if !(1..=1000).contains(&points_per_decade) {
            return Err(RuleError::BadGrid {
                field: "points_per_decade",
                value: f64::from(points_per_decade),
                allowed: "must be within [1, 1000]",
            });
        }
        let step = 1.0 / f64::from(points_per_decade);
        let decades = t_max_k.log10() - t_min_k.log10();
        let intervals = (decades / step - 1e-9).ceil().max(1.0);
        Self::new(t_min_k.log10(), step, intervals as usize + 1)
    }

    /// log10 of the first knot's temperature in K.
    pub fn log10_t_min_k(&self) -> f64 {
        self.log10_t_min_k
    }
    /// Knot spacing in log10 T.
    pub fn log10_t_step(&self) -> f64 {
        self.log10_t_step
    }
    /// Number of knots.
    pub fn knots(&self) -> usize {
        self.knots
    }
    /// Temperature of knot `i`, K.
    pub fn temperature_k(&self, i: usize) -> f64 {
        10f64.powf(self.log10_t_min_k + i as f64 * self.log10_t_step)
    }
    /// Temperature at the middle (in log T) of interval `i`, K.
    pub fn midpoint_k(&self, i: usize) -> f64 {
        10f64.powf(self.log10_t_min_k + (i as f64 + 0.5) * self.log10_t_step)
    }
    /// Lowest grid temperature, K.
    pub fn t_min_k(&self) -> f64 {
        self.temperature_k(0)
    }
    /// Highest grid temperature, K.
    pub fn t_max_k(&self) -> f64 {
        self.temperature_k(self.knots - 1)
    }

    /// Where a temperature (K, finite and > 0) falls on the grid. Shared by every table on this
    /// grid, so a batch over many tables locates each temperature once.
    #[inline]
    pub fn locate(&self, t_k: f64) -> Location {
        let ln_t = t_k.ln();
        let u = (ln_t * LOG10_E - self.log10_t_min_k) * self.inv_step;
        let last = (self.knots - 1) as f64;
        let (interval, frac, side) = if u < -END_SLACK_STEPS {
            (0, u, Side::Below)
        } else if u > last + END_SLACK_STEPS {
            (self.knots - 2, u - (last - 1.0), Side::Above)
        } else {
            let u = u.clamp(0.0, last);
            let i = (u.floor() as usize).min(self.knots - 2);
            (i, u - i as f64, Side::Inside)
        };
        Location {
            interval,
            frac,
            side,
            t_k,
            ln_t,
            inv_t: 1.0 / t_k,
        }
    }
}

/// Whether a located temperature is inside the grid.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Side {
    /// Below the first knot.
    Below,
    /// Within the grid.
    Inside,
    /// Above the last knot.
    Above,
}

/// A temperature located on a grid: interval index, fractional position in it (outside the grid,
/// the signed distance in steps from the end interval's start), and the logarithmic factors.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Location {
    /// Interval index, 0 ..= knots - 2.
    pub interval: usize,
    /// Position within the interval in steps (0..1 inside the grid).
    pub frac: f64,
    /// Inside or outside the grid.
    pub side: Side,
    /// The temperature, K.
    pub t_k: f64,
    /// ln(T / K).
    pub ln_t: f64,
    /// 1 / T, K^-1.
    pub inv_t: f64,
}

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
    ln_upsilon: Vec<f64>,
    slopes: Vec<f64>,
    max_interpolation_error: f64,
    /// Per interval: a, b, c, d of a + f (b + f (c + f d)), f in steps.
    coeffs: Vec<[f64; 4]>,
    ln_prefactor_ul: f64,
    ln_weight_ratio: f64,
    base_flags: u32,
}

impl RateTable {
    /// Builds a table from ln Upsilon at the grid knots, computing the shape-preserving slopes.
    pub fn from_knots(header: TableHeader, grid: LogGrid, ln_upsilon: Vec<f64>) -> Result<Self, RuleError> {
        check_knots(&header, &grid, "ln_upsilon", &ln_upsilon)?;
        let slopes = monotone_slopes(&ln_upsilon, grid.log10_t_step);
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
        if !(header.source_t_min_k > 0.0 && header.source_t_max_k >= header.source_t_min_k)
            || !header.source_t_max_k.is_finite()
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
        let coeffs = hermite_coefficients(&ln_upsilon, &slopes, grid.log10_t_step);
        let ln_prefactor_ul = rate_prefactor_cm3_s_k_half().ln() - header.g_upper.ln();
        let ln_weight_ratio = header.g_upper.ln() - header.g_lower.ln();
        let base_flags = if header.approximate { flags::APPROXIMATE } else { 0 };
        Ok(Self {
            header,
            grid,
            ln_upsilon,
            slopes,
            max_interpolation_error,
            coeffs,
            ln_prefactor_ul,
            ln_weight_ratio,
            base_flags,
        })
    }

    /// Records the measured interpolation error (relative, at grid midpoints).
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
    pub fn ln_upsilon(&self) -> &[f64] {
        &self.ln_upsilon
    }
    /// d(ln Upsilon)/d(log10 T) at the knots.
    pub fn slopes(&self) -> &[f64] {
        &self.slopes
    }
    /// Largest relative interpolation error measured at grid midpoints.
    pub fn max_interpolation_error(&self) -> f64 {
        self.max_interpolation_error
    }

    /// ln Upsilon at a location on this table's grid.
    #[inline]
    pub fn ln_upsilon_at(&self, loc: &Location) -> f64 {
        let [a, b, c, d] = self.coeffs[loc.interval];
        let f = loc.frac;
        match loc.side {
            Side::Inside => a + f * (b + f * (c + f * d)),
            // Linear continuation from the first knot with its slope (b is the slope per step).
            Side::Below => a + f * b,
            // Linear continuation from the last knot: value a+b+c+d, slope b+2c+3d per step.
            Side::Above => (a + b + c + d) + (f - 1.0) * (b + 2.0 * c + 3.0 * d),
        }
    }

    /// Flags of a value at a location (approximate, beyond source, outside grid).
    #[inline]
    pub fn flags_at(&self, loc: &Location) -> u32 {
        let mut f = self.base_flags;
        if loc.side != Side::Inside {
            f |= flags::OUTSIDE_GRID;
        }
        let h = &self.header;
        if loc.t_k < h.source_t_min_k * (1.0 - 1e-12) || loc.t_k > h.source_t_max_k * (1.0 + 1e-12) {
            f |= flags::BEYOND_SOURCE;
        }
        f
    }

    /// ln q_ul (cm^3 s^-1) at a location.
    #[inline]
    fn ln_deexcitation_at(&self, loc: &Location) -> f64 {
        self.ln_upsilon_at(loc) + self.ln_prefactor_ul - 0.5 * loc.ln_t
    }

    /// ln q_lu from ln q_ul at the same location.
    #[inline]
    fn ln_excitation_from(&self, ln_q_ul: f64, loc: &Location) -> f64 {
        ln_q_ul + self.ln_weight_ratio - self.header.excitation_energy_k * loc.inv_t
    }

    /// Everything at a location, with no grid-policy check.
    #[inline]
    pub fn evaluate_at(&self, loc: &Location) -> RateValue {
        let ln_ups = self.ln_upsilon_at(loc);
        let ln_q_ul = ln_ups + self.ln_prefactor_ul - 0.5 * loc.ln_t;
        RateValue {
            upsilon: ln_ups.exp(),
            excitation_cm3_s: self.ln_excitation_from(ln_q_ul, loc).exp(),
            deexcitation_cm3_s: ln_q_ul.exp(),
            flags: self.flags_at(loc),
        }
    }

    /// Rate coefficients at one temperature (K), applying the grid policy.
    pub fn evaluate(&self, t_k: f64, outside: OutsidePolicy) -> Result<RateValue, RuleError> {
        let loc = checked_location(&self.grid, 0, t_k, outside)?;
        Ok(self.evaluate_at(&loc))
    }

    /// Fills rate coefficients for many temperatures (K). `excitation_cm3_s` and
    /// `deexcitation_cm3_s` must have the temperatures' length when their direction is asked for
    /// (and may be empty otherwise); `flags_out` always has it. Values equal [`Self::evaluate`]
    /// bit for bit.
    pub fn evaluate_into(
        &self,
        temperatures_k: &[f64],
        direction: Direction,
        outside: OutsidePolicy,
        excitation_cm3_s: &mut [f64],
        deexcitation_cm3_s: &mut [f64],
        flags_out: &mut [u32],
    ) -> Result<(), RuleError> {
        let n = temperatures_k.len();
        check_len("flags", flags_out.len(), n)?;
        if direction.wants_excitation() {
            check_len("excitation", excitation_cm3_s.len(), n)?;
        }
        if direction.wants_deexcitation() {
            check_len("deexcitation", deexcitation_cm3_s.len(), n)?;
        }
        for (j, &t_k) in temperatures_k.iter().enumerate() {
            let loc = checked_location(&self.grid, j, t_k, outside)?;
            self.write_at(
                &loc,
                direction,
                j,
                excitation_cm3_s,
                deexcitation_cm3_s,
                flags_out,
            );
        }
        Ok(())
    }

    /// Writes the values at `loc` into slot `j` of the output buffers (lengths already checked).
    #[inline]
    pub fn write_at(
        &self,
        loc: &Location,
        direction: Direction,
        j: usize,
        excitation_cm3_s: &mut [f64],
        deexcitation_cm3_s: &mut [f64],
        flags_out: &mut [u32],
    ) {
        let ln_q_ul = self.ln_deexcitation_at(loc);
        if direction.wants_deexcitation() {
            deexcitation_cm3_s[j] = ln_q_ul.exp();
        }
        if direction.wants_excitation() {
            excitation_cm3_s[j] = self.ln_excitation_from(ln_q_ul, loc).exp();
        }
        flags_out[j] = self.flags_at(loc);
    }
}

/// Validates a temperature and locates it, applying the grid policy. `index` names the
/// temperature's position in the caller's request for error messages.
pub fn checked_location(
    grid: &LogGrid,
    index: usize,
    t_k: f64,
    outside: OutsidePolicy,
) -> Result<Location, RuleError> {
    if !t_k.is_finite() || t_k <= 0.0 {
        return Err(RuleError::TemperatureNotPositive { index, value_k: t_k });
    }
    let loc = grid.locate(t_k);
    if loc.side != Side::Inside && outside == OutsidePolicy::Refuse {
        return Err(RuleError::OutsideGrid {
            index,
            value_k: t_k,
            min_k: grid.t_min_k(),
            max_k: grid.t_max_k(),
        });
    }
    Ok(loc)
}

fn check_len(field: &'static str, got: usize, expected: usize) -> Result<(), RuleError> {
    if got == expected {
        Ok(())
    } else {
        Err(RuleError::BufferLength { field, got, expected })
    }
}

fn check_knots(
    header: &TableHeader,
    grid: &LogGrid,
    field: &'static str,
    values: &[f64],
) -> Result<(), RuleError> {
    let bad = |message: String| RuleError::BadTable {
        upper: header.upper,
        lower: header.lower,
        field,
        message,
    };
    if values.len() != grid.knots {
        return Err(bad(format!(
            "{} values for a grid of {} knots",
            values.len(),
            grid.knots
        )));
    }
    if let Some((i, v)) = values.iter().enumerate().find(|(_, v)| !v.is_finite()) {
        return Err(bad(format!("value[{i}] = {v}: must be finite")));
    }
    Ok(())
}

/// Shape-preserving knot slopes for data on a uniform grid of spacing `step` (Fritsch & Carlson
/// 1980, SIAM J. Numer. Anal. 17, 238, with the weighted-harmonic-mean interior slopes of
/// Fritsch & Butland 1984 and the three-point end formula of Moler's `pchip`).
pub fn monotone_slopes(y: &[f64], step: f64) -> Vec<f64> {
    let n = y.len();
    let delta: Vec<f64> = y.windows(2).map(|w| (w[1] - w[0]) / step).collect();
    let mut m = vec![0.0; n];
    if n == 2 {
        m[0] = delta[0];
        m[1] = delta[0];
        return m;
    }
    for k in 1..n - 1 {
        let (a, b) = (delta[k - 1], delta[k]);
        m[k] = if a == 0.0 || b == 0.0 || (a > 0.0) != (b > 0.0) {
            0.0
        } else {
            // Uniform spacing: weights 3h on both sides, so the weighted harmonic mean is 2ab/(a+b).
            2.0 / (1.0 / a + 1.0 / b)
        };
    }
    m[0] = end_slope(delta[0], delta[1]);
    m[n - 1] = end_slope(delta[n - 2], delta[n - 3]);
    m
}

/// Three-point end slope kept shape-preserving (uniform spacing form).
fn end_slope(d0: f64, d1: f64) -> f64 {
    let m = (3.0 * d0 - d1) / 2.0;
    if m == 0.0 || d0 == 0.0 || (m > 0.0) != (d0 > 0.0) {
        0.0
    } else if (d0 > 0.0) != (d1 > 0.0) && m.abs() > 3.0 * d0.abs() {
        3.0 * d0
    } else {
        m
    }
}

/// Per-interval coefficients of the cubic Hermite in the fractional position f (in steps).
fn hermite_coefficients(y: &[f64], slopes: &[f64], step: f64) -> Vec<[f64; 4]> {
    (0..y.len() - 1)
        .map(|i| {
            let (y0, y1) = (y[i], y[i + 1]);
            let (m0, m1) = (slopes[i] * step, slopes[i + 1] * step);
            let dy = y1 - y0;
            [y0, m0, 3.0 * dy - 2.0 * m0 - m1, -2.0 * dy + m0 + m1]
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    fn header() -> TableHeader {
        TableHeader {
            upper: 2,
            lower: 1,
            g_lower: 2.0,
            g_upper: 4.0,
            excitation_energy_k: 2.0e4,
            source_t_min_k: 1e3,
            source_t_max_k: 1e5,
            approximate: false,
        }
    }

    #[test]
    fn grid_from_range_covers_the_range() {
        let g = LogGrid::from_range(1e3, 1e8, 20).unwrap();
        assert_eq!(g.knots(), 101);
        assert_relative_eq!(g.t_max_k(), 1e8, max_relative = 1e-12);
    }

    #[test]
    fn knots_are_reproduced_and_values_stay_between_neighbours() {
        let g = LogGrid::from_range(1e3, 1e6, 4).unwrap();
        let y: Vec<f64> = [0.1, 0.5, 0.4, 0.4, 1.5, 1.6, 3.0, 2.0, 1.0, 0.9, 0.95, 1.0, 1.0]
            .iter()
            .map(|v: &f64| v.ln())
            .collect();
        let t = RateTable::from_knots(header(), g, y.clone()).unwrap();
        for (i, &yi) in y.iter().enumerate() {
            let loc = g.locate(g.temperature_k(i));
            assert_relative_eq!(t.ln_upsilon_at(&loc), yi, epsilon = 1e-12);
        }
        // Monotone-preserving: between two knots the interpolant stays within their values
        // (Fritsch & Carlson 1980, Theorem 2 on the sufficient region).
        for i in 0..y.len() - 1 {
            let (lo, hi) = (y[i].min(y[i + 1]), y[i].max(y[i + 1]));
            for s in 1..50 {
                let x = g.log10_t_min_k() + (i as f64 + s as f64 / 50.0) * g.log10_t_step();
                let v = t.ln_upsilon_at(&g.locate(10f64.powf(x)));
                assert!(
                    v >= lo - 1e-12 && v <= hi + 1e-12,
                    "interval {i}: {v} not in [{lo}, {hi}]"
                );
            }
        }
    }

    #[test]
    fn detailed_balance_holds_in_the_rule() {
        let g = LogGrid::from_range(1e3, 1e6, 10).unwrap();
        let t = RateTable::from_knots(header(), g, vec![0.3; g.knots()]).unwrap();
        let v = t.evaluate(1.234e4, OutsidePolicy::Refuse).unwrap();
        // q_lu / q_ul = (g_u/g_l) exp(-dE/kT): detailed balance (Osterbrock & Ferland 2006, eq. 3.21).
        let expected = 2.0 * (-2.0e4_f64 / 1.234e4).exp();
        assert_relative_eq!(
            v.excitation_cm3_s / v.deexcitation_cm3_s,
            expected,
            max_relative = 1e-12
        );
        // q_ul = 8.629e-6 Upsilon / (g_u sqrt T) (Osterbrock & Ferland 2006, eq. 3.20).
        assert_relative_eq!(
            v.deexcitation_cm3_s,
            8.629e-6 * 0.3f64.exp() / (4.0 * 1.234e4f64.sqrt()),
            max_relative = 1e-4
        );
    }

    #[test]
    fn outside_grid_is_refused_or_flagged() {
        let g = LogGrid::from_range(1e3, 1e6, 10).unwrap();
        let t = RateTable::from_knots(header(), g, vec![0.3; g.knots()]).unwrap();
        let err = t.evaluate(5e2, OutsidePolicy::Refuse).unwrap_err();
        assert!(matches!(err, RuleError::OutsideGrid { .. }));
        assert!(err.to_string().contains("500 K"));
        let v = t.evaluate(5e2, OutsidePolicy::Extrapolate).unwrap();
        assert_eq!(v.flags & flags::OUTSIDE_GRID, flags::OUTSIDE_GRID);
        assert_eq!(v.flags & flags::BEYOND_SOURCE, flags::BEYOND_SOURCE);
        assert!(matches!(
            t.evaluate(f64::NAN, OutsidePolicy::Extrapolate),
            Err(RuleError::TemperatureNotPositive { .. })
        ));
        assert!(t.evaluate(-1.0, OutsidePolicy::Extrapolate).is_err());
        // The grid ends themselves are inside.
        assert_eq!(
            t.evaluate(g.t_max_k(), OutsidePolicy::Refuse).unwrap().flags & flags::OUTSIDE_GRID,
            0
        );
        assert_eq!(
            t.evaluate(g.t_min_k(), OutsidePolicy::Refuse).unwrap().flags & flags::OUTSIDE_GRID,
            0
        );
    }

    #[test]
    fn batched_equals_scalar_bit_for_bit() {
        let g = LogGrid::from_range(1e3, 1e7, 20).unwrap();
        let y: Vec<f64> = (0..g.knots())
            .map(|i| (0.2 + 0.05 * i as f64).sin() * 0.7)
            .collect();
        let t = RateTable::from_knots(header(), g, y).unwrap();
        let temps: Vec<f64> = (0..500).map(|i| 1e3 * 10f64.powf(i as f64 * 0.008)).collect();
        let (mut e, mut d, mut f) = (vec![0.0; 500], vec![0.0; 500], vec![0; 500]);
        t.evaluate_into(
            &temps,
            Direction::Both,
            OutsidePolicy::Refuse,
            &mut e,
            &mut d,
            &mut f,
        )
        .unwrap();
        for (j, &tk) in temps.iter().enumerate() {
            let v = t.evaluate(tk, OutsidePolicy::Refuse).unwrap();
            assert_eq!(v.excitation_cm3_s.to_bits(), e[j].to_bits());
            assert_eq!(v.deexcitation_cm3_s.to_bits(), d[j].to_bits());
            assert_eq!(v.flags, f[j]);
        }
    }

    #[test]
    fn bad_tables_are_refused() {
        let g = LogGrid::from_range(1e3, 1e6, 10).unwrap();
        assert!(RateTable::from_knots(header(), g, vec![0.3; 3]).is_err());
        let mut y = vec![0.3; g.knots()];
        y[4] = f64::NAN;
        assert!(RateTable::from_knots(header(), g, y).is_err());
        let mut h = header();
        h.g_upper = 0.0;
        assert!(RateTable::from_knots(h, g, vec![0.3; g.knots()]).is_err());
        assert!(LogGrid::from_range(-1.0, 1e6, 10).is_err());
        assert!(LogGrid::from_range(1e4, 1e3, 10).is_err());
        assert!(LogGrid::from_range(1e3, 1e4, 0).is_err());
    }
}
