//! ratewell client library: ask a ratewell server for rate coefficients, level populations and
//! dataset comparisons, or fetch rate tables once and evaluate them in-process with the same
//! rule the server uses (bit-for-bit equal answers). Every answer carries the dataset stamp
//! (id, version, content hash); a pinned hash makes the client refuse any other content.
//!
//! Module map:
//! - [`Client`] (`client`): the async client: calls, time budgets, retries, stamp checks.
//! - [`blocking`]: the same calls for synchronous codes (owns a small tokio runtime).
//! - [`ClientConfig`] (`config`): every setting, with named defaults.
//! - [`ClientError`] (`error`): the one error enum.
//! - [`DatasetRef`] (`dataset`): which dataset to ask about, and the pinning check.
//! - [`LocalTables`] (`local`): fetched tables evaluated locally; `cache`: the in-process
//!   table cache (one fetch per job).
//! - [`RateQuery`], [`RateLookup`], [`EvalOptions`], [`RateBuffers`] (`rates`): rate
//!   questions and transition-major answers, shared by server and local evaluation.
//! - [`PopulationQuery`] (`populations`): population questions, chunked for long work.
//! - [`compare_tables`] (`compare`): two table sets compared in-process.
//! - `units`: temperature, rate, density, power and energy units.
//! - `table_file`: table files ([`LocalTables::save`], [`LocalTables::load`]) for nodes with
//!   no route to a server, and the shared cache directory ([`ClientConfig::with_cache_dir`]).
//! - [`RetryPolicy`] (`retry`): which failures are retried and the backoff between attempts.
//! - [`apply_options`] (`options`): settings as `key=value` text, for the C ABI and the
//!   languages over it.
//! - `transport`: one lazily connected channel per endpoint (TLS, bearer token), failover
//!   between them.
//! - [`ServingStatus`] (`health`): standard gRPC health checking.
//!
//! ```no_run
//! use ratewell_client::{Client, ClientConfig, DatasetRef, EvalOptions, RateBuffers};
//! # async fn demo() -> Result<(), ratewell_client::ClientError> {
//! let pinned = DatasetRef::new("demo")?
//!     .with_version("1.0.0")
//!     .pinned("0123456789abcdef0123456789abcdef0123456789abcdef0123456789abcdef")?;
//! let client = Client::new(ClientConfig::new("http://127.0.0.1:50051").with_dataset(pinned))?;
//! let tables = client.fetch_tables("X", None).await?; // fetched once per process
//! let mut out = RateBuffers::default();
//! tables.evaluate_into(&[], &[5.0e3, 1.0e4, 2.0e4], EvalOptions::default(), &mut out)?;
//! # Ok(()) }
//! ```

pub mod blocking;
mod cache;
mod cache_dir;
mod client;
mod compare;
mod config;
mod dataset;
mod error;
mod health;
mod local;
mod options;
mod populations;
mod rates;
mod retry;
mod table_file;
mod transition;
mod transport;
pub mod units;

pub use client::{Client, FALLBACK_CAUTION};
pub use compare::{LocalComparison, TableDifference, compare_tables, relative_difference};
pub use config::{
    ClientConfig, DEFAULT_CALL_TIMEOUT, DEFAULT_CONNECT_TIMEOUT, DEFAULT_ENDPOINT,
    DEFAULT_KEEPALIVE_INTERVAL, DEFAULT_MAX_MESSAGE_BYTES, TlsSettings,
};
pub use dataset::{DatasetRef, short_hash, stamp_label};
pub use error::ClientError;
pub use health::{EndpointHealth, ServingStatus};
pub use local::LocalTables;
pub use options::{OPTION_KEYS, apply_options};
pub use populations::PopulationQuery;
pub use rates::{EvalOptions, RateBuffers, RateLookup, RateQuery};
pub use retry::{RetryPolicy, is_retryable, is_transport_failure};
pub use table_file::{TABLE_FILE_EXTENSION, TABLE_FILE_MAGIC, TABLE_FILE_VERSION};
pub use transition::{TableGrid, Transition};
pub use units::{DensityUnit, EnergyUnit, PowerUnit, RateUnit, TemperatureUnit};

// The README's Rust snippets compile (and run) as doc-tests of this crate.
#[cfg(doctest)]
#[doc = include_str!("../../README.md")]
struct ReadmeDoctests;

/// The wire contract (generated messages), for the answers returned as wire types.
pub use ratewell_proto::pb;
/// The evaluation rule's types used in this API.
pub use ratewell_proto::rule::{Direction, LogGrid, OutsidePolicy, RateTable, RateValue, TableHeader, flags};
