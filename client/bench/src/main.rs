//! The Rust side of ratewell's side-by-side performance comparison (run by
//! `scripts/perf/compare.sh`; see that script for the whole procedure).
//!
//! - `ratewell-bench measure`: starts the server binary as a child process on a loopback port
//!   with the benchmark-only Transport service, and measures start-up time, memory, table
//!   fetch, local evaluation through this client library, batched lookups against the echo RPC
//!   at equal payload, and small-call latency against the empty RPC with 1 and 64 calls in
//!   flight. Writes `<work>/rust.json` and the fetched tables for the Python baselines.
//! - `ratewell-bench soak`: many concurrent clients against one server process (see `soak`).
//! - `ratewell-bench report`: joins `core.json` (service-side measurements), `rust.json` and
//!   `python.json` (numpy / scipy baselines), prints every ratio with its target and PASS or
//!   FALL SHORT, and writes `results.json`, `results.md` and the plot `performance.svg`.

mod bindings;
mod measure;
mod plot;
mod report;
mod soak;

use clap::{Parser, Subcommand};
use std::path::PathBuf;
use std::process::ExitCode;

#[derive(Parser)]
#[command(
    name = "ratewell-bench",
    about = "ratewell side-by-side performance measurements"
)]
struct Args {
    #[command(subcommand)]
    command: Command,
}

#[derive(Subcommand)]
enum Command {
    /// Start the server and measure; writes <work>/rust.json and <work>/eval/.
    Measure {
        /// The ratewell-server binary (a release build).
        #[arg(long)]
        server_bin: PathBuf,
        /// Folder of dataset folders written by ratewell-bench-core (<work>/data).
        #[arg(long)]
        data_dir: PathBuf,
        /// Work folder shared with the other steps.
        #[arg(long)]
        work: PathBuf,
        /// Fewer repetitions, for checking that the harness runs.
        #[arg(long)]
        quick: bool,
        /// Only the small-call latencies, against a server on the demo dataset (for
        /// profiling; prints, writes nothing).
        #[arg(long)]
        latency_only: bool,
    },
    /// Soak (not CI): many clients, each on its own connection, against one server for a
    /// while; fails on any error or on server memory growth over 10%. Run it through
    /// scripts/perf/soak.sh (raises the open-files limit first).
    Soak {
        /// The ratewell-server binary (a release build).
        #[arg(long)]
        server_bin: PathBuf,
        /// Concurrent clients.
        #[arg(long, default_value_t = 1000)]
        clients: usize,
        /// Length of the measured lookup phase, seconds.
        #[arg(long, default_value_t = 60)]
        seconds: u64,
        /// Lookups before the measured phase, seconds (not counted for memory flatness).
        #[arg(long, default_value_t = 30)]
        warm_up_seconds: u64,
    },
    /// Join the measurements, print the ratio table, write results and the plot.
    Report {
        /// Work folder holding core.json, rust.json and python.json.
        #[arg(long)]
        work: PathBuf,
        /// Exact command line to record with the results.
        #[arg(long, default_value = "scripts/perf/compare.sh")]
        command_line: String,
    },
}

fn main() -> ExitCode {
    let args = Args::parse();
    let result = match args.command {
        Command::Measure {
            server_bin,
            data_dir,
            work,
            quick,
            latency_only,
        } => {
            if latency_only {
                measure::run_latency_only(&server_bin, quick)
            } else {
                measure::run(&server_bin, &data_dir, &work, quick)
            }
        }
        Command::Report { work, command_line } => report::run(&work, &command_line),
        Command::Soak {
            server_bin,
            clients,
            seconds,
            warm_up_seconds,
        } => soak::run(&server_bin, clients, seconds, warm_up_seconds),
    };
    match result {
        Ok(()) => ExitCode::SUCCESS,
        Err(e) => {
            eprintln!("ratewell-bench: {e}");
            ExitCode::FAILURE
        }
    }
}
