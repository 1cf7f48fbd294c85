//! The uniform grid in log10 T that every table of a species shares, and where a temperature
//! falls on it.

use super::errors::RuleError;
use super::math::ln;
use std::f64::consts::LOG10_E;

/// Relative slack, in grid steps, within which a temperature at a grid end counts as inside.
const END_SLACK_STEPS: f64 = 1e-9;

/// What to do with a temperature outside the table grid.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum OutsidePolicy {
    /// Return [`RuleError::OutsideGrid`].
    #[default]
    Refuse,
    /// Extrapolate linearly in (log10 T, ln Upsilon) from the end knot, flagged OUTSIDE_GRID.
    Extrapolate,
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

    /// Locates every temperature (K, finite and > 0) into `out` (same length): the same
    /// [`Location`]s as [`Self::locate`], computed in one vectorisable pass.
    pub fn locate_into(&self, temperatures_k: &[f64], out: &mut [Location]) {
        for (loc, &t_k) in out.iter_mut().zip(temperatures_k) {
            *loc = self.locate(t_k);
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

/// Validates a block of temperatures starting at request position `start` under the grid
/// policy, reporting the first bad one exactly as [`checked_location`] would.
pub(super) fn check_temperatures(
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
