//! Loads a table file three times in this process and prints each time, so the first load of
//! a fresh process (which pays for the memory the tables take, page by page) shows beside the
//! steady figure of `benches/table_file.rs`. With no argument, writes the INVENTED 300-level
//! benchmark species (44,850 tables) into the temporary folder and prints its path.
//!
//!     cargo run --release -p ratewell-bench --example load_table_file
//!     cargo run --release -p ratewell-bench --example load_table_file -- PATH

use ratewell_bench::invented;
use ratewell_client::LocalTables;
use std::time::Instant;

fn main() -> Result<(), Box<dyn std::error::Error>> {
    let Some(path) = std::env::args().nth(1).map(std::path::PathBuf::from) else {
        let dir = std::env::temp_dir().join("ratewell-load-table-file");
        println!("{}", invented::all_pairs(300).save(&dir)?.display());
        return Ok(());
    };
    for round in 1..=3 {
        let start = Instant::now();
        let tables = LocalTables::load(&path)?;
        let elapsed = start.elapsed();
        println!(
            "load {round}: {:.1} ms, {} tables, one thread",
            elapsed.as_secs_f64() * 1e3,
            tables.tables().len()
        );
    }
    Ok(())
}
