//! Server configuration: built-in defaults, then a TOML file (`--config`), then environment
//! variables (`RATEWELL_*`), then command-line flags. Validated at start-up; the effective
//! values are logged.

use crate::engine::{EngineConfig, GridSpec};
use crate::limits::Limits;
use clap::Parser;
use serde::Deserialize;
use std::net::SocketAddr;
use std::path::{Path, PathBuf};
use std::time::Duration;

/// Why the configuration was refused.
#[derive(Debug, thiserror::Error)]
pub enum ConfigError {
    /// The config file could not be read.
    #[error("cannot read config file {}: {source}", path.display())]
    Read {
        /// The file.
        path: PathBuf,
        /// The I/O error.
        source: std::io::Error,
    },
    /// The config file is not valid TOML for this struct.
    #[error("config file {}: {message}", path.display())]
    Parse {
        /// The file.
        path: PathBuf,
        /// The parser's message (with line and column).
        message: String,
    },
    /// A setting is outside its allowed range.
    #[error("config {field} = {value}: {allowed}")]
    Invalid {
        /// Setting name.
        field: &'static str,
        /// Its value.
        value: String,
        /// What is allowed.
        allowed: &'static str,
    },
}

/// Effective server settings. Every limit lives here.
#[derive(Debug, Clone, PartialEq)]
pub struct Config {
    /// Address to listen on.
    pub listen: SocketAddr,
    /// Folder holding dataset folders (each with a `dataset.toml`); `None` serves the demo only.
    pub data_dir: Option<PathBuf>,
    /// Load the embedded (invented) demo dataset.
    pub demo: bool,
    /// Grid every table is precomputed on at load.
    pub default_grid: GridSpec,
    /// Largest encoded message the server decodes or encodes, bytes (tonic's default is 4 MiB;
    /// raised so a 45,000-transition species' tables fit in one FetchTables answer).
    pub max_message_bytes: usize,
    /// Engine calls in flight at once; more are shed with RESOURCE_EXHAUSTED.
    pub max_in_flight: usize,
    /// Largest transitions x temperatures in one lookup.
    pub max_lookup_values: usize,
    /// Largest number of (Te, ne) points in one solve.
    pub max_solve_points: usize,
    /// Dataset, request, table-cache and connection limits (the `[limits]` table of the
    /// config file).
    pub limits: Limits,
    /// Upper bound on any request's duration (a client's grpc-timeout may be shorter).
    pub request_timeout: Duration,
    /// HTTP/2 keepalive ping interval.
    pub keepalive_interval: Duration,
    /// Close each client connection gracefully (HTTP/2 GOAWAY: calls in flight finish) after
    /// it has been open this long, so clients reconnect and spread over replicas added since;
    /// `None`: connections live as long as their clients.
    pub max_connection_age: Option<Duration>,
    /// HTTP/2 keepalive ping timeout.
    pub keepalive_timeout: Duration,
    /// After health turns NOT_SERVING at shutdown, wait this long before refusing new calls.
    pub drain: Duration,
    /// Longest wait for in-flight calls to finish at shutdown.
    pub shutdown_grace: Duration,
    /// Serve the benchmark-only Transport service (empty and echo RPCs).
    pub benchmark_endpoints: bool,
    /// Log as JSON lines instead of text.
    pub json_logs: bool,
    /// File of `NAME TOKEN` lines (see [`crate::auth`]); without it Admin calls are refused.
    pub tokens_file: Option<PathBuf>,
    /// Which calls need a bearer token: Admin only, or every call but health checks.
    pub auth_scope: crate::auth::Scope,
    /// PEM certificate chain for TLS (with `tls_key_file`); without both, plain HTTP/2.
    pub tls_cert_file: Option<PathBuf>,
    /// PEM private key of `tls_cert_file`.
    pub tls_key_file: Option<PathBuf>,
    /// Address of the plain-HTTP Prometheus endpoint (`GET /metrics`); `None` serves none.
    pub metrics_listen: Option<SocketAddr>,
}

impl Default for Config {
    fn default() -> Self {
        let engine = EngineConfig::default();
        Self {
            listen: SocketAddr::from(([127, 0, 0, 1], 50051)),
            data_dir: None,
            demo: true,
            default_grid: engine.default_grid,
            max_message_bytes: 64 * 1024 * 1024,
            max_in_flight: 256,
            max_lookup_values: engine.max_lookup_values,
            max_solve_points: engine.max_solve_points,
            limits: engine.limits,
            request_timeout: Duration::from_secs(120),
            keepalive_interval: Duration::from_secs(30),
            max_connection_age: None,
            keepalive_timeout: Duration::from_secs(10),
            drain: Duration::from_millis(500),
            shutdown_grace: Duration::from_secs(10),
            benchmark_endpoints: false,
            json_logs: false,
            tokens_file: None,
            auth_scope: crate::auth::Scope::Admin,
            tls_cert_file: None,
            tls_key_file: None,
            metrics_listen: None,
        }
    }
}

/// Command-line flags; each can also come from the environment variable shown.
#[derive(Debug, Default, Parser)]
#[command(
    name = "ratewell-server",
    version,
    about = "Serve electron-impact rate coefficients, level populations and line emissivities over gRPC"
)]
pub struct Flags {
    /// Check the dataset folder DIR without serving: print every problem (file, line, field)
    /// or a summary, then warnings about data that load but look wrong; exit 0 when it loads,
    /// 1 when it does not. Uses the dataset limits of the other settings.
    #[arg(long, value_name = "DIR")]
    pub check_dataset: Option<PathBuf>,
    /// TOML file with any of the settings below (snake_case keys).
    #[arg(long, env = "RATEWELL_CONFIG")]
    pub config: Option<PathBuf>,
    /// Listen address [default: 127.0.0.1:50051].
    #[arg(long, env = "RATEWELL_LISTEN")]
    pub listen: Option<SocketAddr>,
    /// Folder of dataset folders to load at start and to reload from (a folder that fails to
    /// load is refused on its own, logged with file, line and field; the others are served).
    #[arg(long, env = "RATEWELL_DATA_DIR")]
    pub data_dir: Option<PathBuf>,
    /// Do not load the embedded demo dataset.
    #[arg(long, env = "RATEWELL_NO_DEMO")]
    pub no_demo: bool,
    /// Lowest temperature of the default table grid, K [default: 10].
    #[arg(long, env = "RATEWELL_GRID_T_MIN_K")]
    pub grid_t_min_k: Option<f64>,
    /// Highest temperature of the default table grid, K [default: 1e9].
    #[arg(long, env = "RATEWELL_GRID_T_MAX_K")]
    pub grid_t_max_k: Option<f64>,
    /// Knots per decade of the default table grid [default: 20].
    #[arg(long, env = "RATEWELL_GRID_POINTS_PER_DECADE")]
    pub grid_points_per_decade: Option<u32>,
    /// Largest message decoded or encoded, bytes [default: 67108864].
    #[arg(long, env = "RATEWELL_MAX_MESSAGE_BYTES")]
    pub max_message_bytes: Option<usize>,
    /// Engine calls in flight at once before shedding load [default: 256].
    #[arg(long, env = "RATEWELL_MAX_IN_FLIGHT")]
    pub max_in_flight: Option<usize>,
    /// Largest transitions x temperatures per lookup [default: 4000000].
    #[arg(long, env = "RATEWELL_MAX_LOOKUP_VALUES")]
    pub max_lookup_values: Option<usize>,
    /// Largest (Te, ne) points per solve [default: 100000].
    #[arg(long, env = "RATEWELL_MAX_SOLVE_POINTS")]
    pub max_solve_points: Option<usize>,
    /// Longest request, seconds [default: 120].
    #[arg(long, env = "RATEWELL_REQUEST_TIMEOUT_S")]
    pub request_timeout_s: Option<f64>,
    /// Longest wait for in-flight calls at shutdown, seconds [default: 10].
    #[arg(long, env = "RATEWELL_SHUTDOWN_GRACE_S")]
    pub shutdown_grace_s: Option<f64>,
    /// Close client connections gracefully after this many seconds, so clients reconnect and
    /// spread over new replicas (0: never) [default: 0].
    #[arg(long, env = "RATEWELL_MAX_CONNECTION_AGE_S")]
    pub max_connection_age_s: Option<f64>,
    /// Byte budget of tables cached on non-default grids [default: 268435456].
    #[arg(long, env = "RATEWELL_TABLE_CACHE_BYTES")]
    pub table_cache_bytes: Option<u64>,
    /// Most levels in one species of a loaded dataset [default: 3000].
    #[arg(long, env = "RATEWELL_MAX_LEVELS_PER_SPECIES")]
    pub max_levels_per_species: Option<u64>,
    /// Most TCP connections served at once [default: 1000].
    #[arg(long, env = "RATEWELL_MAX_CONNECTIONS")]
    pub max_connections: Option<u64>,
    /// Longest wait for a new connection's HTTP/2 preface, seconds [default: 10].
    #[arg(long, env = "RATEWELL_HANDSHAKE_TIMEOUT_S")]
    pub handshake_timeout_s: Option<f64>,
    /// Serve the benchmark-only Transport service.
    #[arg(long, env = "RATEWELL_BENCHMARK_ENDPOINTS")]
    pub benchmark_endpoints: bool,
    /// Log JSON lines.
    #[arg(long, env = "RATEWELL_JSON_LOGS")]
    pub json_logs: bool,
    /// File of `NAME TOKEN` lines: bearer tokens accepted for Admin (and, with
    /// `--auth-scope all`, for every call). Without it every Admin call is refused.
    #[arg(long, env = "RATEWELL_TOKENS_FILE")]
    pub tokens_file: Option<PathBuf>,
    /// Which calls need a token: `admin` (Admin only) or `all` (all but health checks)
    /// [default: admin].
    #[arg(long, env = "RATEWELL_AUTH_SCOPE", value_enum)]
    pub auth_scope: Option<crate::auth::Scope>,
    /// PEM certificate chain (leaf first): serve TLS instead of plain HTTP/2 (needs
    /// `--tls-key-file`).
    #[arg(long, env = "RATEWELL_TLS_CERT_FILE")]
    pub tls_cert_file: Option<PathBuf>,
    /// PEM private key of the TLS certificate.
    #[arg(long, env = "RATEWELL_TLS_KEY_FILE")]
    pub tls_key_file: Option<PathBuf>,
    /// Serve Prometheus metrics at http://ADDRESS/metrics (plain HTTP; keep it internal)
    /// [default: none].
    #[arg(long, env = "RATEWELL_METRICS_LISTEN")]
    pub metrics_listen: Option<SocketAddr>,
}

/// The settings a config file may hold (all optional).
#[derive(Debug, Default, Deserialize)]
#[serde(deny_unknown_fields)]
struct FileSettings {
    listen: Option<SocketAddr>,
    data_dir: Option<PathBuf>,
    demo: Option<bool>,
    grid_t_min_k: Option<f64>,
    grid_t_max_k: Option<f64>,
    grid_points_per_decade: Option<u32>,
    max_message_bytes: Option<usize>,
    max_in_flight: Option<usize>,
    max_lookup_values: Option<usize>,
    max_solve_points: Option<usize>,
    limits: Option<Limits>,
    request_timeout_s: Option<f64>,
    keepalive_interval_s: Option<f64>,
    keepalive_timeout_s: Option<f64>,
    max_connection_age_s: Option<f64>,
    drain_s: Option<f64>,
    shutdown_grace_s: Option<f64>,
    benchmark_endpoints: Option<bool>,
    json_logs: Option<bool>,
    tokens_file: Option<PathBuf>,
    auth_scope: Option<crate::auth::Scope>,
    tls_cert_file: Option<PathBuf>,
    tls_key_file: Option<PathBuf>,
    metrics_listen: Option<SocketAddr>,
}

fn seconds(field: &'static str, s: f64) -> Result<Duration, ConfigError> {
    if s.is_finite() && (0.0..=86_400.0).contains(&s) {
        Ok(Duration::from_secs_f64(s))
    } else {
        Err(ConfigError::Invalid {
            field,
            value: s.to_string(),
            allowed: "must be a number of seconds within [0, 86400]",
        })
    }
}

/// `max_connection_age_s`: 0 is off, anything else a number of seconds.
fn connection_age(s: f64) -> Result<Option<Duration>, ConfigError> {
    let age = seconds("max_connection_age_s", s)?;
    Ok((!age.is_zero()).then_some(age))
}

impl Config {
    /// Defaults, then the file named by `flags.config`, then environment and flags (clap has
    /// already merged those two, flags winning), then validation.
    pub fn resolve(flags: &Flags) -> Result<Self, ConfigError> {
        let mut c = Config::default();
        if let Some(path) = &flags.config {
            c.apply_file(path)?;
        }
        if let Some(v) = flags.listen {
            c.listen = v;
        }
        if let Some(v) = &flags.data_dir {
            c.data_dir = Some(v.clone());
        }
        if flags.no_demo {
            c.demo = false;
        }
        if let Some(v) = flags.grid_t_min_k {
            c.default_grid.t_min_k = v;
        }
        if let Some(v) = flags.grid_t_max_k {
            c.default_grid.t_max_k = v;
        }
        if let Some(v) = flags.grid_points_per_decade {
            c.default_grid.points_per_decade = v;
        }
        if let Some(v) = flags.max_message_bytes {
            c.max_message_bytes = v;
        }
        if let Some(v) = flags.max_in_flight {
            c.max_in_flight = v;
        }
        if let Some(v) = flags.max_lookup_values {
            c.max_lookup_values = v;
        }
        if let Some(v) = flags.max_solve_points {
            c.max_solve_points = v;
        }
        if let Some(v) = flags.request_timeout_s {
            c.request_timeout = seconds("request_timeout_s", v)?;
        }
        if let Some(v) = flags.shutdown_grace_s {
            c.shutdown_grace = seconds("shutdown_grace_s", v)?;
        }
        if let Some(v) = flags.max_connection_age_s {
            c.max_connection_age = connection_age(v)?;
        }
        if let Some(v) = &flags.tokens_file {
            c.tokens_file = Some(v.clone());
        }
        if let Some(v) = flags.auth_scope {
            c.auth_scope = v;
        }
        if let Some(v) = &flags.tls_cert_file {
            c.tls_cert_file = Some(v.clone());
        }
        if let Some(v) = &flags.tls_key_file {
            c.tls_key_file = Some(v.clone());
        }
        if let Some(v) = flags.metrics_listen {
            c.metrics_listen = Some(v);
        }
        if let Some(v) = flags.table_cache_bytes {
            c.limits.table_cache_bytes = v;
        }
        if let Some(v) = flags.max_levels_per_species {
            c.limits.max_levels_per_species = v;
        }
        if let Some(v) = flags.max_connections {
            c.limits.max_connections = v;
        }
        if let Some(v) = flags.handshake_timeout_s {
            c.limits.handshake_timeout_s = v;
        }
        c.benchmark_endpoints |= flags.benchmark_endpoints;
        c.json_logs |= flags.json_logs;
        c.validate()?;
        Ok(c)
    }

    fn apply_file(&mut self, path: &Path) -> Result<(), ConfigError> {
        let text = std::fs::read_to_string(path).map_err(|source| ConfigError::Read {
            path: path.to_owned(),
            source,
        })?;
        let f: FileSettings = toml::from_str(&text).map_err(|e| ConfigError::Parse {
            path: path.to_owned(),
            message: e.to_string(),
        })?;
        if let Some(v) = f.listen {
            self.listen = v;
        }
        // Relative paths in a config file are relative to the file.
        let beside = |v: PathBuf| {
            if v.is_relative() {
                path.parent().unwrap_or(Path::new(".")).join(v)
            } else {
                v
            }
        };
        if let Some(v) = f.data_dir {
            self.data_dir = Some(beside(v));
        }
        if let Some(v) = f.tokens_file {
            self.tokens_file = Some(beside(v));
        }
        if let Some(v) = f.auth_scope {
            self.auth_scope = v;
        }
        if let Some(v) = f.tls_cert_file {
            self.tls_cert_file = Some(beside(v));
        }
        if let Some(v) = f.tls_key_file {
            self.tls_key_file = Some(beside(v));
        }
        if let Some(v) = f.metrics_listen {
            self.metrics_listen = Some(v);
        }
        if let Some(v) = f.demo {
            self.demo = v;
        }
        if let Some(v) = f.grid_t_min_k {
            self.default_grid.t_min_k = v;
        }
        if let Some(v) = f.grid_t_max_k {
            self.default_grid.t_max_k = v;
        }
        if let Some(v) = f.grid_points_per_decade {
            self.default_grid.points_per_decade = v;
        }
        if let Some(v) = f.max_message_bytes {
            self.max_message_bytes = v;
        }
        if let Some(v) = f.max_in_flight {
            self.max_in_flight = v;
        }
        if let Some(v) = f.max_lookup_values {
            self.max_lookup_values = v;
        }
        if let Some(v) = f.max_solve_points {
            self.max_solve_points = v;
        }
        if let Some(v) = f.limits {
            self.limits = v;
        }
        for (field, value, slot) in [
            (
                "request_timeout_s",
                f.request_timeout_s,
                &mut self.request_timeout,
            ),
            (
                "keepalive_interval_s",
                f.keepalive_interval_s,
                &mut self.keepalive_interval,
            ),
            (
                "keepalive_timeout_s",
                f.keepalive_timeout_s,
                &mut self.keepalive_timeout,
            ),
            ("drain_s", f.drain_s, &mut self.drain),
            ("shutdown_grace_s", f.shutdown_grace_s, &mut self.shutdown_grace),
        ] {
            if let Some(s) = value {
                *slot = seconds(field, s)?;
            }
        }
        if let Some(v) = f.max_connection_age_s {
            self.max_connection_age = connection_age(v)?;
        }
        if let Some(v) = f.benchmark_endpoints {
            self.benchmark_endpoints = v;
        }
        if let Some(v) = f.json_logs {
            self.json_logs = v;
        }
        Ok(())
    }

    /// Checks every setting's range.
    pub fn validate(&self) -> Result<(), ConfigError> {
        let g = &self.default_grid;
        if let Err(e) = ratewell_proto::rule::LogGrid::from_range(g.t_min_k, g.t_max_k, g.points_per_decade) {
            return Err(ConfigError::Invalid {
                field: "grid",
                value: format!(
                    "[{}, {}] K at {} per decade ({e})",
                    g.t_min_k, g.t_max_k, g.points_per_decade
                ),
                allowed: "0 < t_min_k < t_max_k, finite, 1..=1000 points per decade",
            });
        }
        let positive = [
            ("max_message_bytes", self.max_message_bytes, 1024),
            ("max_in_flight", self.max_in_flight, 1),
            ("max_lookup_values", self.max_lookup_values, 1),
            ("max_solve_points", self.max_solve_points, 1),
        ];
        for (field, value, min) in positive {
            if value < min {
                return Err(ConfigError::Invalid {
                    field,
                    value: value.to_string(),
                    allowed: "must be at least 1 (1024 for max_message_bytes)",
                });
            }
        }
        if self.auth_scope == crate::auth::Scope::All && self.tokens_file.is_none() {
            return Err(ConfigError::Invalid {
                field: "auth_scope",
                value: "all".into(),
                allowed: "auth_scope = all needs a tokens_file (otherwise no call could succeed)",
            });
        }
        if self.tls_cert_file.is_some() != self.tls_key_file.is_some() {
            return Err(ConfigError::Invalid {
                field: "tls_cert_file",
                value: format!(
                    "{} certificate, {} key",
                    if self.tls_cert_file.is_some() { "a" } else { "no" },
                    if self.tls_key_file.is_some() { "a" } else { "no" }
                ),
                allowed: "TLS needs both tls_cert_file and tls_key_file, or neither",
            });
        }
        if let Some((field, value, allowed)) = self.limits.invalid_setting() {
            return Err(ConfigError::Invalid {
                field,
                value,
                allowed,
            });
        }
        if !self.demo && self.data_dir.is_none() {
            return Err(ConfigError::Invalid {
                field: "demo",
                value: "false".into(),
                allowed: "with the demo off, a data_dir is needed: otherwise there is nothing to serve",
            });
        }
        Ok(())
    }

    /// The engine's part of the settings.
    pub fn engine_config(&self) -> EngineConfig {
        EngineConfig {
            default_grid: self.default_grid,
            data_dir: self.data_dir.clone(),
            limits: self.limits,
            max_answer_bytes: self.max_message_bytes,
            max_lookup_values: self.max_lookup_values,
            max_solve_points: self.max_solve_points,
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn flags_override_file_and_file_overrides_defaults() {
        let dir = std::env::temp_dir().join(format!("ratewell-config-{}", std::process::id()));
        std::fs::create_dir_all(&dir).unwrap();
        let file = dir.join("server.toml");
        std::fs::write(
            &file,
            "max_in_flight = 7\nmax_solve_points = 9\ndata_dir = \"sets\"\n\n[limits]\nmax_species = 4\n",
        )
        .unwrap();
        let flags = Flags {
            config: Some(file.clone()),
            max_in_flight: Some(3),
            ..Flags::default()
        };
        let c = Config::resolve(&flags).unwrap();
        assert_eq!(c.max_in_flight, 3);
        assert_eq!(c.max_solve_points, 9);
        assert_eq!(c.limits.max_species, 4);
        assert_eq!(c.limits.max_file_bytes, Limits::default().max_file_bytes);
        assert_eq!(c.data_dir, Some(dir.join("sets")));
        assert_eq!(c.listen, SocketAddr::from(([127, 0, 0, 1], 50051)));
        std::fs::remove_dir_all(&dir).unwrap();
    }

    #[test]
    fn bad_settings_name_the_field() {
        let dir = std::env::temp_dir().join(format!("ratewell-config-bad-{}", std::process::id()));
        std::fs::create_dir_all(&dir).unwrap();
        let file = dir.join("server.toml");
        std::fs::write(&file, "max_in_flihgt = 7\n").unwrap();
        let err = Config::resolve(&Flags {
            config: Some(file),
            ..Flags::default()
        })
        .unwrap_err();
        assert!(err.to_string().contains("max_in_flihgt"), "{err}");
        std::fs::remove_dir_all(&dir).unwrap();
        let err = Config::resolve(&Flags {
            grid_t_min_k: Some(-5.0),
            ..Flags::default()
        })
        .unwrap_err();
        assert!(err.to_string().contains("grid"), "{err}");
    }
}
