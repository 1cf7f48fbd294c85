//! The language-binding measurements of `ratewell-bench measure`, every figure on ONE thread
//! (the client library, the C ABI and the Python package all evaluate on the calling thread):
//!
//! - the same 1e6 de-excitation rate coefficients (100 served tables of the evaluation dataset
//!   at 10,000 temperatures) through the Rust library and through the C ABI; the table set is
//!   saved as a table file with the values and their order, so `baselines.py` evaluates the
//!   same values through the Python package and with `numpy.interp`, and checks the bits;
//! - loading a 300-level species (44,850 INVENTED tables) from a table file.

use crate::measure::{EVAL_GRID, EVAL_SPECIES, Failure, best_of, eval_temperatures, write_f64};
use ratewell::{
    RATEWELL_CM3_PER_S, RATEWELL_KELVIN, RATEWELL_OK, RATEWELL_REFUSE, RatewellTables,
    ratewell_tables_evaluate, ratewell_tables_free, ratewell_tables_load,
};
use ratewell_bench::invented;
use ratewell_client::{
    Client, ClientConfig, DatasetRef, Direction, EvalOptions, LocalTables, TableGrid, Transition,
};
use serde_json::{Value, json};
use std::ffi::CString;
use std::hint::black_box;
use std::path::Path;

/// Tables and temperatures of the binding comparison: 1e6 values.
const TABLES: usize = 100;
const TEMPERATURES: usize = 10_000;
/// Levels of the table-file load figure (every pair coupled: 44,850 tables).
const LOAD_LEVELS: u32 = 300;

/// A table set loaded through the C ABI, freed when dropped.
struct AbiTables(*mut RatewellTables);

impl AbiTables {
    fn load(path: &Path) -> Result<Self, Failure> {
        let c_path = CString::new(path.to_str().ok_or("table file path is not UTF-8")?)?;
        let mut handle = std::ptr::null_mut();
        // SAFETY: a NUL-terminated path and a writable out pointer.
        let status = unsafe { ratewell_tables_load(c_path.as_ptr(), &mut handle) };
        if status != RATEWELL_OK {
            return Err(format!("ratewell_tables_load: status {status}").into());
        }
        Ok(Self(handle))
    }

    /// De-excitation rate coefficients (cm^3/s) of `transitions` at `temps` (K), off-grid refused.
    fn deexcitation(
        &self,
        uppers: &[u32],
        lowers: &[u32],
        temps: &[f64],
        out: &mut [f64],
        flags: &mut [u32],
    ) -> Result<(), Failure> {
        // SAFETY: every array has the length passed beside it; the handle is live.
        let status = unsafe {
            ratewell_tables_evaluate(
                self.0,
                uppers.as_ptr(),
                lowers.as_ptr(),
                uppers.len(),
                temps.as_ptr(),
                temps.len(),
                RATEWELL_KELVIN,
                RATEWELL_CM3_PER_S,
                RATEWELL_REFUSE,
                std::ptr::null_mut(),
                out.as_mut_ptr(),
                flags.as_mut_ptr(),
                out.len(),
            )
        };
        if status != RATEWELL_OK {
            return Err(format!("ratewell_tables_evaluate: status {status}").into());
        }
        Ok(())
    }
}

impl Drop for AbiTables {
    fn drop(&mut self) {
        // SAFETY: a handle from ratewell_tables_load, freed once.
        unsafe { ratewell_tables_free(self.0) };
    }
}

/// Runs the binding measurements against the server at `address`; writes
/// `<work>/bindings/` for the Python side.
pub(crate) async fn measure(address: &str, work: &Path, quick: bool) -> Result<Value, Failure> {
    let folder = work.join("bindings");
    std::fs::create_dir_all(&folder)?;
    let config = ClientConfig::new(address.to_string()).with_dataset(DatasetRef::new("bench-eval")?);
    let client = Client::new(config)?;
    let grid = TableGrid::new(EVAL_GRID.0, EVAL_GRID.1, EVAL_GRID.2)?;
    let tables = client.fetch_tables(EVAL_SPECIES, Some(grid)).await?;
    let table_file = folder.join("eval.rwtables");
    tables.save_as(&table_file)?;
    let transitions: Vec<Transition> = tables.transitions().into_iter().take(TABLES).collect();
    let temps = eval_temperatures(TEMPERATURES);
    let n = transitions.len() * temps.len();
    let reps = if quick { 2 } else { 20 };
    let one_thread = EvalOptions {
        direction: Direction::Deexcitation,
        parallel: false,
        ..EvalOptions::default()
    };

    let (mut rust, mut flags) = (vec![0.0; n], vec![0u32; n]);
    let rust_s = best_of(reps, || {
        tables
            .evaluate_to_slices(&transitions, &temps, one_thread, &mut [], &mut rust, &mut flags)
            .expect("temperatures inside the grid");
        black_box(&rust);
    });

    let abi = AbiTables::load(&table_file)?;
    let uppers: Vec<u32> = transitions.iter().map(|t| t.upper).collect();
    let lowers: Vec<u32> = transitions.iter().map(|t| t.lower).collect();
    let mut through_abi = vec![0.0; n];
    abi.deexcitation(&uppers, &lowers, &temps, &mut through_abi, &mut flags)?;
    let mut abi_failure = None;
    let abi_s = best_of(reps, || {
        if let Err(e) = abi.deexcitation(&uppers, &lowers, &temps, &mut through_abi, &mut flags) {
            abi_failure = Some(e);
        }
        black_box(&through_abi);
    });
    if let Some(e) = abi_failure {
        return Err(e);
    }
    let abi_identical = same_bits(&rust, &through_abi);

    // For the Python side: the values, the transitions and the temperatures, in order.
    write_f64(&folder.join("rust_deexcitation.f64"), &rust)?;
    write_f64(&folder.join("temperatures_k.f64"), &temps)?;
    let index = json!({
        "table_file": table_file.file_name().map(|f| f.to_string_lossy().into_owned()),
        "transitions": transitions.iter().map(|t| [t.upper, t.lower]).collect::<Vec<_>>(),
        "temperatures": temps.len(),
        "direction": "deexcitation",
        "rate_unit": "cm3/s",
    });
    std::fs::write(folder.join("index.json"), serde_json::to_string_pretty(&index)?)?;

    let load = measure_table_file_load(&folder, if quick { 2 } else { 10 })?;
    eprintln!(
        "bindings, one thread, {n} values: Rust library {:.2} ns/value, C ABI {:.2} ns/value \
         (same bits: {abi_identical}); table file of {} tables loads in {:.1} ms",
        rust_s / n as f64 * 1e9,
        abi_s / n as f64 * 1e9,
        load["tables"],
        load["load_seconds"].as_f64().unwrap_or(f64::NAN) * 1e3,
    );
    Ok(json!({
        "threads": 1,
        "values": n,
        "tables": transitions.len(),
        "temperatures": temps.len(),
        "rust_seconds_per_value": rust_s / n as f64,
        "c_abi_seconds_per_value": abi_s / n as f64,
        "c_abi_bit_identical": abi_identical,
        "table_file_load": load,
    }))
}

/// Best load time of a table file holding an invented 300-level species.
fn measure_table_file_load(folder: &Path, reps: usize) -> Result<Value, Failure> {
    let large = invented::all_pairs(LOAD_LEVELS);
    let path = folder.join("large.rwtables");
    large.save_as(&path)?;
    let bytes = std::fs::metadata(&path)?.len();
    let mut loaded = None;
    let mut failure = None;
    let load_s = best_of(reps, || match LocalTables::load(&path) {
        Ok(t) => loaded = Some(black_box(t)),
        Err(e) => failure = Some(e),
    });
    if let Some(e) = failure {
        return Err(e.into());
    }
    let same = loaded.is_some_and(|t| t.digest() == large.digest());
    std::fs::remove_file(&path)?;
    Ok(json!({
        "levels": LOAD_LEVELS,
        "tables": large.tables().len(),
        "file_bytes": bytes,
        "load_seconds": load_s,
        "digest_verified": same,
        "threads": 1,
    }))
}

fn same_bits(a: &[f64], b: &[f64]) -> bool {
    a.len() == b.len() && a.iter().zip(b).all(|(x, y)| x.to_bits() == y.to_bits())
}
