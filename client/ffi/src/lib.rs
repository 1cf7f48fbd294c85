//! The C ABI of the ratewell client library: one implementation for C, C++ (header-only RAII
//! wrapper `include/ratewell.hpp`) and Fortran (module `fortran/ratewell.f90`), all over the
//! same Rust client and the same evaluation rule, so every language gets the Rust bits.
//!
//! Module map:
//! - `status`: the integer status codes, the thread-local last-error message, and the guard
//!   that turns every error and every panic into a status (no panic crosses the boundary).
//! - `strings`: C strings in and out (null and UTF-8 checks, copies into caller buffers).
//! - `connection`: [`RatewellConnection`], a client with its own current-thread runtime (calls
//!   run on the calling thread; the library starts no threads).
//! - `tables`: [`RatewellTables`], an immutable fetched or loaded table set: evaluation into
//!   caller-owned arrays from any number of threads at once, the stamp, table files.
//! - `populations`: [`RatewellPopulations`], the answer of a population solve.
//!
//! Conventions: every function returns a status (`RATEWELL_OK` = 0) unless it only reads a
//! count; handles are opaque and freed by their `_free`/`_close` function (null is a no-op);
//! arrays come with explicit lengths; strings are NUL-terminated UTF-8; output strings are
//! copied into caller buffers with their size given.

mod connection;
mod populations;
mod status;
mod strings;
mod tables;

pub use connection::{
    RatewellConnection, ratewell_close, ratewell_fetch_tables, ratewell_open, ratewell_open_with_options,
};
pub use populations::{
    RatewellPopulations, ratewell_populations_flags, ratewell_populations_fractions,
    ratewell_populations_free, ratewell_populations_level_count, ratewell_populations_point_count,
    ratewell_populations_radiated_power, ratewell_populations_stamp, ratewell_solve_populations,
};
pub use status::*;
pub use tables::{
    RatewellTables, ratewell_tables_count, ratewell_tables_evaluate, ratewell_tables_free,
    ratewell_tables_load, ratewell_tables_save, ratewell_tables_stamp, ratewell_tables_transition,
};
