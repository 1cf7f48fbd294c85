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
//!
//! Speed: the exponential and logarithm used here ([`exp`], [`ln`]) are written in plain IEEE
//! arithmetic with no branches and no library calls, so (a) the answer does not depend on the
//! platform's maths library (server and client may run on different systems and still agree bit
//! for bit) and (b) loops over many values compile to SIMD code. The batched entry points
//! ([`RateTable::write_located`], [`RateTable::evaluate_into`]) run such loops, on AVX2 when the
//! processor has it; AVX2 changes only how many values are done at once, never a result bit
//! (no fused multiply-add is used anywhere).

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
    #[error("temperatures[{index}] = {value_k} K: must be finite and > 0")]
    TemperatureNotPositive {
        /// Position in the request.
        index: usize,
        /// Offending value, K.
        value_k: f64,
    },
    /// A temperature outside the grid while extrapolation is refused.
    #[error(
        "temperatures[{index}] = {value_k} K: outside the table grid [{min_k}, {max_k}] K and extrapolation was not allowed"
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
        let ln_t = ln(t_k);
        let (interval, frac, side) = self.position(ln_t);
        Location {
            interval,
            frac,
            side,
            t_k,
            ln_t,
            inv_t: 1.0 / t_k,
        }
    }

    /// Interval, fractional position and side for ln(T/K). Branch-free (selects only), so the
    /// batched locate vectorises; outside the grid the interval is an end interval.
    #[inline(always)]
    fn position(&self, ln_t: f64) -> (usize, f64, Side) {
        let u = (ln_t * LOG10_E - self.log10_t_min_k) * self.inv_step;
        let last = (self.knots - 1) as f64;
        let below = u < -END_SLACK_STEPS;
        let above = u > last + END_SLACK_STEPS;
        let clamped = u.clamp(0.0, last);
        // Truncation equals floor here: clamped >= 0 (and NaN never reaches this point).
        let inside_interval = (clamped as usize).min(self.knots - 2);
        let inside_frac = clamped - inside_interval as f64;
        let above_frac = u - (last - 1.0);
        let interval = if below {
            0
        } else if above {
            self.knots - 2
        } else {
            inside_interval
        };
        let frac = if below {
            u
        } else if above {
            above_frac
        } else {
            inside_frac
        };
        let side = if below {
            Side::Below
        } else if above {
            Side::Above
        } else {
            Side::Inside
        };
        (interval, frac, side)
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
    /// Source range with the relative slack of [`RateTable::flags_at`], K.
    source_lo_k: f64,
    source_hi_k: f64,
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
        let coeffs = hermite_coefficients(&ln_upsilon, &slopes, grid.log10_t_step);
        let ln_prefactor_ul = ln(rate_prefactor_cm3_s_k_half()) - ln(header.g_upper);
        let ln_weight_ratio = ln(header.g_upper) - ln(header.g_lower);
        let base_flags = if header.approximate { flags::APPROXIMATE } else { 0 };
        let source_lo_k = header.source_t_min_k * (1.0 - 1e-12);
        let source_hi_k = header.source_t_max_k * (1.0 + 1e-12);
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
            source_lo_k,
            source_hi_k,
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
        ln_upsilon_cubic(&self.coeffs, loc.interval, loc.frac, loc.side)
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

    /// Fills rate coefficients for many temperatures (K). `excitation_cm3_s` and
    /// `deexcitation_cm3_s` must have the temperatures' length when their direction is asked for
    /// (and may be empty otherwise); `flags_out` always has it. Values equal [`Self::evaluate`]
    /// bit for bit. Temperatures are located and evaluated in blocks by the vectorised kernel.
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
        check_outputs(n, direction, excitation_cm3_s, deexcitation_cm3_s, flags_out)?;
        let mut block = [Location::default(); BLOCK];
        for (start, temps) in (0..n).step_by(BLOCK).zip(temperatures_k.chunks(BLOCK)) {
            check_temperatures(&self.grid, start, temps, outside)?;
            let locs = &mut block[..temps.len()];
            self.grid.locate_into(temps, locs);
            let end = start + temps.len();
            let exc = if direction.wants_excitation() {
                &mut excitation_cm3_s[start..end]
            } else {
                &mut []
            };
            let deexc = if direction.wants_deexcitation() {
                &mut deexcitation_cm3_s[start..end]
            } else {
                &mut []
            };
            self.write_checked(locs, direction, exc, deexc, &mut flags_out[start..end]);
        }
        Ok(())
    }

    /// Writes the values at `loc` into slot `j` of the output buffers (lengths already checked).
    /// For many locations prefer [`Self::write_located`], which gives the same bits faster.
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
            deexcitation_cm3_s[j] = exp(ln_q_ul);
        }
        if direction.wants_excitation() {
            excitation_cm3_s[j] = exp(self.ln_excitation_from(ln_q_ul, loc));
        }
        flags_out[j] = self.flags_at(loc);
    }

    /// Writes the values at every location (already located on this table's grid, e.g. once
    /// for a whole batch of tables) into the output slices, slot `j` for `locations[j]`:
    /// the same bits as [`Self::write_at`] for each, computed by the vectorised kernel.
    /// `excitation_cm3_s` / `deexcitation_cm3_s` must have the locations' length when their
    /// direction is asked for (and may be empty otherwise); `flags_out` always has it.
    pub fn write_located(
        &self,
        locations: &[Location],
        direction: Direction,
        excitation_cm3_s: &mut [f64],
        deexcitation_cm3_s: &mut [f64],
        flags_out: &mut [u32],
    ) -> Result<(), RuleError> {
        check_outputs(
            locations.len(),
            direction,
            excitation_cm3_s,
            deexcitation_cm3_s,
            flags_out,
        )?;
        self.write_checked(
            locations,
            direction,
            excitation_cm3_s,
            deexcitation_cm3_s,
            flags_out,
        );
        Ok(())
    }

    /// [`Self::write_located`] with lengths already checked; picks the widest kernel available.
    fn write_checked(
        &self,
        locations: &[Location],
        direction: Direction,
        excitation_cm3_s: &mut [f64],
        deexcitation_cm3_s: &mut [f64],
        flags_out: &mut [u32],
    ) {
        self.write_checked_as(
            KernelWidth::widest(),
            locations,
            direction,
            excitation_cm3_s,
            deexcitation_cm3_s,
            flags_out,
        );
    }

    /// [`Self::write_checked`] with the kernel compiled for `width` (one the processor has).
    fn write_checked_as(
        &self,
        width: KernelWidth,
        locations: &[Location],
        direction: Direction,
        excitation_cm3_s: &mut [f64],
        deexcitation_cm3_s: &mut [f64],
        flags_out: &mut [u32],
    ) {
        let kernel = Kernel {
            coeffs: &self.coeffs,
            ln_prefactor_ul: self.ln_prefactor_ul,
            ln_weight_ratio: self.ln_weight_ratio,
            excitation_energy_k: self.header.excitation_energy_k,
            base_flags: self.base_flags,
            source_lo_k: self.source_lo_k,
            source_hi_k: self.source_hi_k,
        };
        let out = Outputs {
            excitation: excitation_cm3_s,
            deexcitation: deexcitation_cm3_s,
            flags: flags_out,
        };
        kernel.run_width(width, locations, direction, out);
    }
}

/// Instruction sets a batched kernel can be compiled for. Every width does the same IEEE
/// operations in the same order (no fused multiply-add), so all give the same bits; wider
/// ones only do more values per instruction.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum KernelWidth {
    /// Whatever the compilation target guarantees (SSE2 on x86_64).
    Portable,
    /// AVX2: the cubic by explicit 4-lane instructions, the exponentials 4 lanes wide.
    #[cfg(target_arch = "x86_64")]
    Avx2,
    /// AVX-512F: the cubic as for AVX2, the exponentials 8 lanes wide.
    #[cfg(target_arch = "x86_64")]
    Avx512,
}

impl KernelWidth {
    /// Every width this processor can run, narrowest first.
    #[cfg(test)]
    fn available() -> Vec<Self> {
        #[allow(unused_mut)] // only x86_64 has more than one width
        let mut widths = vec![Self::Portable];
        #[cfg(target_arch = "x86_64")]
        {
            if std::arch::is_x86_feature_detected!("avx2") {
                widths.push(Self::Avx2);
                if std::arch::is_x86_feature_detected!("avx512f") {
                    widths.push(Self::Avx512);
                }
            }
        }
        widths
    }

    /// Replaces every value x by [`exp`]`(x)`, compiled for this width (same bits at every width).
    fn exp_in_place(self, values: &mut [f64]) {
        #[inline(always)]
        fn each(values: &mut [f64]) {
            for v in values {
                *v = exp(*v);
            }
        }
        #[cfg(target_arch = "x86_64")]
        #[target_feature(enable = "avx2")]
        unsafe fn each_avx2(values: &mut [f64]) {
            each(values);
        }
        #[cfg(target_arch = "x86_64")]
        #[target_feature(enable = "avx2,avx512f")]
        unsafe fn each_avx512(values: &mut [f64]) {
            each(values);
        }
        match self {
            Self::Portable => each(values),
            // SAFETY: a width is only offered when the processor reports its instruction sets.
            #[cfg(target_arch = "x86_64")]
            Self::Avx2 => unsafe { each_avx2(values) },
            // SAFETY: as above.
            #[cfg(target_arch = "x86_64")]
            Self::Avx512 => unsafe { each_avx512(values) },
        }
    }

    /// The widest width this processor can run (detection is cached by the standard library).
    #[inline]
    fn widest() -> Self {
        #[cfg(target_arch = "x86_64")]
        {
            if std::arch::is_x86_feature_detected!("avx2") {
                if std::arch::is_x86_feature_detected!("avx512f") {
                    return Self::Avx512;
                }
                return Self::Avx2;
            }
        }
        Self::Portable
    }
}

/// Values per parallel task of [`write_rows`]: batches smaller than this run on the calling
/// thread (a hand-off to the thread pool costs more than it saves below it).
const PARALLEL_MIN_VALUES: usize = 1 << 16;

/// Evaluates many tables of one grid at the same located temperatures into transition-major
/// buffers: row `r` (slots `r * n .. (r + 1) * n`, `n = locations.len()`) holds `tables[r]`,
/// with the same bits as [`RateTable::write_located`] on its own. Runs on the calling thread
/// only (no thread pool: a library inside an MPI rank must not start threads it was not asked
/// for); [`write_rows_parallel`] spreads large batches over rayon's pool with the same bits.
/// Buffer lengths are `tables.len() * n` for each wanted direction (an unwanted one may be
/// empty) and for `flags_out`.
pub fn write_rows(
    tables: &[&RateTable],
    locations: &[Location],
    direction: Direction,
    excitation_cm3_s: &mut [f64],
    deexcitation_cm3_s: &mut [f64],
    flags_out: &mut [u32],
) -> Result<(), RuleError> {
    write_rows_on(
        false,
        tables,
        locations,
        direction,
        excitation_cm3_s,
        deexcitation_cm3_s,
        flags_out,
    )
}

/// As [`write_rows`], but batches of more than [`PARALLEL_MIN_VALUES`] values are spread over
/// rayon's global thread pool by rows (opt-in: the server uses it, a client only when asked).
/// Only which thread computes a row changes, so the bits are those of [`write_rows`].
pub fn write_rows_parallel(
    tables: &[&RateTable],
    locations: &[Location],
    direction: Direction,
    excitation_cm3_s: &mut [f64],
    deexcitation_cm3_s: &mut [f64],
    flags_out: &mut [u32],
) -> Result<(), RuleError> {
    write_rows_on(
        true,
        tables,
        locations,
        direction,
        excitation_cm3_s,
        deexcitation_cm3_s,
        flags_out,
    )
}

fn write_rows_on(
    parallel: bool,
    tables: &[&RateTable],
    locations: &[Location],
    direction: Direction,
    excitation_cm3_s: &mut [f64],
    deexcitation_cm3_s: &mut [f64],
    flags_out: &mut [u32],
) -> Result<(), RuleError> {
    use rayon::prelude::*;
    let n = locations.len();
    let total = tables.len().saturating_mul(n);
    check_outputs(total, direction, excitation_cm3_s, deexcitation_cm3_s, flags_out)?;
    check_same_grid(tables.iter().map(|t| &**t))?;
    if n == 0 {
        return Ok(());
    }
    let count = tables.len();
    let exc_rows = row_slices(excitation_cm3_s, n, count, direction.wants_excitation());
    let deexc_rows = row_slices(deexcitation_cm3_s, n, count, direction.wants_deexcitation());
    if !parallel || total < PARALLEL_MIN_VALUES {
        // On the calling thread (asked for, or a hand-off to the pool would cost more).
        for (((t, e), d), f) in tables
            .iter()
            .zip(exc_rows)
            .zip(deexc_rows)
            .zip(flags_out.chunks_mut(n))
        {
            t.write_checked(locations, direction, e, d, f);
        }
    } else {
        tables
            .par_iter()
            .zip(exc_rows)
            .zip(deexc_rows)
            .zip(flags_out.par_chunks_mut(n))
            .with_min_len(PARALLEL_MIN_VALUES.div_ceil(n))
            .for_each(|(((t, e), d), f)| t.write_checked(locations, direction, e, d, f));
    }
    Ok(())
}

/// Evaluates many tables of one grid at one located temperature: slot `r` of each buffer holds
/// `tables[r]`, with the same bits as [`RateTable::write_at`] for each. The logarithms are
/// worked out table by table first (so many coefficient fetches are in flight at once), then
/// the exponentials run over the whole buffer with the widest kernel. Buffer lengths are
/// `tables.len()` for each wanted direction (an unwanted one may be empty) and for `flags_out`.
pub fn write_tables_at(
    tables: &[RateTable],
    location: &Location,
    direction: Direction,
    excitation_cm3_s: &mut [f64],
    deexcitation_cm3_s: &mut [f64],
    flags_out: &mut [u32],
) -> Result<(), RuleError> {
    check_outputs(
        tables.len(),
        direction,
        excitation_cm3_s,
        deexcitation_cm3_s,
        flags_out,
    )?;
    check_same_grid(tables.iter())?;
    let (exc, deexc) = (direction.wants_excitation(), direction.wants_deexcitation());
    for (r, t) in tables.iter().enumerate() {
        let ln_q_ul = t.ln_deexcitation_at(location);
        if deexc {
            deexcitation_cm3_s[r] = ln_q_ul;
        }
        if exc {
            excitation_cm3_s[r] = t.ln_excitation_from(ln_q_ul, location);
        }
        flags_out[r] = t.flags_at(location);
    }
    let width = KernelWidth::widest();
    if deexc {
        width.exp_in_place(deexcitation_cm3_s);
    }
    if exc {
        width.exp_in_place(excitation_cm3_s);
    }
    Ok(())
}

/// Refuses a batch whose tables do not all share the first table's grid, naming the first
/// table that differs.
fn check_same_grid<'a>(mut tables: impl Iterator<Item = &'a RateTable>) -> Result<(), RuleError> {
    let Some(first) = tables.next() else {
        return Ok(());
    };
    match tables.find(|t| t.grid != first.grid) {
        Some(other) => Err(RuleError::BadTable {
            upper: other.header.upper,
            lower: other.header.lower,
            field: "grid",
            message: "differs from the grid of the other tables in the batch".into(),
        }),
        None => Ok(()),
    }
}

/// `count` rows of length `n` of `buffer`, or `count` empty slices for an unwanted direction.
fn row_slices(buffer: &mut [f64], n: usize, count: usize, wanted: bool) -> Vec<&mut [f64]> {
    if wanted {
        buffer.chunks_mut(n).collect()
    } else {
        (0..count).map(|_| <&mut [f64]>::default()).collect()
    }
}

/// Temperatures per block of the batched kernels (sized to stay in L1 cache).
const BLOCK: usize = 256;

/// Output slices of one kernel call, equal lengths per wanted direction.
struct Outputs<'a> {
    excitation: &'a mut [f64],
    deexcitation: &'a mut [f64],
    flags: &'a mut [u32],
}

/// What the batched kernel needs of one table, copied out so the loop reads locals.
#[derive(Clone, Copy)]
struct Kernel<'a> {
    coeffs: &'a [[f64; 4]],
    ln_prefactor_ul: f64,
    ln_weight_ratio: f64,
    excitation_energy_k: f64,
    base_flags: u32,
    source_lo_k: f64,
    source_hi_k: f64,
}

impl Kernel<'_> {
    /// The kernel compiled for AVX2, with the cubic done four values at a time by explicit
    /// AVX instructions (the same operations in the same order as the scalar rule, so the
    /// same bits; no fused multiply-add).
    #[cfg(target_arch = "x86_64")]
    #[target_feature(enable = "avx2")]
    unsafe fn run_avx2(self, locations: &[Location], direction: Direction, out: Outputs<'_>) {
        match direction {
            Direction::Deexcitation => self.lanes::<false, true, true>(locations, out),
            Direction::Excitation => self.lanes::<true, false, true>(locations, out),
            Direction::Both => self.lanes::<true, true, true>(locations, out),
        }
    }

    /// The same kernel compiled for AVX-512F (and AVX2, for the explicit cubic): the
    /// exponentials run eight lanes wide, with the same operations, so the same bits.
    #[cfg(target_arch = "x86_64")]
    #[target_feature(enable = "avx2,avx512f")]
    unsafe fn run_avx512(self, locations: &[Location], direction: Direction, out: Outputs<'_>) {
        match direction {
            Direction::Deexcitation => self.lanes::<false, true, true>(locations, out),
            Direction::Excitation => self.lanes::<true, false, true>(locations, out),
            Direction::Both => self.lanes::<true, true, true>(locations, out),
        }
    }

    /// Runs the kernel compiled for `width`, which must be one of [`KernelWidth::available`].
    fn run_width(self, width: KernelWidth, locations: &[Location], direction: Direction, out: Outputs<'_>) {
        match width {
            KernelWidth::Portable => self.run(locations, direction, out),
            // SAFETY: `width` comes from KernelWidth::widest or ::available, which offer a
            // width only when the processor reports its instruction sets.
            #[cfg(target_arch = "x86_64")]
            KernelWidth::Avx2 => unsafe { self.run_avx2(locations, direction, out) },
            // SAFETY: as above.
            #[cfg(target_arch = "x86_64")]
            KernelWidth::Avx512 => unsafe { self.run_avx512(locations, direction, out) },
        }
    }

    #[inline(always)]
    fn run(self, locations: &[Location], direction: Direction, out: Outputs<'_>) {
        match direction {
            Direction::Deexcitation => self.lanes::<false, true, false>(locations, out),
            Direction::Excitation => self.lanes::<true, false, false>(locations, out),
            Direction::Both => self.lanes::<true, true, false>(locations, out),
        }
    }

    /// Blocks of locations in two passes: the cubic and the flags per value, then the
    /// exponentials over contiguous blocks (branch-free, so they vectorise). Each step is the
    /// scalar rule's arithmetic in the same order, so every value equals `RateTable::write_at`'s.
    /// `AVX` is true only when called from [`Self::run_avx2`] or [`Self::run_avx512`].
    #[inline(always)]
    fn lanes<const EXC: bool, const DEEXC: bool, const AVX: bool>(
        self,
        locations: &[Location],
        out: Outputs<'_>,
    ) {
        let n = locations.len();
        let flags = &mut out.flags[..n];
        let exc: &mut [f64] = if EXC { &mut out.excitation[..n] } else { &mut [] };
        let deexc: &mut [f64] = if DEEXC {
            &mut out.deexcitation[..n]
        } else {
            &mut []
        };
        let mut ln_q_ul = [0.0; BLOCK];
        let mut ln_q_lu = [0.0; BLOCK];
        // A table has at least one interval (two knots); saying so lets the compiler drop the
        // bounds check on the coefficient lookup.
        if self.coeffs.is_empty() {
            return;
        }
        for (start, block) in (0..n).step_by(BLOCK).zip(locations.chunks(BLOCK)) {
            let m = block.len();
            let end = start + m;
            let mut done = 0;
            #[cfg(target_arch = "x86_64")]
            if AVX {
                // SAFETY: AVX is true only inside run_avx2 and run_avx512, which run only on
                // processors with AVX2.
                done = unsafe { self.cubic_avx::<EXC>(block, &mut ln_q_ul, &mut ln_q_lu) };
            }
            for (k, loc) in block.iter().enumerate().skip(done) {
                let ln_ups = ln_upsilon_cubic(self.coeffs, loc.interval, loc.frac, loc.side);
                let l = ln_ups + self.ln_prefactor_ul - 0.5 * loc.ln_t;
                ln_q_ul[k] = l;
                if EXC {
                    ln_q_lu[k] = l + self.ln_weight_ratio - self.excitation_energy_k * loc.inv_t;
                }
            }
            for (loc, flag) in block.iter().zip(&mut flags[start..end]) {
                *flag = value_flags(
                    self.base_flags,
                    loc.side,
                    loc.t_k,
                    self.source_lo_k,
                    self.source_hi_k,
                );
            }
            if DEEXC {
                for (o, &l) in deexc[start..end].iter_mut().zip(&ln_q_ul[..m]) {
                    *o = exp(l);
                }
            }
            if EXC {
                for (o, &l) in exc[start..end].iter_mut().zip(&ln_q_lu[..m]) {
                    *o = exp(l);
                }
            }
        }
    }

    /// ln q_ul (and with `EXC` ln q_lu) for the first multiple of four locations of `block`,
    /// four at a time: the coefficient rows are loaded whole and transposed, then the cubic,
    /// its continuations and the selects run as in [`ln_upsilon_cubic`], operation for
    /// operation. Returns how many locations were done.
    #[cfg(target_arch = "x86_64")]
    #[target_feature(enable = "avx2")]
    #[inline]
    unsafe fn cubic_avx<const EXC: bool>(
        &self,
        block: &[Location],
        ln_q_ul: &mut [f64; BLOCK],
        ln_q_lu: &mut [f64; BLOCK],
    ) -> usize {
        use std::arch::x86_64::*;
        let last = self.coeffs.len() - 1;
        let row = |loc: &Location| {
            let c = &self.coeffs[loc.interval.min(last)];
            // SAFETY: `c` is four contiguous f64.
            unsafe { _mm256_loadu_pd(c.as_ptr()) }
        };
        // The four sides as bytes widened to 64-bit lanes, compared with one side's code.
        let sides = |l: &[Location]| {
            let code = |loc: &Location| i32::from(loc.side as u8);
            let packed = code(&l[0]) | code(&l[1]) << 8 | code(&l[2]) << 16 | code(&l[3]) << 24;
            _mm256_cvtepu8_epi64(_mm_cvtsi32_si128(packed))
        };
        let below_code = _mm256_set1_epi64x(i64::from(Side::Below as u8));
        let inside_code = _mm256_set1_epi64x(i64::from(Side::Inside as u8));
        let one = _mm256_set1_pd(1.0);
        let two = _mm256_set1_pd(2.0);
        let three = _mm256_set1_pd(3.0);
        let half = _mm256_set1_pd(0.5);
        let prefactor = _mm256_set1_pd(self.ln_prefactor_ul);
        let ratio = _mm256_set1_pd(self.ln_weight_ratio);
        let energy = _mm256_set1_pd(self.excitation_energy_k);
        let quads = block.len() / 4;
        for (q, l) in block.chunks_exact(4).enumerate() {
            let (r0, r1, r2, r3) = (row(&l[0]), row(&l[1]), row(&l[2]), row(&l[3]));
            let t0 = _mm256_unpacklo_pd(r0, r1);
            let t1 = _mm256_unpackhi_pd(r0, r1);
            let t2 = _mm256_unpacklo_pd(r2, r3);
            let t3 = _mm256_unpackhi_pd(r2, r3);
            let a = _mm256_permute2f128_pd::<0x20>(t0, t2);
            let b = _mm256_permute2f128_pd::<0x20>(t1, t3);
            let c = _mm256_permute2f128_pd::<0x31>(t0, t2);
            let d = _mm256_permute2f128_pd::<0x31>(t1, t3);
            let f = _mm256_set_pd(l[3].frac, l[2].frac, l[1].frac, l[0].frac);
            // a + f (b + f (c + f d))
            let inside = _mm256_add_pd(
                a,
                _mm256_mul_pd(
                    f,
                    _mm256_add_pd(b, _mm256_mul_pd(f, _mm256_add_pd(c, _mm256_mul_pd(f, d)))),
                ),
            );
            // a + f b
            let below = _mm256_add_pd(a, _mm256_mul_pd(f, b));
            // (a + b + c + d) + (f - 1) (b + 2c + 3d)
            let end_value = _mm256_add_pd(_mm256_add_pd(_mm256_add_pd(a, b), c), d);
            let end_slope = _mm256_add_pd(_mm256_add_pd(b, _mm256_mul_pd(two, c)), _mm256_mul_pd(three, d));
            let above = _mm256_add_pd(end_value, _mm256_mul_pd(_mm256_sub_pd(f, one), end_slope));
            let side = sides(l);
            let is_below = _mm256_castsi256_pd(_mm256_cmpeq_epi64(side, below_code));
            let is_inside = _mm256_castsi256_pd(_mm256_cmpeq_epi64(side, inside_code));
            let outside = _mm256_blendv_pd(above, below, is_below);
            let ln_ups = _mm256_blendv_pd(outside, inside, is_inside);
            let ln_t = _mm256_set_pd(l[3].ln_t, l[2].ln_t, l[1].ln_t, l[0].ln_t);
            let lq = _mm256_sub_pd(_mm256_add_pd(ln_ups, prefactor), _mm256_mul_pd(half, ln_t));
            // SAFETY: 4 q + 4 <= block.len() <= BLOCK, so the four slots exist.
            unsafe { _mm256_storeu_pd(ln_q_ul.as_mut_ptr().add(4 * q), lq) };
            if EXC {
                let inv_t = _mm256_set_pd(l[3].inv_t, l[2].inv_t, l[1].inv_t, l[0].inv_t);
                let le = _mm256_sub_pd(_mm256_add_pd(lq, ratio), _mm256_mul_pd(energy, inv_t));
                // SAFETY: as above.
                unsafe { _mm256_storeu_pd(ln_q_lu.as_mut_ptr().add(4 * q), le) };
            }
        }
        4 * quads
    }
}

impl Default for Location {
    fn default() -> Self {
        Self {
            interval: 0,
            frac: 0.0,
            side: Side::Inside,
            t_k: 1.0,
            ln_t: 0.0,
            inv_t: 1.0,
        }
    }
}

impl LogGrid {
    /// Locates every temperature (K, finite and > 0) into `out` (same length): the same
    /// [`Location`]s as [`Self::locate`], computed in one vectorisable pass.
    pub fn locate_into(&self, temperatures_k: &[f64], out: &mut [Location]) {
        for (loc, &t_k) in out.iter_mut().zip(temperatures_k) {
            *loc = self.locate(t_k);
        }
    }
}

/// ln Upsilon from one table's per-interval coefficients: the cubic inside the grid, linear
/// continuation from the end knots outside. Select-based and free of bounds panics.
#[inline(always)]
fn ln_upsilon_cubic(coeffs: &[[f64; 4]], interval: usize, f: f64, side: Side) -> f64 {
    let [a, b, c, d] = coeffs[interval.min(coeffs.len() - 1)];
    let inside = a + f * (b + f * (c + f * d));
    // Linear continuation from the first knot with its slope (b is the slope per step).
    let below = a + f * b;
    // Linear continuation from the last knot: value a+b+c+d, slope b+2c+3d per step.
    let above = (a + b + c + d) + (f - 1.0) * (b + 2.0 * c + 3.0 * d);
    // Selects rather than a match, so loops over many locations need no branches.
    let outside = if side == Side::Below { below } else { above };
    if side == Side::Inside { inside } else { outside }
}

/// Flag bits of one value: the table's own, OUTSIDE_GRID off the grid, BEYOND_SOURCE outside
/// the source range (`lo_k`, `hi_k` include the relative slack).
#[inline(always)]
fn value_flags(base: u32, side: Side, t_k: f64, lo_k: f64, hi_k: f64) -> u32 {
    let outside = if side != Side::Inside {
        flags::OUTSIDE_GRID
    } else {
        0
    };
    let beyond = if t_k < lo_k || t_k > hi_k {
        flags::BEYOND_SOURCE
    } else {
        0
    };
    base | outside | beyond
}

/// Checks output lengths for `n` values in `direction`.
fn check_outputs(
    n: usize,
    direction: Direction,
    excitation_cm3_s: &[f64],
    deexcitation_cm3_s: &[f64],
    flags_out: &[u32],
) -> Result<(), RuleError> {
    check_len("flags", flags_out.len(), n)?;
    if direction.wants_excitation() {
        check_len("excitation", excitation_cm3_s.len(), n)?;
    }
    if direction.wants_deexcitation() {
        check_len("deexcitation", deexcitation_cm3_s.len(), n)?;
    }
    Ok(())
}

/// Validates a block of temperatures starting at request position `start` under the grid
/// policy, reporting the first bad one exactly as [`checked_location`] would.
fn check_temperatures(
    grid: &LogGrid,
    start: usize,
    temps: &[f64],
    outside: OutsidePolicy,
) -> Result<(), RuleError> {
    let (lo, hi) = (grid.t_min_k(), grid.t_max_k());
    let all_fine = temps.iter().all(|&t| t.is_finite() && t > 0.0)
        && (outside == OutsidePolicy::Extrapolate || temps.iter().all(|&t| t >= lo && t <= hi));
    if all_fine {
        return Ok(());
    }
    for (k, &t) in temps.iter().enumerate() {
        checked_location(grid, start + k, t, outside)?;
    }
    Ok(())
}

/// e^x in plain IEEE double arithmetic: the same bits on every platform and compiler target,
/// and no branches, so loops over it vectorise. Relative error below 1 ulp in the tests
/// against the platform's maths library; overflows to +inf above ln(f64::MAX), underflows
/// through subnormals to 0, and passes NaN through.
///
/// Method (Cody & Waite 1980 argument reduction): x = k ln 2 + r with |r| <= ln 2 / 2, with
/// ln 2 split into a part whose products with k are exact and a small remainder; e^r by its
/// Taylor polynomial to degree 13 (truncation below 1e-17 relative); then 2^k applied as two
/// exact powers of two so results down to the smallest subnormal come out right.
#[inline(always)]
pub fn exp(x: f64) -> f64 {
    const LN2_HI: f64 = 0.6931471803691238; // low 21 mantissa bits zero
    const LN2_LO: f64 = 1.9082149292705877e-10; // ln 2 - LN2_HI
    const INV_LN2: f64 = std::f64::consts::LOG2_E;
    // 1.5 * 2^52: adding it rounds a value below 2^51 to an integer held in the low mantissa bits.
    const SHIFT: f64 = 6_755_399_441_055_744.0;
    // Taylor coefficients 1/n!, n = 2..13 (rounded once, at compile time).
    const C2: f64 = 1.0 / 2.0;
    const C3: f64 = C2 / 3.0;
    const C4: f64 = C3 / 4.0;
    const C5: f64 = C4 / 5.0;
    const C6: f64 = C5 / 6.0;
    const C7: f64 = C6 / 7.0;
    const C8: f64 = C7 / 8.0;
    const C9: f64 = C8 / 9.0;
    const C10: f64 = C9 / 10.0;
    const C11: f64 = C10 / 11.0;
    const C12: f64 = C11 / 12.0;
    const C13: f64 = C12 / 13.0;
    // Beyond these e^x is +inf or 0 anyway; clamping keeps k in range (NaN passes through).
    let x = x.clamp(-746.0, 710.0);
    let shifted = x * INV_LN2 + SHIFT;
    let k = shifted.to_bits() as i64 - SHIFT.to_bits() as i64;
    let kf = shifted - SHIFT;
    let hi = x - kf * LN2_HI;
    let r = hi - kf * LN2_LO;
    let q = C2
        + r * (C3
            + r * (C4
                + r * (C5
                    + r * (C6
                        + r * (C7 + r * (C8 + r * (C9 + r * (C10 + r * (C11 + r * (C12 + r * C13))))))))));
    let p = 1.0 + (r + (r * r) * q);
    // 2^k = 2^k1 * 2^k2 with both halves normal for k in [-1076, 1024]: k1 = floor(k / 2)
    // taken with a logical shift of the positive k + 2048 (cheaper in SIMD than an
    // arithmetic shift), k2 = k - k1.
    let k1 = (((k + 2048) as u64) >> 1) as i64 - 1024;
    let k2 = k - k1;
    let s1 = f64::from_bits(((k1 + 1023) as u64) << 52);
    let s2 = f64::from_bits(((k2 + 1023) as u64) << 52);
    p * s1 * s2
}

/// ln x in plain IEEE double arithmetic: the same bits on every platform, no branches, so it
/// vectorises. Error below 1 ulp in the tests against the platform's maths library. ln(0) =
/// -inf, ln(+inf) = +inf, negative or NaN input gives NaN; subnormal input is handled.
///
/// Method: x = 2^k (1 + f) with 1 + f in [sqrt(2)/2, sqrt(2)); with s = f / (2 + f),
/// ln(1 + f) = 2 atanh(s) = f - f^2/2 + s (f^2/2 + R(s^2)), R the odd atanh series beyond its
/// first term as a degree-7 polynomial in s^2 whose coefficients are the published minimax
/// fit of the 4.3 BSD / Sun freely distributable maths library (error below 2^-58.45 on the
/// interval, from its documentation).
#[inline(always)]
pub fn ln(x: f64) -> f64 {
    const LN2_HI: f64 = 0.6931471803691238;
    const LN2_LO: f64 = 1.9082149292705877e-10;
    const LG1: f64 = 0.6666666666666735;
    const LG2: f64 = 0.3999999999940942;
    const LG3: f64 = 0.2857142874366239;
    const LG4: f64 = 0.22222198432149784;
    const LG5: f64 = 0.1818357216161805;
    const LG6: f64 = 0.15313837699209373;
    const LG7: f64 = 0.14798198605116586;
    const TWO_54: f64 = 18_014_398_509_481_984.0;
    // Subnormals are scaled into the normal range first.
    let subnormal = x < f64::MIN_POSITIVE;
    let scaled = if subnormal { x * TWO_54 } else { x };
    let bits = scaled.to_bits();
    // Move the mantissa into [sqrt(2)/2, sqrt(2)) and count the exponent k accordingly
    // (0x3fe6a09e is the high word of sqrt(2)/2).
    let high = (bits >> 32) + (0x3ff0_0000 - 0x3fe6_a09e);
    let k = (high >> 20) as i64 - 0x3ff - if subnormal { 54 } else { 0 };
    let high = (high & 0x000f_ffff) + 0x3fe6_a09e;
    let m = f64::from_bits((high << 32) | (bits & 0xffff_ffff));
    let f = m - 1.0;
    let hfsq = 0.5 * f * f;
    let s = f / (2.0 + f);
    let z = s * s;
    let w = z * z;
    let t1 = w * (LG2 + w * (LG4 + w * LG6));
    let t2 = z * (LG1 + w * (LG3 + w * (LG5 + w * LG7)));
    let r = t2 + t1;
    let dk = k as f64;
    let y = s * (hfsq + r) + dk * LN2_LO - hfsq + f + dk * LN2_HI;
    if x > 0.0 && x < f64::INFINITY {
        y
    } else if x == 0.0 {
        f64::NEG_INFINITY
    } else if x == f64::INFINITY {
        x
    } else {
        f64::NAN
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

    /// Distance in units in the last place between two finite doubles of the same sign.
    /// The bit patterns of a slice, for exact comparisons with readable failure output.
    fn bits(v: &[f64]) -> Vec<u64> {
        v.iter().map(|x| x.to_bits()).collect()
    }

    fn ulps(a: f64, b: f64) -> u64 {
        (a.to_bits() as i64 - b.to_bits() as i64).unsigned_abs()
    }

    /// A deterministic spread of doubles in [lo, hi] (Numerical Recipes LCG; no rand needed).
    fn spread(n: usize, lo: f64, hi: f64) -> impl Iterator<Item = f64> {
        let mut state = 12345u64;
        (0..n).map(move |_| {
            state = state
                .wrapping_mul(6364136223846793005)
                .wrapping_add(1442695040888963407);
            lo + (hi - lo) * ((state >> 11) as f64 / (1u64 << 53) as f64)
        })
    }

    #[test]
    fn exp_agrees_with_the_platform_library_to_one_ulp() {
        // Reference: the platform maths library's exp (glibc's is correctly rounded in nearly
        // all cases, from memory), an implementation independent of ours. Ours is within 1 ulp.
        let mut worst = 0;
        for x in spread(400_000, -40.0, 5.0).chain(spread(200_000, -745.0, 709.7)) {
            let (ours, theirs) = (exp(x), x.exp());
            if theirs >= f64::MIN_POSITIVE {
                worst = worst.max(ulps(ours, theirs));
            } else {
                // Subnormal results: absolute error within one subnormal step.
                assert!((ours - theirs).abs() <= 5e-324, "exp({x}) = {ours} vs {theirs}");
            }
        }
        assert!(worst <= 1, "worst exp error {worst} ulp");
        // Exact and limiting cases (IEEE 754 special values; e^0 = 1 exactly).
        assert_eq!(exp(0.0), 1.0);
        assert_eq!(exp(710.0), f64::INFINITY);
        assert_eq!(exp(f64::INFINITY), f64::INFINITY);
        assert_eq!(exp(-746.0), 0.0);
        assert_eq!(exp(f64::NEG_INFINITY), 0.0);
        assert!(exp(f64::NAN).is_nan());
        assert!(exp(709.7).is_finite());
        assert!(exp(-744.0) > 0.0);
    }

    #[test]
    fn ln_agrees_with_the_platform_library_to_one_ulp() {
        // Reference: the platform maths library's ln, independent of ours.
        let mut worst = 0;
        let samples = spread(300_000, -30.0, 30.0)
            .map(|e| 10f64.powf(e))
            .chain(spread(200_000, 0.5, 2.0))
            .chain([
                1.0,
                2.0,
                10.0,
                f64::MAX,
                f64::MIN_POSITIVE,
                5e-324,
                1e-310,
                1.0 + f64::EPSILON,
            ]);
        for x in samples {
            let (ours, theirs) = (ln(x), x.ln());
            if theirs == 0.0 {
                assert_eq!(ours, 0.0);
            } else {
                worst = worst.max(ulps(ours, theirs));
            }
        }
        assert!(worst <= 1, "worst ln error {worst} ulp");
        assert_eq!(ln(0.0), f64::NEG_INFINITY);
        assert_eq!(ln(f64::INFINITY), f64::INFINITY);
        assert!(ln(-1.0).is_nan() && ln(f64::NAN).is_nan());
    }

    /// `count` tables on grid `g` with different shapes, energies and flags (invented).
    fn varied_tables(g: LogGrid, count: u32) -> Vec<RateTable> {
        (0..count)
            .map(|k| {
                let mut h = header();
                h.upper = 2 + k;
                h.approximate = k % 7 == 0;
                h.excitation_energy_k = 1.0e3 * f64::from(1 + k % 40);
                let y = (0..g.knots())
                    .map(|i| (0.3 * i as f64 + 0.1 * f64::from(k)).cos() - 1.0)
                    .collect();
                RateTable::from_knots(h, g, y).unwrap()
            })
            .collect()
    }

    #[test]
    fn many_tables_equal_one_table_at_a_time_bit_for_bit() {
        // The contract (DESIGN.md "One evaluation rule"): the many-table entry point, on the
        // calling thread (small batches) and spread over threads (large ones), gives each row
        // the same bits as that table alone.
        let g = LogGrid::from_range(1e3, 1e7, 20).unwrap();
        let tables = varied_tables(g, 300);
        let refs: Vec<&RateTable> = tables.iter().collect();
        for (rows, n) in [(3usize, 5usize), (300, 256)] {
            let temps: Vec<f64> = spread(n, 2.5, 7.5).map(|e| 10f64.powf(e)).collect();
            let locs: Vec<Location> = temps.iter().map(|&t| g.locate(t)).collect();
            for dir in [Direction::Both, Direction::Excitation, Direction::Deexcitation] {
                let total = rows * n;
                let sized = |wanted: bool| vec![0.0; if wanted { total } else { 0 }];
                let (mut e, mut d, mut f) = (
                    sized(dir.wants_excitation()),
                    sized(dir.wants_deexcitation()),
                    vec![0u32; total],
                );
                write_rows(&refs[..rows], &locs, dir, &mut e, &mut d, &mut f).unwrap();
                // The pool path (used above PARALLEL_MIN_VALUES values: the 300 x 256 case)
                // gives the same bits as the calling-thread path.
                let (mut ep, mut dp, mut fp) = (e.clone(), d.clone(), f.clone());
                ep.fill(0.0);
                dp.fill(0.0);
                fp.fill(0);
                write_rows_parallel(&refs[..rows], &locs, dir, &mut ep, &mut dp, &mut fp).unwrap();
                assert_eq!(bits(&ep), bits(&e));
                assert_eq!(bits(&dp), bits(&d));
                assert_eq!(fp, f);
                for (r, t) in refs[..rows].iter().enumerate() {
                    let (mut e1, mut d1, mut f1) = (vec![0.0; n], vec![0.0; n], vec![0u32; n]);
                    t.write_located(&locs, dir, &mut e1, &mut d1, &mut f1).unwrap();
                    let span = r * n..(r + 1) * n;
                    if dir.wants_excitation() {
                        assert_eq!(bits(&e[span.clone()]), bits(&e1));
                    }
                    if dir.wants_deexcitation() {
                        assert_eq!(bits(&d[span.clone()]), bits(&d1));
                    }
                    assert_eq!(&f[span], &f1[..]);
                }
            }
        }
        // Tables on another grid, and buffers of the wrong size, are refused with a message.
        let coarse = LogGrid::from_range(1e3, 1e7, 10).unwrap();
        let other = RateTable::from_knots(header(), coarse, vec![0.0; coarse.knots()]).unwrap();
        let locs = [g.locate(1e4)];
        let err = write_rows(
            &[&tables[0], &other],
            &locs,
            Direction::Deexcitation,
            &mut [],
            &mut [0.0; 2],
            &mut [0; 2],
        )
        .unwrap_err();
        assert_eq!(
            err.to_string(),
            "table 2-1 grid: differs from the grid of the other tables in the batch"
        );
        let err = write_rows(
            &refs[..2],
            &locs,
            Direction::Deexcitation,
            &mut [],
            &mut [0.0; 1],
            &mut [0; 2],
        )
        .unwrap_err();
        assert_eq!(
            err.to_string(),
            "output buffer deexcitation has length 1, expected 2"
        );
    }

    #[test]
    fn many_tables_at_one_temperature_equal_write_at_bit_for_bit() {
        // The contract (DESIGN.md "One evaluation rule"): every path gives the same bits.
        // Temperatures below, inside and above the grid cover every select.
        let g = LogGrid::from_range(1e3, 1e7, 20).unwrap();
        let tables = varied_tables(g, 257);
        let n = tables.len();
        for t_k in [300.0, 1e3, 2.2e4, 9.9e6, 1e7, 4e8] {
            let loc = g.locate(t_k);
            for dir in [Direction::Both, Direction::Excitation, Direction::Deexcitation] {
                let (mut e, mut d, mut f) = (vec![0.0; n], vec![0.0; n], vec![0; n]);
                write_tables_at(&tables, &loc, dir, &mut e, &mut d, &mut f).unwrap();
                let (mut e1, mut d1, mut f1) = (vec![0.0; n], vec![0.0; n], vec![0; n]);
                for (r, t) in tables.iter().enumerate() {
                    t.write_at(&loc, dir, r, &mut e1, &mut d1, &mut f1);
                }
                assert_eq!(bits(&e), bits(&e1), "{t_k} {dir:?}");
                assert_eq!(bits(&d), bits(&d1), "{t_k} {dir:?}");
                assert_eq!(f, f1, "{t_k} {dir:?}");
            }
        }
        // Every exponential width gives the rule's exp bit for bit.
        let xs: Vec<f64> = spread(1001, -745.5, 709.5).collect();
        for width in KernelWidth::available() {
            let mut v = xs.clone();
            width.exp_in_place(&mut v);
            let expected: Vec<f64> = xs.iter().map(|&x| exp(x)).collect();
            assert_eq!(bits(&v), bits(&expected), "{width:?}");
        }
        // A table on another grid, and a short buffer, are refused with a message.
        let coarse = LogGrid::from_range(1e3, 1e7, 10).unwrap();
        let other = RateTable::from_knots(header(), coarse, vec![0.0; coarse.knots()]).unwrap();
        let loc = g.locate(1e4);
        let mixed = [tables[0].clone(), other];
        let err = write_tables_at(
            &mixed,
            &loc,
            Direction::Deexcitation,
            &mut [],
            &mut [0.0; 2],
            &mut [0; 2],
        )
        .unwrap_err();
        assert_eq!(
            err.to_string(),
            "table 2-1 grid: differs from the grid of the other tables in the batch"
        );
        let err = write_tables_at(
            &tables,
            &loc,
            Direction::Both,
            &mut [0.0; 3],
            &mut vec![0.0; n],
            &mut vec![0; n],
        )
        .unwrap_err();
        assert_eq!(
            err.to_string(),
            format!("output buffer excitation has length 3, expected {n}")
        );
    }

    #[test]
    fn vectorised_kernel_equals_write_at_bit_for_bit() {
        // The contract (DESIGN.md "One evaluation rule"): every path gives the same bits.
        // Mixed sides, an approximate table and a zero-energy table cover every select.
        let g = LogGrid::from_range(1e3, 1e7, 20).unwrap();
        let mut h = header();
        h.approximate = true;
        let y: Vec<f64> = (0..g.knots()).map(|i| (0.3 * i as f64).cos() - 1.0).collect();
        let tables = [
            RateTable::from_knots(header(), g, y.clone()).unwrap(),
            RateTable::from_knots(h, g, y).unwrap(),
        ];
        let temps: Vec<f64> = spread(1000, 1.0, 9.0).map(|e| 10f64.powf(e)).collect();
        let locs: Vec<Location> = temps.iter().map(|&t| g.locate(t)).collect();
        let mut batch = vec![Location::default(); temps.len()];
        g.locate_into(&temps, &mut batch);
        assert_eq!(batch, locs);
        for t in &tables {
            for dir in [Direction::Both, Direction::Excitation, Direction::Deexcitation] {
                let n = locs.len();
                let (mut e, mut d, mut f) = (vec![0.0; n], vec![0.0; n], vec![0; n]);
                let (mut e2, mut d2, mut f2) = (vec![0.0; n], vec![0.0; n], vec![0; n]);
                t.write_located(&locs, dir, &mut e, &mut d, &mut f).unwrap();
                for (j, loc) in locs.iter().enumerate() {
                    t.write_at(loc, dir, j, &mut e2, &mut d2, &mut f2);
                }
                assert_eq!(bits(&e), bits(&e2));
                assert_eq!(bits(&d), bits(&d2));
                assert_eq!(f, f2);
                // Every kernel width this processor has gives the same bits again.
                for width in KernelWidth::available() {
                    let (mut e4, mut d4, mut f4) = (vec![0.0; n], vec![0.0; n], vec![0; n]);
                    t.write_checked_as(width, &locs, dir, &mut e4, &mut d4, &mut f4);
                    if dir.wants_excitation() {
                        assert_eq!(bits(&e4), bits(&e2), "{width:?} {dir:?}");
                    }
                    if dir.wants_deexcitation() {
                        assert_eq!(bits(&d4), bits(&d2), "{width:?} {dir:?}");
                    }
                    assert_eq!(f4, f2, "{width:?} {dir:?}");
                }
                // Extrapolating batch evaluation from raw temperatures gives the same again.
                let (mut e3, mut d3, mut f3) = (vec![0.0; n], vec![0.0; n], vec![0; n]);
                t.evaluate_into(&temps, dir, OutsidePolicy::Extrapolate, &mut e3, &mut d3, &mut f3)
                    .unwrap();
                assert_eq!(bits(&e3), bits(&e2));
                assert_eq!(bits(&d3), bits(&d2));
                assert_eq!(f3, f2);
            }
        }
        // Wrong output lengths are refused, naming the buffer.
        let err = tables[0]
            .write_located(&locs, Direction::Both, &mut [], &mut [0.0; 1000], &mut [0; 1000])
            .unwrap_err();
        assert_eq!(
            err.to_string(),
            "output buffer excitation has length 0, expected 1000"
        );
    }

    #[test]
    fn batched_errors_name_the_first_bad_temperature() {
        let g = LogGrid::from_range(1e3, 1e6, 10).unwrap();
        let t = RateTable::from_knots(header(), g, vec![0.3; g.knots()]).unwrap();
        let mut temps = vec![2e4; 700];
        temps[600] = 5e2;
        temps[650] = -1.0;
        let (mut e, mut d, mut f) = (vec![0.0; 700], vec![0.0; 700], vec![0; 700]);
        let err = t
            .evaluate_into(
                &temps,
                Direction::Both,
                OutsidePolicy::Refuse,
                &mut e,
                &mut d,
                &mut f,
            )
            .unwrap_err();
        assert!(matches!(err, RuleError::OutsideGrid { index: 600, .. }), "{err}");
        let err = t
            .evaluate_into(
                &temps,
                Direction::Both,
                OutsidePolicy::Extrapolate,
                &mut e,
                &mut d,
                &mut f,
            )
            .unwrap_err();
        assert_eq!(
            err,
            RuleError::TemperatureNotPositive {
                index: 650,
                value_k: -1.0
            }
        );
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
