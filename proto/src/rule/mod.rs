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
//! Entry points: [`RateTable::evaluate`] and [`RateTable::evaluate_at`] give one
//! [`RateValue`]; [`RateTable::write_at`] writes one slot of a [`RateOutputs`]; the batched
//! [`RateTable::evaluate_into`] (raw temperatures), [`RateTable::write_located`] (located
//! ones), [`write_rows`] (many tables at shared locations) and [`write_tables_at`] (many
//! tables at one location) fill a [`RateOutputs`], whose constructor checks the buffer
//! lengths. Temperatures are located once per grid with [`LogGrid::locate`] or
//! [`checked_location`] (which applies the [`OutsidePolicy`]).
//!
//! Speed: the exponential and logarithm used here ([`exp`], [`ln`]) are written in plain IEEE
//! arithmetic with no branches and no library calls, so (a) the answer does not depend on the
//! platform's maths library (server and client may run on different systems and still agree bit
//! for bit) and (b) loops over many values compile to SIMD code. The batched entry points run
//! such loops, compiled for SSE2, AVX2 and AVX-512F and picked at run time by what the
//! processor has; the width changes only how many values are done at once, never a result bit
//! (no fused multiply-add is used anywhere).
//!
//! Layout: `grid` (the grid and locating on it), `table` (a table and the scalar rule),
//! `cubic` and `slopes` (the interpolant), `math` (`exp`, `ln`), `outputs` (the output
//! buffers), `batch` (the batched entry points), `kernels` (the batched loops per instruction
//! set), `errors` and [`flags`].

mod batch;
mod cubic;
mod errors;
pub mod flags;
mod grid;
mod kernels;
mod math;
mod outputs;
mod slopes;
mod table;

#[cfg(test)]
mod tests;

pub use batch::{Threads, write_rows, write_tables_at};
pub use errors::RuleError;
pub use grid::{Location, LogGrid, OutsidePolicy, Side, checked_location};
pub use math::{exp, ln};
pub use outputs::{Direction, RateOutputs};
pub use slopes::monotone_slopes;
pub use table::{RateTable, RateValue, TableHeader};
