//! Command-line arguments (clap derive).

use clap::{Args, Parser, Subcommand, ValueEnum};
use ratewell_client::{
    DEFAULT_ENDPOINT, DatasetRef, DensityUnit, Direction, EnergyUnit, PowerUnit, RateUnit, TemperatureUnit,
    Transition,
};
use std::path::PathBuf;
use std::time::Duration;

const EXIT_CODES: &str = "\
Exit status: 0 success; 1 the server or the connection failed; 2 bad arguments;
3 the dataset's content hash or stamp differs from what was asked for (pinning).";

/// Ask a ratewell server for electron-impact rate coefficients, level populations and
/// dataset comparisons. Every answer names the dataset id, version and content hash.
#[derive(Debug, Parser)]
#[command(name = "ratewell", version, after_help = EXIT_CODES)]
pub(crate) struct Cli {
    /// Server address; several, comma-separated, for failover.
    #[arg(
        long,
        global = true,
        env = "RATEWELL_SERVER",
        default_value = DEFAULT_ENDPOINT,
        value_delimiter = ','
    )]
    pub(crate) server: Vec<String>,
    /// Dataset id (default: the only dataset the server holds).
    #[arg(long, global = true)]
    pub(crate) dataset: Option<String>,
    /// Dataset version (default: the newest loaded).
    #[arg(long, global = true, value_name = "VERSION")]
    pub(crate) dataset_version: Option<String>,
    /// Refuse any answer whose dataset content hash differs (64 hex digits).
    #[arg(long, global = true, value_name = "HASH")]
    pub(crate) pin_hash: Option<String>,
    /// Refuse any answer whose tables digest differs (64 hex digits): the same numbers bit for
    /// bit, not only the same data (every answer shows its tables digest).
    #[arg(long, global = true, value_name = "DIGEST")]
    pub(crate) pin_tables_digest: Option<String>,
    /// Print JSON for scripts instead of aligned tables.
    #[arg(long, global = true)]
    pub(crate) json: bool,
    /// Time budget of each call, seconds (> 0, at most 3600).
    #[arg(
        long,
        global = true,
        default_value = "10",
        value_parser = parse_seconds,
        value_name = "SECONDS",
        allow_negative_numbers = true
    )]
    pub(crate) timeout: Duration,
    /// File holding the bearer token for servers that require one (its first line that is
    /// not empty or a # comment). The RATEWELL_TOKEN environment variable is used otherwise.
    #[arg(long, global = true, env = "RATEWELL_TOKEN_FILE", value_name = "PATH")]
    pub(crate) token_file: Option<std::path::PathBuf>,
    /// Connect with TLS, trusting the certificate authority in this PEM file (addresses then
    /// use https://).
    #[arg(long, global = true, env = "RATEWELL_TLS_CA_FILE", value_name = "PATH")]
    pub(crate) tls_ca_file: Option<std::path::PathBuf>,
    /// The name the server certificate carries, when it differs from the address's host.
    #[arg(long, global = true, value_name = "NAME", requires = "tls_ca_file")]
    pub(crate) tls_server_name: Option<String>,
    /// Keep trying for up to this long while no server can be reached (a job started
    /// before its server, or across a restart), seconds.
    #[arg(
        long,
        global = true,
        value_parser = parse_seconds,
        value_name = "SECONDS",
        allow_negative_numbers = true
    )]
    pub(crate) wait_for_server: Option<Duration>,
    #[command(subcommand)]
    pub(crate) command: Command,
}

/// The subcommands.
#[derive(Debug, Subcommand)]
pub(crate) enum Command {
    /// List the datasets the server holds: id, version, content hash, species.
    Datasets,
    /// Levels and transitions of one species.
    Species(SpeciesArgs),
    /// Rate coefficients at given temperatures (server lookup, or --local evaluation).
    Rates(RatesArgs),
    /// Level populations, radiated power and strongest lines at temperatures and densities.
    Populations(PopulationArgs),
    /// Compare two datasets on one server, or one dataset on two servers.
    Compare(CompareArgs),
    /// Write a species' tables (T, Upsilon, q_ul, q_lu per transition) as CSV or JSON.
    Export(ExportArgs),
    /// Fetch a species' tables and write them as a table file (for nodes with no route to the
    /// server: every client language loads it with no server, digest checked).
    SaveTables(SaveTablesArgs),
    /// Serving status of every server address given.
    Health,
    /// Load or reload a dataset folder of the server's data folder (an Admin call: needs a
    /// token, --token-file or RATEWELL_TOKEN). A failed load leaves the previous data serving.
    Load {
        /// The folder's name inside the server's data folder.
        folder: String,
    },
}

/// `species` arguments.
#[derive(Debug, Args)]
pub(crate) struct SpeciesArgs {
    /// Species name as the dataset spells it.
    pub(crate) species: String,
    /// Unit of level energies: cm-1, eV or J.
    #[arg(long, default_value = "cm-1")]
    pub(crate) energy_unit: EnergyUnit,
}

/// Which rate coefficients to show.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub(crate) enum DirectionArg {
    /// Excitation q_lu only.
    Excitation,
    /// De-excitation q_ul only.
    Deexcitation,
    /// Both.
    Both,
}

impl From<DirectionArg> for Direction {
    fn from(d: DirectionArg) -> Self {
        match d {
            DirectionArg::Excitation => Direction::Excitation,
            DirectionArg::Deexcitation => Direction::Deexcitation,
            DirectionArg::Both => Direction::Both,
        }
    }
}

/// `rates` arguments.
#[derive(Debug, Args)]
pub(crate) struct RatesArgs {
    /// Species name.
    pub(crate) species: String,
    /// Electron temperatures, comma-separated, in --unit.
    #[arg(long, required = true, value_delimiter = ',', allow_negative_numbers = true)]
    pub(crate) temperatures: Vec<f64>,
    /// Temperature unit: K or eV.
    #[arg(long, default_value = "K")]
    pub(crate) unit: TemperatureUnit,
    /// Transition upper-lower (e.g. 4-1); repeat for several; default: all.
    #[arg(long = "transition", value_name = "UPPER-LOWER")]
    pub(crate) transitions: Vec<Transition>,
    /// Which rate coefficients.
    #[arg(long, value_enum, default_value = "both")]
    pub(crate) direction: DirectionArg,
    /// Extrapolate (flagged) outside the table grid instead of refusing.
    #[arg(long)]
    pub(crate) extrapolate: bool,
    /// Fetch the tables and evaluate here instead of asking the server for each value.
    #[arg(long)]
    pub(crate) local: bool,
    /// Rate unit: cm3/s or m3/s.
    #[arg(long, default_value = "cm3/s")]
    pub(crate) rate_unit: RateUnit,
}

/// `populations` arguments.
#[derive(Debug, Args)]
pub(crate) struct PopulationArgs {
    /// Species name.
    pub(crate) species: String,
    /// Electron temperatures, comma-separated, in --unit.
    #[arg(long, required = true, value_delimiter = ',', allow_negative_numbers = true)]
    pub(crate) temperatures: Vec<f64>,
    /// Temperature unit: K or eV.
    #[arg(long, default_value = "K")]
    pub(crate) unit: TemperatureUnit,
    /// Electron densities, comma-separated, in --density-unit.
    #[arg(long, required = true, value_delimiter = ',', allow_negative_numbers = true)]
    pub(crate) densities: Vec<f64>,
    /// Density unit: cm-3 or m-3.
    #[arg(long, default_value = "cm-3")]
    pub(crate) density_unit: DensityUnit,
    /// Every temperature with every density (else pairs of equal-length lists).
    #[arg(long)]
    pub(crate) grid: bool,
    /// Extrapolate (flagged) outside the table grid instead of refusing.
    #[arg(long)]
    pub(crate) extrapolate: bool,
    /// Unit of emissivities and radiated power: W or erg/s.
    #[arg(long, default_value = "W")]
    pub(crate) power_unit: PowerUnit,
    /// Strongest lines to show per point (0: none).
    #[arg(long, default_value_t = 3)]
    pub(crate) lines: usize,
    /// Temperatures (grid) or points (pairs) per server call; long work shows progress.
    #[arg(long, default_value_t = 16, value_parser = clap::value_parser!(u32).range(1..=100_000))]
    pub(crate) chunk: u32,
}

/// `compare` arguments.
#[derive(Debug, Args)]
pub(crate) struct CompareArgs {
    /// First dataset: id, id@version, optionally #hash to pin.
    #[arg(long, value_name = "ID[@VERSION][#HASH]")]
    pub(crate) first: DatasetRef,
    /// Second dataset: id, id@version, optionally #hash to pin.
    #[arg(long, value_name = "ID[@VERSION][#HASH]")]
    pub(crate) second: DatasetRef,
    /// Read the second dataset from this server instead (tables compared here).
    #[arg(long, value_name = "URL")]
    pub(crate) second_server: Option<String>,
    /// Species to compare, comma-separated (default: every species in both).
    #[arg(long, value_delimiter = ',')]
    pub(crate) species: Vec<String>,
}

/// Export file formats.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub(crate) enum ExportFormat {
    /// Comma-separated values, with the dataset stamp in a first comment line.
    Csv,
    /// One JSON document with the stamp and every table.
    Json,
}

/// `export` arguments.
#[derive(Debug, Args)]
pub(crate) struct ExportArgs {
    /// Species name.
    pub(crate) species: String,
    /// File format.
    #[arg(long, value_enum, default_value = "csv")]
    pub(crate) format: ExportFormat,
    /// Write to this file instead of standard output.
    #[arg(long, value_name = "FILE")]
    pub(crate) output: Option<PathBuf>,
}

/// `save-tables` arguments.
#[derive(Debug, Args)]
pub(crate) struct SaveTablesArgs {
    /// Species name.
    pub(crate) species: String,
    /// Folder to write the table file into (created if missing).
    #[arg(long, value_name = "DIR", default_value = ".")]
    pub(crate) output_dir: PathBuf,
}

/// Seconds as a positive decimal number, at most an hour.
fn parse_seconds(s: &str) -> Result<Duration, String> {
    let v: f64 = s
        .parse()
        .map_err(|_| format!("{s:?} is not a number of seconds"))?;
    if !v.is_finite() || v <= 0.0 || v > 3600.0 {
        return Err(format!("{v} s: must be > 0 and at most 3600"));
    }
    Ok(Duration::from_secs_f64(v))
}

#[cfg(test)]
mod tests {
    use super::*;

    fn parse(args: &[&str]) -> Result<Cli, clap::Error> {
        Cli::try_parse_from(std::iter::once("ratewell").chain(args.iter().copied()))
    }

    // --version is the tool's own version (common practice, no source); the dataset's version
    // has its own flag.
    #[test]
    fn version_flag_prints_the_tool_version() {
        let e = parse(&["--version"]).unwrap_err();
        assert_eq!(e.kind(), clap::error::ErrorKind::DisplayVersion);
        assert!(e.to_string().contains(env!("CARGO_PKG_VERSION")), "{e}");
    }

    #[test]
    fn rates_arguments_parse() {
        let cli = parse(&[
            "--dataset",
            "demo",
            "--dataset-version",
            "1.0.0",
            "rates",
            "X",
            "--temperatures",
            "5000,10000",
            "--unit",
            "eV",
            "--transition",
            "4-1",
            "--transition",
            "2-1",
            "--direction",
            "excitation",
            "--extrapolate",
            "--local",
            "--json",
        ])
        .unwrap();
        assert_eq!(cli.dataset.as_deref(), Some("demo"));
        assert_eq!(cli.dataset_version.as_deref(), Some("1.0.0"));
        assert!(cli.json);
        let Command::Rates(r) = cli.command else {
            panic!("not rates")
        };
        assert_eq!(r.temperatures, vec![5000.0, 10000.0]);
        assert_eq!(r.unit, TemperatureUnit::ElectronVolt);
        assert_eq!(r.transitions.len(), 2);
        assert_eq!(r.transitions[0].to_string(), "4-1");
        assert_eq!(r.direction, DirectionArg::Excitation);
        assert!(r.extrapolate && r.local);
    }

    #[test]
    fn global_defaults_and_server_lists() {
        let cli = parse(&["health"]).unwrap();
        if std::env::var_os("RATEWELL_SERVER").is_none() {
            assert_eq!(cli.server, vec![DEFAULT_ENDPOINT.to_string()]);
        }
        assert_eq!(cli.timeout, Duration::from_secs(10));
        let cli = parse(&[
            "--server",
            "http://a:1,http://b:2",
            "--timeout",
            "2.5",
            "datasets",
        ])
        .unwrap();
        assert_eq!(cli.server.len(), 2);
        assert_eq!(cli.timeout, Duration::from_millis(2500));
    }

    #[test]
    fn bad_arguments_name_the_argument_value_and_range() {
        let e = parse(&["--timeout", "-1", "health"]).unwrap_err().to_string();
        assert!(e.contains("--timeout") && e.contains("must be > 0"), "{e}");
        let e = parse(&["rates", "X", "--temperatures", "5000,abc"])
            .unwrap_err()
            .to_string();
        assert!(e.contains("--temperatures") && e.contains("abc"), "{e}");
        let e = parse(&["rates", "X", "--temperatures", "1", "--unit", "F"])
            .unwrap_err()
            .to_string();
        assert!(e.contains("--unit") && e.contains("K, eV"), "{e}");
        let e = parse(&["rates", "X", "--temperatures", "1", "--transition", "1-4"])
            .unwrap_err()
            .to_string();
        assert!(e.contains("--transition") && e.contains("upper > lower"), "{e}");
        let e = parse(&["compare", "--first", "demo@", "--second", "demo"])
            .unwrap_err()
            .to_string();
        assert!(e.contains("--first") && e.contains("id@version"), "{e}");
        let e = parse(&[
            "populations",
            "X",
            "--temperatures",
            "1",
            "--densities",
            "1",
            "--chunk",
            "0",
        ])
        .unwrap_err()
        .to_string();
        assert!(e.contains("--chunk") && e.contains("1..=100000"), "{e}");
        // Negative numbers reach our own check (which names the index), not clap's flag parser.
        let cli = parse(&["rates", "X", "--temperatures", "-5"]).unwrap();
        let Command::Rates(r) = cli.command else {
            panic!("not rates")
        };
        assert_eq!(r.temperatures, vec![-5.0]);
    }

    #[test]
    fn compare_and_export_arguments_parse() {
        let cli = parse(&[
            "compare",
            "--first",
            "demo@1.0.0",
            "--second",
            "demo@1.1.0",
            "--second-server",
            "http://b:1",
            "--species",
            "X,Y",
        ])
        .unwrap();
        let Command::Compare(c) = cli.command else {
            panic!("not compare")
        };
        assert_eq!(c.first.version(), Some("1.0.0"));
        assert_eq!(c.species, vec!["X", "Y"]);
        let cli = parse(&["export", "X", "--format", "json", "--output", "/tmp/x.json"]).unwrap();
        let Command::Export(e) = cli.command else {
            panic!("not export")
        };
        assert_eq!(e.format, ExportFormat::Json);
    }
}
