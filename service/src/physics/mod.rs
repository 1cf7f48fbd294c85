//! Pure atomic physics: unit conversions, Maxwellian averaging of collision strengths, Burgess
//! & Tully scaling, approximate collision strengths, statistical equilibrium and line emission
//! (rate coefficients themselves are the evaluation rule's, in the contract crate). Plain
//! numbers and slices in, plain numbers out: no I/O, no async, no wire or dataset types, and no
//! dependency on any other module of this crate.
//!
//! - [`constants`]: CODATA 2018 constants (re-exported from the contract crate).
//! - [`units`]: conversions between K, eV, J, cm^-1, Rydberg, cm^-3, m^-3 and wavelengths.
//! - [`elementary`]: e^x, ln x, e^x - 1, ln(1 + x), 10^x with the same bits on every platform.
//! - [`expint`]: exponential integrals E_n(x) and their scaled forms e^x E_n(x).
//! - [`maxwell`]: exact Maxwellian average of piecewise-linear collision strengths.
//! - [`transition`]: the four transition types shared by [`maxwell`] and [`scaling`].
//! - [`pchip`]: shape-preserving (Fritsch-Carlson) cubic interpolation.
//! - [`scaling`]: Burgess & Tully (1992) scaled temperature and effective collision strength.
//! - [`approximations`]: Van Regemorter and semi-classical estimates, always flagged approximate.
//! - [`populations`]: level populations in statistical equilibrium (reusable workspace).
//! - [`emission`]: line emissivities, wavelengths, line ratios, critical densities, power.
//! - [`error`]: the one error type of this layer.

pub use ratewell_proto::constants;

pub mod approximations;
pub mod elementary;
pub mod emission;
pub mod error;
pub mod expint;
pub mod maxwell;
pub mod pchip;
pub mod populations;
pub mod scaling;
pub mod transition;
pub mod units;

pub use error::PhysicsError;
