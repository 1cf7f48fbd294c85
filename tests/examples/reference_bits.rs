//! Writes the Rust client's local evaluation of one species at given temperatures, for the
//! Python package check (scripts/python-package-check.sh): the temperatures are read as raw
//! little-endian doubles, and the output file holds every table's excitation values, then the
//! de-excitation values (doubles), then the flags (u32), all transition-major and
//! little-endian, so the Python side compares bits exactly.
//!
//! Usage: `reference_bits SERVER_URL SPECIES TEMPERATURES_FILE OUTPUT_FILE`

use ratewell_client::{Client, ClientConfig, DatasetRef, EvalOptions, RateBuffers};
use std::process::ExitCode;

async fn evaluate(url: &str, species: &str, temps: &[f64]) -> Result<Vec<u8>, ratewell_client::ClientError> {
    let client = Client::new(ClientConfig::new(url).with_dataset(DatasetRef::new("demo")?))?;
    let tables = client.fetch_tables(species, None).await?;
    let mut out = RateBuffers::default();
    tables.evaluate_into(&[], temps, EvalOptions::default(), &mut out)?;
    let mut bytes = Vec::with_capacity(out.flags.len() * 20);
    for v in out.excitation.iter().chain(&out.deexcitation) {
        bytes.extend_from_slice(&v.to_le_bytes());
    }
    for f in &out.flags {
        bytes.extend_from_slice(&f.to_le_bytes());
    }
    Ok(bytes)
}

#[tokio::main(flavor = "current_thread")]
async fn main() -> ExitCode {
    let args: Vec<String> = std::env::args().skip(1).collect();
    let [url, species, input, output] = args.as_slice() else {
        eprintln!("usage: reference_bits SERVER_URL SPECIES TEMPERATURES_FILE OUTPUT_FILE");
        return ExitCode::from(2);
    };
    let raw = match std::fs::read(input) {
        Ok(r) if r.len() % 8 == 0 => r,
        Ok(r) => {
            eprintln!("{input}: {} bytes, not a whole number of doubles", r.len());
            return ExitCode::from(2);
        }
        Err(e) => {
            eprintln!("{input}: {e}");
            return ExitCode::from(2);
        }
    };
    let temps: Vec<f64> = raw
        .chunks_exact(8)
        .map(|c| f64::from_le_bytes(c.try_into().expect("8 bytes")))
        .collect();
    match evaluate(url, species, &temps).await {
        Ok(bytes) => match std::fs::write(output, bytes) {
            Ok(()) => ExitCode::SUCCESS,
            Err(e) => {
                eprintln!("{output}: {e}");
                ExitCode::FAILURE
            }
        },
        Err(e) => {
            eprintln!("{e}");
            ExitCode::FAILURE
        }
    }
}
