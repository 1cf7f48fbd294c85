//! Command-line arguments (clap derive) and their checks, giving a [`JobPlan`].

use crate::error::JobError;
use crate::track::{CoolingTrack, MAX_STEPS};
use clap::{Args, Parser, Subcommand};
use ratewell_client::{DEFAULT_ENDPOINT, DatasetRef};
use std::path::PathBuf;
use std::time::Duration;

const AFTER_HELP: &str = "\
The dataset served by a default ratewell-server and the cooling track are INVENTED for the demo;
the numbers are not for science.

Exit status: 0 success (verify: PASS); 1 server, connection or file failure (verify: FAIL);
2 bad arguments; 3 the dataset's content hash or stamp differs from what was asked for (pinning);
4 a value evaluated locally differs from the server's lookup of it.";

/// An example simulation job for ratewell: a plasma parcel cools along an invented track; the
/// job fetches a species' rate tables once, evaluates them locally at every step, asks the
/// server for level populations every few steps, and prints a JSON summary with a checksum of
/// every number it computed.
#[derive(Debug, Parser)]
#[command(name = "ratewell-demo-job", version, after_help = AFTER_HELP)]
pub(crate) struct Cli {
    #[command(subcommand)]
    pub(crate) command: Command,
}

/// The subcommands.
#[derive(Debug, Subcommand)]
pub(crate) enum Command {
    /// Run one job and print its JSON summary on standard output.
    Run(Box<RunArgs>),
    /// Compare job summaries: same dataset content hash and identical checksums (PASS/FAIL).
    Verify(VerifyArgs),
}

/// `run` arguments.
#[derive(Debug, Args)]
pub(crate) struct RunArgs {
    /// Server address.
    #[arg(long, env = "RATEWELL_SERVER", default_value = DEFAULT_ENDPOINT)]
    pub(crate) server: String,
    /// Dataset id.
    #[arg(long, env = "RATEWELL_DATASET", default_value = "demo")]
    pub(crate) dataset: String,
    /// Dataset version (default: the newest the server holds).
    #[arg(long, env = "RATEWELL_DATASET_VERSION", value_name = "VERSION")]
    pub(crate) dataset_version: Option<String>,
    /// Refuse any answer whose dataset content hash differs (blake3, 64 hex digits; empty: no pin).
    #[arg(long, env = "RATEWELL_PIN_HASH", value_name = "HASH")]
    pub(crate) pin_hash: Option<String>,
    /// Species whose tables the job uses.
    #[arg(long, default_value = "Mk II")]
    pub(crate) species: String,
    /// Name of this job in its summary (default: from Slurm's job and task ids, else the pid).
    #[arg(long, env = "RATEWELL_JOB_ID")]
    pub(crate) job_id: Option<String>,
    /// Steps along the cooling track (each evaluates every rate table locally).
    #[arg(long, default_value_t = 2000)]
    pub(crate) steps: usize,
    /// Ask the server for level populations every this many steps (and at the last step).
    #[arg(long, default_value_t = 200)]
    pub(crate) solve_every: usize,
    /// Electron temperature at the first step, K.
    #[arg(long, default_value_t = 2.0e5, allow_negative_numbers = true)]
    pub(crate) t_start_k: f64,
    /// Electron temperature at the last step, K (below the start: the parcel cools).
    #[arg(long, default_value_t = 5.0e3, allow_negative_numbers = true)]
    pub(crate) t_end_k: f64,
    /// Electron density at the first step, cm^-3 (n_e T then stays constant).
    #[arg(long, default_value_t = 1.0e8, allow_negative_numbers = true)]
    pub(crate) ne_start_cm3: f64,
    /// Print only the summary (no progress lines on standard error), e.g. where both streams
    /// land in one log.
    #[arg(long)]
    pub(crate) quiet: bool,
    /// Take the tables from this table file (written by `ratewell save-tables`) instead of the
    /// server: for nodes with no route to the service. No server is contacted, so there are no
    /// population solves and no bit check against server lookups.
    #[arg(long, value_name = "FILE", conflicts_with = "cache_dir")]
    pub(crate) table_file: Option<PathBuf>,
    /// Shared table-file folder (e.g. node-local /tmp): the first job on a node fetches and
    /// writes the tables, the others read them, so a node makes one fetch.
    #[arg(long, env = "RATEWELL_CACHE_DIR", value_name = "DIR")]
    pub(crate) cache_dir: Option<PathBuf>,
    /// Time budget of each server call, seconds (> 0, at most 3600).
    #[arg(long, default_value_t = 10.0, allow_negative_numbers = true)]
    pub(crate) timeout_s: f64,
    /// Further client settings as `key=value;...`, the same keys as every ratewell client
    /// (token_file, tls_ca_file, tls_server_name, wait_for_server_s, call_timeout_s,
    /// fall_back_to_fetched_tables).
    #[arg(
        long,
        env = "RATEWELL_CLIENT_OPTIONS",
        value_name = "OPTIONS",
        default_value = ""
    )]
    pub(crate) client_options: String,
}

/// `verify` arguments.
#[derive(Debug, Args)]
pub(crate) struct VerifyArgs {
    /// JSON summaries written by `run`.
    #[arg(required = true)]
    pub(crate) summaries: Vec<PathBuf>,
}

/// A checked job: where to connect, what to fetch, the track and the solve cadence.
#[derive(Debug, Clone)]
pub(crate) struct JobPlan {
    /// Server address.
    pub(crate) server: String,
    /// Dataset (with the pinned hash, if any).
    pub(crate) dataset: DatasetRef,
    /// Species name.
    pub(crate) species: String,
    /// Name in the summary.
    pub(crate) job_id: String,
    /// The parcel's path.
    pub(crate) track: CoolingTrack,
    /// Steps between population solves.
    pub(crate) solve_every: usize,
    /// Time budget of each call.
    pub(crate) call_timeout: Duration,
    /// `key=value;...` client settings (checked when the client is made).
    pub(crate) client_options: String,
    /// No progress lines.
    pub(crate) quiet: bool,
    /// Where the tables come from.
    pub(crate) tables_from: TablesFrom,
}

/// Where a job takes its tables from.
#[derive(Debug, Clone, PartialEq)]
pub(crate) enum TablesFrom {
    /// Fetched from the server (through the shared folder when one is given).
    Server {
        /// The shared table-file folder, if any.
        cache_dir: Option<PathBuf>,
    },
    /// Read from a table file; no server is contacted.
    File(PathBuf),
}

/// Longest time budget per call, seconds.
const MAX_TIMEOUT_S: f64 = 3600.0;

impl RunArgs {
    /// Checks every value, naming the first bad one.
    pub(crate) fn plan(&self) -> Result<JobPlan, JobError> {
        let track = CoolingTrack::new(self.t_start_k, self.t_end_k, self.ne_start_cm3, self.steps)?;
        if !(1..=MAX_STEPS).contains(&self.solve_every) {
            return Err(JobError::argument(
                "solve-every",
                self.solve_every,
                format!("must be within [1, {MAX_STEPS}]"),
            ));
        }
        if !(self.timeout_s.is_finite() && self.timeout_s > 0.0 && self.timeout_s <= MAX_TIMEOUT_S) {
            return Err(JobError::argument(
                "timeout-s",
                format!("{} s", self.timeout_s),
                format!("must be > 0 and at most {MAX_TIMEOUT_S} s"),
            ));
        }
        if self.species.trim().is_empty() {
            return Err(JobError::argument(
                "species",
                "\"\"",
                "must be a species name, e.g. \"Mk II\"",
            ));
        }
        let mut dataset = DatasetRef::new(self.dataset.clone())?;
        if let Some(v) = &self.dataset_version {
            dataset = dataset.with_version(v.clone());
        }
        if let Some(h) = self.pin_hash.as_deref().filter(|h| !h.trim().is_empty()) {
            dataset = dataset.pinned(h)?;
        }
        let job_id = match &self.job_id {
            Some(id) if !id.trim().is_empty() => id.clone(),
            _ => default_job_id(),
        };
        Ok(JobPlan {
            server: self.server.clone(),
            dataset,
            species: self.species.clone(),
            job_id,
            track,
            solve_every: self.solve_every,
            call_timeout: Duration::from_secs_f64(self.timeout_s),
            client_options: self.client_options.clone(),
            quiet: self.quiet,
            tables_from: match &self.table_file {
                Some(path) => TablesFrom::File(path.clone()),
                None => TablesFrom::Server {
                    cache_dir: self.cache_dir.clone(),
                },
            },
        })
    }
}

/// "slurm-JOBID-TASK" inside a Slurm step, else "pid-PID".
fn default_job_id() -> String {
    match (std::env::var("SLURM_JOB_ID"), std::env::var("SLURM_PROCID")) {
        (Ok(job), Ok(task)) => format!("slurm-{job}-{task}"),
        _ => format!("pid-{}", std::process::id()),
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use clap::CommandFactory;

    fn parse(args: &[&str]) -> RunArgs {
        let all: Vec<&str> = ["ratewell-demo-job", "run"].iter().chain(args).copied().collect();
        match Cli::try_parse_from(all).unwrap().command {
            Command::Run(r) => *r,
            Command::Verify(_) => panic!("expected run"),
        }
    }

    #[test]
    fn the_command_line_is_well_formed() {
        Cli::command().debug_assert();
    }

    #[test]
    fn defaults_make_a_valid_plan_and_bad_values_are_named() {
        let plan = parse(&["--server", "http://127.0.0.1:1", "--job-id", "a"])
            .plan()
            .unwrap();
        assert_eq!(plan.server, "http://127.0.0.1:1");
        assert_eq!(plan.job_id, "a");
        assert_eq!(plan.dataset.id(), "demo");
        assert_eq!(plan.track.steps(), 2000);
        let e = parse(&["--solve-every", "0"]).plan().unwrap_err().to_string();
        assert_eq!(e, "solve-every = 0: must be within [1, 1000000]");
        let e = parse(&["--timeout-s", "-1"]).plan().unwrap_err().to_string();
        assert_eq!(e, "timeout-s = -1 s: must be > 0 and at most 3600 s");
        let e = parse(&["--pin-hash", "abc"]).plan().unwrap_err().to_string();
        assert!(
            e.starts_with("pin-hash = \"abc\": must be 64 hexadecimal digits"),
            "{e}"
        );
        let hash = "ab".repeat(32);
        let plan = parse(&["--pin-hash", &hash, "--dataset-version", "1.0.0"])
            .plan()
            .unwrap();
        assert_eq!(plan.dataset.pinned_content_hash(), Some(hash.as_str()));
        assert_eq!(plan.dataset.version(), Some("1.0.0"));
        // An empty value (e.g. an unset variable passed through a batch script) means no pin.
        let plan = parse(&["--pin-hash", ""]).plan().unwrap();
        assert_eq!(plan.dataset.pinned_content_hash(), None);
    }
}
