//! Prints one rate lookup as JSON, for the cross-language check
//! (scripts/python-client-check.sh): every transition of the demo species Mk III at a few
//! temperatures, asked of the server through the Rust client library and also evaluated
//! locally from fetched tables. Doubles are printed as the hex of their IEEE-754 bits
//! (big-endian, as Python's `struct.pack('>d', x).hex()`), so equality can be exact.
//!
//! Usage: `lookup_json http://127.0.0.1:PORT`

use ratewell_client::{Client, ClientConfig, DatasetRef, RateQuery};
use serde_json::json;
use std::process::ExitCode;

/// Temperatures of the lookup, K (shared with tests/python/check_client.py).
const TEMPERATURES_K: [f64; 7] = [1.0e3, 5.0e3, 1.0e4, 2.5e4, 1.0e5, 1.0e6, 3.3e7];
/// The species looked up.
const SPECIES: &str = "Mk III";

fn bits(values: &[f64]) -> Vec<String> {
    values.iter().map(|v| format!("{:016x}", v.to_bits())).collect()
}

async fn lookup(url: String) -> Result<serde_json::Value, ratewell_client::ClientError> {
    let client = Client::new(ClientConfig::new(url).with_dataset(DatasetRef::new("demo")?))?;
    let query = RateQuery::new(SPECIES, TEMPERATURES_K.to_vec());
    let remote = client.lookup_rates(&query).await?;
    let local = client.fetch_tables(SPECIES, None).await?.evaluate(&query)?;
    Ok(json!({
        "species": SPECIES,
        "temperatures_k": TEMPERATURES_K,
        "stamp": {
            "id": remote.stamp.id,
            "version": remote.stamp.version,
            "content_hash": remote.stamp.content_hash,
        },
        "transitions": remote.transitions.iter().map(|t| [t.upper, t.lower]).collect::<Vec<_>>(),
        "excitation_bits": bits(&remote.excitation),
        "deexcitation_bits": bits(&remote.deexcitation),
        "flags": remote.flags,
        "local_excitation_bits": bits(&local.excitation),
        "local_deexcitation_bits": bits(&local.deexcitation),
    }))
}

fn main() -> ExitCode {
    let Some(url) = std::env::args().nth(1) else {
        eprintln!("usage: lookup_json http://HOST:PORT");
        return ExitCode::from(2);
    };
    let runtime = match tokio::runtime::Builder::new_current_thread().enable_all().build() {
        Ok(r) => r,
        Err(e) => {
            eprintln!("lookup_json: cannot start a runtime: {e}");
            return ExitCode::FAILURE;
        }
    };
    match runtime.block_on(lookup(url)) {
        Ok(v) => {
            println!("{v}");
            ExitCode::SUCCESS
        }
        Err(e) => {
            eprintln!("lookup_json: {e}");
            ExitCode::FAILURE
        }
    }
}
