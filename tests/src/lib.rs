//! End-to-end test helpers for ratewell.
//!
//! Module map:
//! - [`server`]: [`TestServer`] spawns the real server (`ratewell_service::server::run`) on
//!   127.0.0.1:0 with a chosen [`Config`](ratewell_service::config::Config), waits for standard
//!   health checking to report SERVING, hands out raw tonic clients, and shuts the server down
//!   through a oneshot, awaiting its end.
//! - [`child`]: [`child::ServerProcess`], the server as a real child process (signals, exit
//!   within the grace period), its address read from its "serving" log line.
//! - [`codata`]: the CODATA constants and the published rate constant the tests check against.
//! - [`data`]: [`TempDataDir`], a uniquely named folder under the system temporary folder
//!   holding copies of the repository's datasets and a deliberately broken one; removed on drop.
//! - [`dataset_text`]: the repository's dataset files read as plain TOML, so expectations come
//!   from the text rather than from the server's loader.
//! - [`fuzz`]: a seeded mutator of request bytes and dataset texts for the fuzz runs.
//! - [`raw`]: [`raw::RawCodec`], raw bytes on the wire (malformed and fuzzed bodies).
//! - [`requests`]: builders for the wire requests the tests send, and status assertions
//!   (code, key words of the message, tonic-types BadRequest field violations).

pub mod child;
pub mod codata;
pub mod data;
pub mod dataset_text;
pub mod fuzz;
pub mod raw;
pub mod requests;
pub mod server;

pub use data::{BrokenDataset, TempDataDir, repo_path};
pub use server::{TestServer, test_config};
