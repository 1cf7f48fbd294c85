//! Fetch one species' rate tables once, evaluate them locally for many temperatures, and check
//! that the server's own lookup gives the same numbers bit for bit.
//!
//! Run against a server (address from RATEWELL_SERVER, default http://127.0.0.1:50051):
//!
//!     cargo run -p ratewell-client --example fetch_and_evaluate -- demo "Mk III"
//!
//! Arguments: dataset id, species, optional pinned content hash.

use ratewell_client::{
    Client, ClientConfig, ClientError, DEFAULT_ENDPOINT, DatasetRef, EvalOptions, RateBuffers, RateQuery,
    TemperatureUnit, flags,
};

#[tokio::main(flavor = "current_thread")]
async fn main() -> Result<(), ClientError> {
    let mut args = std::env::args().skip(1);
    let id = args.next().unwrap_or_else(|| "demo".into());
    let species = args.next().unwrap_or_else(|| "Mk III".into());
    let mut dataset = DatasetRef::new(id)?;
    if let Some(hash) = args.next() {
        dataset = dataset.pinned(&hash)?;
    }
    let server = std::env::var("RATEWELL_SERVER").unwrap_or_else(|_| DEFAULT_ENDPOINT.into());
    let client = Client::new(ClientConfig::new(server).with_dataset(dataset))?;

    // One fetch per process: later calls with the same key come from the cache.
    let tables = client.fetch_tables(&species, None).await?;
    let s = tables.stamp();
    println!(
        "dataset {} version {} content hash {}: {} tables of {}",
        s.id,
        s.version,
        s.content_hash,
        tables.tables().len(),
        tables.species()
    );

    // Temperatures in eV, evaluated for every transition into reusable buffers.
    let temperatures_ev: Vec<f64> = (0..200).map(|i| 0.5 * 1.02f64.powi(i)).collect();
    let options = EvalOptions {
        temperature_unit: TemperatureUnit::ElectronVolt,
        ..EvalOptions::default()
    };
    let mut out = RateBuffers::default();
    tables.evaluate_into(&[], &temperatures_ev, options, &mut out)?;
    let n = temperatures_ev.len();
    for (row, t) in tables.transitions().iter().enumerate() {
        let q = out.deexcitation[row * n];
        let caution = if out.flags[row * n] & flags::APPROXIMATE != 0 {
            " (approximate data)"
        } else {
            ""
        };
        println!("{t}: q_ul({} eV) = {q:e} cm3/s{caution}", temperatures_ev[0]);
    }

    // The server's lookup uses the same rule: the values agree bit for bit.
    let query = RateQuery::new(species.clone(), temperatures_ev).with_options(options);
    let remote = client.lookup_rates(&query).await?;
    let local = tables.evaluate(&query)?;
    let same = remote
        .deexcitation
        .iter()
        .zip(&local.deexcitation)
        .all(|(a, b)| a.to_bits() == b.to_bits());
    println!("local and server values identical: {same}");
    Ok(())
}
