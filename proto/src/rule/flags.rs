//! Bit flags attached to each evaluated value (same numbers as the wire enum `ValueFlag`).

use super::grid::Side;

/// The collision data come from an approximation formula.
pub const APPROXIMATE: u32 = 1;
/// The temperature lies outside the table's source range: the value leans on the documented
/// continuation of the data beyond their tabulated energies or temperatures.
pub const BEYOND_SOURCE: u32 = 2;
/// The temperature lies outside the table grid (extrapolated by this rule).
pub const OUTSIDE_GRID: u32 = 4;

/// Flag bits of one value: the table's own, OUTSIDE_GRID off the grid, BEYOND_SOURCE outside
/// the source range (`lo_k`, `hi_k` include the relative slack).
#[inline(always)]
pub(super) fn value_flags(base: u32, side: Side, t_k: f64, lo_k: f64, hi_k: f64) -> u32 {
    let outside = if side != Side::Inside { OUTSIDE_GRID } else { 0 };
    let beyond = if t_k < lo_k || t_k > hi_k {
        BEYOND_SOURCE
    } else {
        0
    };
    base | outside | beyond
}
