//! ratewell server library.
//!
//! Module map (arrows point one way: api -> engine -> tables -> physics; dataset -> physics):
//! - [`physics`]: pure atomic physics (constants, units, rate coefficients, Maxwellian
//!   averaging, Burgess & Tully scaling, approximations, statistical equilibrium, emission).
//! - [`dataset`]: the dataset model, our TOML file format, validation, content hash, catalogue
//!   and the embedded demo dataset.
//! - [`tables`]: rate tables precomputed on uniform log-T grids, their measured interpolation
//!   error, and the table cache.
//! - [`engine`]: the pure core behind the handlers: loaded datasets, lookups, population
//!   solves, comparisons.
//! - [`api`]: thin gRPC handlers, wire conversions and the one error-to-status mapping.
//! - [`auth`]: bearer tokens (Admin always, every call when configured) and the audit log.
//! - [`config`]: every setting and limit, from defaults, file, environment and flags.
//! - [`connections`]: connection limit and HTTP/2 handshake timeout at accept.
//! - [`limits`]: the dataset, request, cache and connection limits and their typed refusal.
//! - [`server`]: `run(listener, config, shutdown)`, used by the binary and the tests.
//! - [`binary`]: the server process (flags, logs, signals) behind `ratewell-server`.
//! - [`linger`]: lingering close of accepted connections, so last answers arrive whole.
//! - [`tls`]: the server's TLS certificate and key from PEM files.
//! - [`metrics`]: Prometheus metrics and their plain-HTTP endpoint.
//! - [`log_escape`]: log lines with control characters escaped, one line per event.
//! - [`memory`]: hands memory freed after a dataset load back to the operating system.

pub mod api;
pub mod auth;
pub mod binary;
pub mod config;
pub mod connections;
pub mod dataset;
pub mod engine;
pub mod limits;
pub mod linger;
pub mod log_escape;
pub mod memory;
pub mod metrics;
pub mod physics;
pub mod server;
pub mod tables;
pub mod tls;
