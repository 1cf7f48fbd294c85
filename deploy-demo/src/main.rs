//! `ratewell-demo-job`: a small example simulation job for the ratewell deploy demo.
//!
//! `run` follows an invented cooling plasma parcel: it fetches one species' rate tables from the
//! server once, evaluates every table locally at each step, asks the server for level
//! populations every few steps (and checks the local rates against the server's own lookup at
//! those steps, bit for bit), then prints a JSON summary naming the dataset id, version and
//! content hash with a blake3 checksum of every number computed. `verify` compares several
//! summaries: one dataset hash and identical checksums, or FAIL.
//!
//! Modules: `args` (command line, checked into a plan), `track` (the parcel's path), `job` (the
//! loop), `digest` (checksums of exact bits), `summary` (the JSON form), `verify`, `error`.

mod args;
mod digest;
mod error;
mod job;
mod summary;
mod track;
mod verify;

use args::{Cli, Command};
use clap::Parser;
use error::JobError;
use std::io::Write;
use std::process::ExitCode;

/// Exit status when a local value differs from the server's lookup of it.
const EXIT_VALUES_DIFFER: u8 = 4;

fn main() -> ExitCode {
    let cli = match Cli::try_parse() {
        Ok(cli) => cli,
        Err(e) => {
            let _ = e.print();
            return ExitCode::from(u8::try_from(e.exit_code()).unwrap_or(2));
        }
    };
    let outcome = match &cli.command {
        Command::Run(a) => run(a),
        Command::Verify(a) => verify(a),
    };
    match outcome {
        Ok(code) => code,
        Err(e) => {
            eprintln!("error: {e}");
            ExitCode::from(e.exit_code())
        }
    }
}

fn run(a: &args::RunArgs) -> Result<ExitCode, JobError> {
    let plan = a.plan()?;
    let summary = job::run(&plan)?;
    let text = serde_json::to_string_pretty(&summary).map_err(|e| JobError::File {
        path: "stdout".into(),
        message: format!("cannot write the summary as JSON: {e}"),
    })?;
    print_out(&text)?;
    if summary.server_check.bit_mismatches > 0 {
        eprintln!(
            "error: {} of {} local values differ from the server's lookup (the one evaluation rule is broken)",
            summary.server_check.bit_mismatches, summary.server_check.values_compared
        );
        return Ok(ExitCode::from(EXIT_VALUES_DIFFER));
    }
    Ok(ExitCode::SUCCESS)
}

fn verify(a: &args::VerifyArgs) -> Result<ExitCode, JobError> {
    let mut summaries = Vec::with_capacity(a.summaries.len());
    for path in &a.summaries {
        summaries.push((path.display().to_string(), verify::read_summary(path)?));
    }
    let verdict = verify::verify(&summaries);
    print_out(verdict.report.trim_end())?;
    Ok(if verdict.pass {
        ExitCode::SUCCESS
    } else {
        ExitCode::FAILURE
    })
}

fn print_out(text: &str) -> Result<(), JobError> {
    let mut out = std::io::stdout().lock();
    writeln!(out, "{text}")
        .and_then(|()| out.flush())
        .map_err(|e| JobError::File {
            path: "stdout".into(),
            message: e.to_string(),
        })
}
