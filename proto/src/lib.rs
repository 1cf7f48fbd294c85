//! The ratewell wire contract and the one evaluation rule.
//!
//! - [`pb`]: prost messages and tonic clients/servers generated from `proto/ratewell/v1/*.proto`.
//! - [`rule`]: the single function family that turns a served rate table into rate coefficients.
//!   The server answers lookups with it and the client library evaluates fetched tables with it,
//!   so both agree bit for bit.
//! - [`constants`]: CODATA constants and the rate-coefficient prefactor derived from them.
//! - [`units`]: the unit conversions applied to served values (shared, so they agree bit for bit).
//! - [`digest`]: the table-set digest served with every table set and checked by clients.
//! - [`records`]: the canonical byte form of a table (hashed by the digest, stored in table files).
//! - [`wire`]: conversions between wire tables and [`rule::RateTable`].

pub mod constants;
pub mod digest;
pub mod records;
pub mod rule;
pub mod units;
pub mod wire;

/// Generated protobuf messages and gRPC services of package `ratewell.v1`.
#[allow(missing_docs, unreachable_pub, clippy::all)]
pub mod pb {
    tonic::include_proto!("ratewell.v1");
}

/// Encoded file descriptor set of the contract, for gRPC server reflection.
pub const FILE_DESCRIPTOR_SET: &[u8] = tonic::include_file_descriptor_set!("ratewell_descriptor");
