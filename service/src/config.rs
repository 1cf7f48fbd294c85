//! Server configuration: one settings struct, [`Config`], read from four layers by figment:
//! built-in defaults, a TOML file (`--config`), environment variables (`RATEWELL_*`) and
//! command-line flags, each later layer winning. Every setting is one field below: its doc
//! comment is its `--help` text, its attributes name its flag and environment variable, its
//! name is its file key (limits in a `[limits]` table), and its default is in [`DEFAULTS`] (or
//! [`crate::limits::DEFAULT_LIMITS`]). Booleans take a value on every layer (`--demo false`,
//! `RATEWELL_DEMO=false`, `demo = false`), so each can be switched both ways. Durations are
//! seconds. [`Config::validate`] checks every range in one place; `--print-config` shows the
//! effective settings in the file's own format.

use crate::auth::Scope;
use crate::engine::{EngineConfig, GridSpec};
use crate::limits::{DEFAULT_LIMITS, Limits};
use clap::builder::BoolishValueParser;
use clap::parser::ValueSource;
use clap::{ArgAction, ArgMatches, CommandFactory, FromArgMatches, Parser};
use figment::Figment;
use figment::providers::{Format, Serialized, Toml};
use figment::value::{Dict, Value};
use serde::{Deserialize, Serialize};
use std::net::{IpAddr, Ipv4Addr, SocketAddr};
use std::path::{Path, PathBuf};
use std::time::Duration;

/// Why the configuration was refused.
#[derive(Debug, thiserror::Error)]
pub enum ConfigError {
    /// The command line does not parse (or asks for help or the version): clap's own message.
    #[error("{0}")]
    Usage(#[from] clap::Error),
    /// The config file could not be read.
    #[error("cannot read config file {}: {source}", path.display())]
    Read {
        /// The file.
        path: PathBuf,
        /// The I/O error.
        source: std::io::Error,
    },
    /// The config file is not valid TOML for these settings.
    #[error("config file {}: {message}", path.display())]
    Parse {
        /// The file.
        path: PathBuf,
        /// The parser's message (with the key, or line and column).
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

/// Longest duration setting, seconds.
const MAX_SECONDS: f64 = 86_400.0;

/// A duration setting from seconds: finite, within [0, 86400].
fn seconds_from(s: f64) -> Result<Duration, String> {
    if s.is_finite() && (0.0..=MAX_SECONDS).contains(&s) {
        Ok(Duration::from_secs_f64(s))
    } else {
        Err(format!(
            "{s}: must be a number of seconds within [0, {MAX_SECONDS}]"
        ))
    }
}

/// Duration settings on the command line and in the environment, as seconds.
fn parse_seconds(text: &str) -> Result<Duration, String> {
    let s: f64 = text
        .trim()
        .parse()
        .map_err(|_| format!("{text:?}: not a number of seconds"))?;
    seconds_from(s)
}

/// Duration settings in the file, as seconds.
mod as_seconds {
    use serde::{Deserialize, Deserializer, Serializer};
    use std::time::Duration;

    pub(super) fn serialize<S: Serializer>(d: &Duration, s: S) -> Result<S::Ok, S::Error> {
        s.serialize_f64(d.as_secs_f64())
    }

    pub(super) fn deserialize<'de, D: Deserializer<'de>>(d: D) -> Result<Duration, D::Error> {
        super::seconds_from(f64::deserialize(d)?).map_err(serde::de::Error::custom)
    }
}

/// Effective server settings (see the module documentation for where each comes from).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, clap::Args)]
#[serde(deny_unknown_fields)]
pub struct Config {
    /// Listen address.
    #[arg(long, env = "RATEWELL_LISTEN", default_value_t = DEFAULTS.listen)]
    pub listen: SocketAddr,
    /// Folder of dataset folders to load at start and to reload from (a folder that fails to
    /// load is refused on its own, logged with file, line and field; the others are served).
    #[arg(long, env = "RATEWELL_DATA_DIR")]
    #[serde(skip_serializing_if = "Option::is_none")]
    pub data_dir: Option<PathBuf>,
    /// Load the embedded (invented) demo dataset; `false` serves only the data folder.
    #[arg(long, env = "RATEWELL_DEMO", default_value_t = DEFAULTS.demo, action = ArgAction::Set,
          num_args = 0..=1, default_missing_value = "true", value_name = "BOOL",
          value_parser = BoolishValueParser::new())]
    pub demo: bool,
    /// Lowest temperature of the default table grid, K.
    #[arg(long, env = "RATEWELL_GRID_T_MIN_K", default_value_t = DEFAULTS.grid_t_min_k)]
    pub grid_t_min_k: f64,
    /// Highest temperature of the default table grid, K.
    #[arg(long, env = "RATEWELL_GRID_T_MAX_K", default_value_t = DEFAULTS.grid_t_max_k)]
    pub grid_t_max_k: f64,
    /// Knots per decade of the default table grid.
    #[arg(long, env = "RATEWELL_GRID_POINTS_PER_DECADE", default_value_t = DEFAULTS.grid_points_per_decade)]
    pub grid_points_per_decade: u32,
    /// Largest message decoded or encoded, bytes (tonic's default is 4 MiB; raised so a
    /// 45,000-transition species' tables fit in one FetchTables answer).
    #[arg(long, env = "RATEWELL_MAX_MESSAGE_BYTES", default_value_t = DEFAULTS.max_message_bytes)]
    pub max_message_bytes: usize,
    /// Engine calls in flight at once; more are shed with RESOURCE_EXHAUSTED.
    #[arg(long, env = "RATEWELL_MAX_IN_FLIGHT", default_value_t = DEFAULTS.max_in_flight)]
    pub max_in_flight: usize,
    /// Largest transitions x temperatures in one lookup.
    #[arg(long, env = "RATEWELL_MAX_LOOKUP_VALUES", default_value_t = DEFAULTS.max_lookup_values)]
    pub max_lookup_values: usize,
    /// Largest number of (Te, ne) points in one solve.
    #[arg(long, env = "RATEWELL_MAX_SOLVE_POINTS", default_value_t = DEFAULTS.max_solve_points)]
    pub max_solve_points: usize,
    /// Upper bound on any request's duration, seconds (a client's grpc-timeout may be shorter).
    #[arg(id = "request_timeout_s", long = "request-timeout-s", env = "RATEWELL_REQUEST_TIMEOUT_S",
          default_value = "120", value_parser = parse_seconds, value_name = "SECONDS")]
    #[serde(rename = "request_timeout_s", with = "as_seconds")]
    pub request_timeout: Duration,
    /// HTTP/2 keepalive ping interval, seconds.
    #[arg(id = "keepalive_interval_s", long = "keepalive-interval-s", env = "RATEWELL_KEEPALIVE_INTERVAL_S",
          default_value = "30", value_parser = parse_seconds, value_name = "SECONDS")]
    #[serde(rename = "keepalive_interval_s", with = "as_seconds")]
    pub keepalive_interval: Duration,
    /// HTTP/2 keepalive ping timeout, seconds.
    #[arg(id = "keepalive_timeout_s", long = "keepalive-timeout-s", env = "RATEWELL_KEEPALIVE_TIMEOUT_S",
          default_value = "10", value_parser = parse_seconds, value_name = "SECONDS")]
    #[serde(rename = "keepalive_timeout_s", with = "as_seconds")]
    pub keepalive_timeout: Duration,
    /// Close each client connection gracefully (HTTP/2 GOAWAY: calls in flight finish) after it
    /// has been open this many seconds, so clients reconnect and spread over replicas added
    /// since; 0: connections live as long as their clients.
    #[arg(id = "max_connection_age_s", long = "max-connection-age-s", env = "RATEWELL_MAX_CONNECTION_AGE_S",
          default_value = "0", value_parser = parse_seconds, value_name = "SECONDS")]
    #[serde(rename = "max_connection_age_s", with = "as_seconds")]
    pub max_connection_age: Duration,
    /// After health turns NOT_SERVING at shutdown, wait this many seconds before refusing new
    /// calls.
    #[arg(id = "drain_s", long = "drain-s", env = "RATEWELL_DRAIN_S",
          default_value = "0.5", value_parser = parse_seconds, value_name = "SECONDS")]
    #[serde(rename = "drain_s", with = "as_seconds")]
    pub drain: Duration,
    /// Longest wait for in-flight calls to finish at shutdown, seconds.
    #[arg(id = "shutdown_grace_s", long = "shutdown-grace-s", env = "RATEWELL_SHUTDOWN_GRACE_S",
          default_value = "10", value_parser = parse_seconds, value_name = "SECONDS")]
    #[serde(rename = "shutdown_grace_s", with = "as_seconds")]
    pub shutdown_grace: Duration,
    /// Serve the benchmark-only Transport service (empty and echo RPCs).
    #[arg(long, env = "RATEWELL_BENCHMARK_ENDPOINTS", default_value_t = DEFAULTS.benchmark_endpoints,
          action = ArgAction::Set, num_args = 0..=1, default_missing_value = "true", value_name = "BOOL",
          value_parser = BoolishValueParser::new())]
    pub benchmark_endpoints: bool,
    /// Log JSON lines instead of plain text.
    #[arg(long, env = "RATEWELL_JSON_LOGS", default_value_t = DEFAULTS.json_logs,
          action = ArgAction::Set, num_args = 0..=1, default_missing_value = "true", value_name = "BOOL",
          value_parser = BoolishValueParser::new())]
    pub json_logs: bool,
    /// File of `NAME TOKEN` lines: bearer tokens accepted for Admin (and, with `auth_scope =
    /// all`, for every call); see `crate::auth`. Without it every Admin call is refused.
    #[arg(long, env = "RATEWELL_TOKENS_FILE")]
    #[serde(skip_serializing_if = "Option::is_none")]
    pub tokens_file: Option<PathBuf>,
    /// Which calls need a token: `admin` (Admin only) or `all` (every call but health checks).
    #[arg(long, env = "RATEWELL_AUTH_SCOPE", value_enum, default_value_t = DEFAULTS.auth_scope)]
    pub auth_scope: Scope,
    /// PEM certificate chain (leaf first): serve TLS instead of plain HTTP/2 (needs
    /// `tls_key_file`).
    #[arg(long, env = "RATEWELL_TLS_CERT_FILE")]
    #[serde(skip_serializing_if = "Option::is_none")]
    pub tls_cert_file: Option<PathBuf>,
    /// PEM private key of `tls_cert_file`.
    #[arg(long, env = "RATEWELL_TLS_KEY_FILE")]
    #[serde(skip_serializing_if = "Option::is_none")]
    pub tls_key_file: Option<PathBuf>,
    /// Serve Prometheus metrics at http://ADDRESS/metrics (plain HTTP; keep it internal);
    /// unset: none.
    #[arg(long, env = "RATEWELL_METRICS_LISTEN")]
    #[serde(skip_serializing_if = "Option::is_none")]
    pub metrics_listen: Option<SocketAddr>,
    /// Dataset, request, table-cache and connection limits (the file's `[limits]` table).
    #[command(flatten)]
    #[serde(default)]
    pub limits: Limits,
}

/// Every setting's default.
pub const DEFAULTS: Config = Config {
    listen: SocketAddr::new(IpAddr::V4(Ipv4Addr::new(127, 0, 0, 1)), 50051),
    data_dir: None,
    demo: true,
    grid_t_min_k: 10.0,
    grid_t_max_k: 1.0e9,
    grid_points_per_decade: 20,
    max_message_bytes: 64 * 1024 * 1024,
    max_in_flight: 256,
    max_lookup_values: 4_000_000,
    max_solve_points: 100_000,
    request_timeout: Duration::from_secs(120),
    keepalive_interval: Duration::from_secs(30),
    keepalive_timeout: Duration::from_secs(10),
    max_connection_age: Duration::ZERO,
    drain: Duration::from_millis(500),
    shutdown_grace: Duration::from_secs(10),
    benchmark_endpoints: false,
    json_logs: false,
    tokens_file: None,
    auth_scope: Scope::Admin,
    tls_cert_file: None,
    tls_key_file: None,
    metrics_listen: None,
    limits: DEFAULT_LIMITS,
};

impl Default for Config {
    fn default() -> Self {
        DEFAULTS
    }
}

/// Command-line flags: the process's own (`--check-dataset`, `--config`, `--print-config`)
/// and every setting of [`Config`].
#[derive(Debug, Parser)]
#[command(
    name = "ratewell-server",
    version,
    about = "Serve electron-impact rate coefficients, level populations and line emissivities over gRPC",
    after_help = "Every setting can also be given in the --config file (snake_case keys; limits in a \
                  [limits] table) and in the environment variable shown; flags win over the \
                  environment, which wins over the file."
)]
pub struct Flags {
    /// Check the dataset folder DIR without serving: print every problem (file, line, field)
    /// or a summary, then warnings about data that load but look wrong; exit 0 when it loads,
    /// 1 when it does not. Uses the dataset limits of the other settings.
    #[arg(long, value_name = "DIR")]
    pub check_dataset: Option<PathBuf>,
    /// TOML file with any of the settings below.
    #[arg(long, env = "RATEWELL_CONFIG")]
    pub config: Option<PathBuf>,
    /// Print the effective settings (every layer applied) in the config file's format, and exit.
    #[arg(long)]
    pub print_config: bool,
    /// The settings as given on the command line and in the environment.
    #[command(flatten)]
    pub settings: Config,
}

/// Keys of path settings: relative paths in a config file are relative to the file.
const PATH_KEYS: [&str; 4] = ["data_dir", "tokens_file", "tls_cert_file", "tls_key_file"];

/// The file's settings, with relative paths made relative to the file.
fn file_layer(path: &Path) -> Result<Dict, ConfigError> {
    let text = std::fs::read_to_string(path).map_err(|source| ConfigError::Read {
        path: path.to_owned(),
        source,
    })?;
    let parse_error = |message: String| ConfigError::Parse {
        path: path.to_owned(),
        message,
    };
    let profiles = figment::Provider::data(&Toml::string(&text)).map_err(|e| parse_error(e.to_string()))?;
    let mut dict = profiles.into_values().next().unwrap_or_default();
    let folder = path.parent().unwrap_or(Path::new("."));
    for key in PATH_KEYS {
        if let Some(Value::String(tag, v)) = dict.get(key)
            && Path::new(v).is_relative()
        {
            let joined = folder.join(v).to_string_lossy().into_owned();
            dict.insert(key.into(), Value::String(*tag, joined));
        }
    }
    Ok(dict)
}

/// The settings given on the command line or in the environment (clap's own defaults left
/// out, so they do not hide the file's values), as a nested dictionary of file keys.
fn explicit_layer(settings: &Config, matches: &ArgMatches) -> Result<Dict, ConfigError> {
    fn keep(dict: Dict, matches: &ArgMatches) -> Dict {
        dict.into_iter()
            .filter_map(|(key, value)| match value {
                Value::Dict(tag, inner) => {
                    let inner = keep(inner, matches);
                    (!inner.is_empty()).then_some((key, Value::Dict(tag, inner)))
                }
                value => {
                    let given = matches.try_contains_id(&key).unwrap_or(false)
                        && matches!(
                            matches.value_source(&key),
                            Some(ValueSource::CommandLine | ValueSource::EnvVariable)
                        );
                    given.then_some((key, value))
                }
            })
            .collect()
    }
    let value = Value::serialize(settings).map_err(|e| ConfigError::Invalid {
        field: "settings",
        value: e.to_string(),
        allowed: "settings that serialize (a bug if seen)",
    })?;
    Ok(value.into_dict().map(|d| keep(d, matches)).unwrap_or_default())
}

impl Config {
    /// Flags and settings from `args` (the program name first) and the environment.
    pub fn from_args<I, T>(args: I) -> Result<(Flags, Config), ConfigError>
    where
        I: IntoIterator<Item = T>,
        T: Into<std::ffi::OsString> + Clone,
    {
        let matches = Flags::command().try_get_matches_from(args)?;
        let flags = Flags::from_arg_matches(&matches)?;
        let config = Self::resolve(&flags, &matches)?;
        Ok((flags, config))
    }

    /// Defaults, then the file named by `flags.config`, then the environment and the command
    /// line (clap has merged those two, flags winning), then validation.
    pub fn resolve(flags: &Flags, matches: &ArgMatches) -> Result<Self, ConfigError> {
        let mut figment = Figment::from(Serialized::defaults(DEFAULTS));
        if let Some(path) = &flags.config {
            figment = figment.merge(Serialized::defaults(file_layer(path)?));
        }
        figment = figment.merge(Serialized::defaults(explicit_layer(&flags.settings, matches)?));
        // Values of the last two layers were typed by clap: only the file's can be refused here.
        let config: Config = figment.extract().map_err(|errors| ConfigError::Parse {
            path: flags.config.clone().unwrap_or_default(),
            message: errors
                .into_iter()
                .map(|e| match e.path.join(".") {
                    key if key.is_empty() => e.kind.to_string(),
                    key => format!("{key}: {}", e.kind),
                })
                .collect::<Vec<_>>()
                .join("; "),
        })?;
        config.validate()?;
        Ok(config)
    }

    /// The effective settings in the config file's format (TOML).
    pub fn to_toml(&self) -> String {
        toml::to_string(self).unwrap_or_else(|e| format!("# settings do not serialize: {e}\n"))
    }

    /// The grid every table is precomputed on at load.
    pub fn default_grid(&self) -> GridSpec {
        GridSpec {
            t_min_k: self.grid_t_min_k,
            t_max_k: self.grid_t_max_k,
            points_per_decade: self.grid_points_per_decade,
        }
    }

    /// How long a client connection may stay open (`None`: as long as its client keeps it).
    pub fn connection_age(&self) -> Option<Duration> {
        (!self.max_connection_age.is_zero()).then_some(self.max_connection_age)
    }

    /// Checks every setting's range.
    pub fn validate(&self) -> Result<(), ConfigError> {
        let g = self.default_grid();
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
            default_grid: self.default_grid(),
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

    fn scratch(label: &str) -> PathBuf {
        let dir = std::env::temp_dir().join(format!("ratewell-config-{label}-{}", std::process::id()));
        std::fs::create_dir_all(&dir).unwrap();
        dir
    }

    /// Whether the test process's environment sets any setting (then clap would read it).
    fn environment_is_clean() -> bool {
        std::env::vars().all(|(k, _)| !k.starts_with("RATEWELL_"))
    }

    #[test]
    fn flags_override_the_file_and_the_file_overrides_defaults() {
        let dir = scratch("layers");
        let file = dir.join("server.toml");
        std::fs::write(
            &file,
            "max_in_flight = 7\nmax_solve_points = 9\ndata_dir = \"sets\"\njson_logs = true\n\n[limits]\nmax_species = 4\n",
        )
        .unwrap();
        let path = file.to_str().unwrap();
        let (flags, c) =
            Config::from_args(["ratewell-server", "--config", path, "--max-in-flight", "3"]).unwrap();
        assert_eq!(flags.config.as_deref(), Some(file.as_path()));
        assert_eq!(c.max_in_flight, 3);
        assert_eq!(c.max_solve_points, 9);
        assert!(c.json_logs);
        assert_eq!(c.limits.max_species, 4);
        assert_eq!(c.limits.max_file_bytes, DEFAULT_LIMITS.max_file_bytes);
        // Relative paths in the file are relative to the file.
        assert_eq!(c.data_dir, Some(dir.join("sets")));
        assert_eq!(c.listen, DEFAULTS.listen);
        // A boolean the file switched on, switched off by a flag; a limit by its own flag.
        let (_, c) = Config::from_args([
            "ratewell-server",
            "--config",
            path,
            "--json-logs",
            "false",
            "--max-species=11",
        ])
        .unwrap();
        assert!(!c.json_logs);
        assert_eq!(c.limits.max_species, 11);
        std::fs::remove_dir_all(&dir).unwrap();
    }

    #[test]
    fn without_any_layer_the_settings_are_the_defaults_everywhere() {
        if !environment_is_clean() {
            return;
        }
        let (_, c) = Config::from_args(["ratewell-server"]).unwrap();
        assert_eq!(c, DEFAULTS);
        assert_eq!(Config::default(), DEFAULTS);
        // clap's displayed defaults (written as text for durations) agree with DEFAULTS: the
        // explicit layer is empty, and parsing the printed file gives the same settings back.
        let dir = scratch("round-trip");
        let file = dir.join("printed.toml");
        std::fs::write(&file, DEFAULTS.to_toml()).unwrap();
        let (_, back) = Config::from_args(["ratewell-server", "--config", file.to_str().unwrap()]).unwrap();
        assert_eq!(back, DEFAULTS);
        std::fs::remove_dir_all(&dir).unwrap();
        // The engine's own defaults are the server's.
        let engine = EngineConfig::default();
        let ours = DEFAULTS.engine_config();
        assert_eq!(ours.default_grid, engine.default_grid);
        assert_eq!(ours.limits, engine.limits);
        assert_eq!(ours.max_lookup_values, engine.max_lookup_values);
        assert_eq!(ours.max_solve_points, engine.max_solve_points);
    }

    #[test]
    fn every_setting_has_a_flag_an_environment_variable_a_file_key_and_help() {
        let command = Flags::command();
        let help = Flags::command().render_long_help().to_string();
        let mut keys = Vec::new();
        fn leaves(prefix: &str, dict: &Dict, out: &mut Vec<(String, String)>) {
            for (k, v) in dict {
                match v {
                    Value::Dict(_, inner) => leaves(&format!("{prefix}{k}."), inner, out),
                    _ => out.push((format!("{prefix}{k}"), k.clone())),
                }
            }
        }
        // Every setting, Option settings included (set so they serialize).
        let mut all = DEFAULTS;
        all.data_dir = Some("d".into());
        all.tokens_file = Some("t".into());
        all.tls_cert_file = Some("c".into());
        all.tls_key_file = Some("k".into());
        all.metrics_listen = Some(DEFAULTS.listen);
        leaves(
            "",
            &Value::serialize(&all).unwrap().into_dict().unwrap(),
            &mut keys,
        );
        assert_eq!(keys.len(), 23 + 12, "{keys:?}");
        for (file_key, id) in &keys {
            let arg = command
                .get_arguments()
                .find(|a| a.get_id().as_str() == id)
                .unwrap_or_else(|| panic!("file key {file_key} has no flag"));
            let long = arg.get_long().expect("a long flag");
            assert_eq!(long, id.replace('_', "-"), "{file_key}");
            let env = arg.get_env().expect("an environment variable");
            assert_eq!(env.to_str().unwrap(), format!("RATEWELL_{}", id.to_uppercase()));
            assert!(help.contains(&format!("--{long}")), "--help lacks --{long}");
            assert!(
                arg.get_long_help().or(arg.get_help()).is_some(),
                "--{long} has no help"
            );
        }
        // ...and every flag but the process's own is a setting.
        let settings = command
            .get_arguments()
            .filter(|a| {
                !["check_dataset", "config", "print_config", "help", "version"].contains(&a.get_id().as_str())
            })
            .count();
        assert_eq!(settings, keys.len());
    }

    #[test]
    fn bad_settings_name_the_field() {
        let dir = scratch("bad");
        let file = dir.join("server.toml");
        for (text, named) in [
            ("max_in_flihgt = 7\n", "max_in_flihgt"),
            ("max_in_flight = \"x\"\n", "max_in_flight: invalid type"),
            (
                "drain_s = -1\n",
                "drain_s: -1: must be a number of seconds within [0, 86400]",
            ),
            ("[limits]\nmax_speceis = 3\n", "limits.max_speceis"),
            (
                "[limits]\nmax_species = 0\n",
                "config max_species = 0: must be at least 1",
            ),
            ("[limits\n", "line 1"),
        ] {
            std::fs::write(&file, text).unwrap();
            let err = Config::from_args(["ratewell-server", "--config", file.to_str().unwrap()]).unwrap_err();
            assert!(err.to_string().contains(named), "{text:?}: {err}");
            assert!(!matches!(err, ConfigError::Usage(_)), "{err}");
        }
        std::fs::remove_dir_all(&dir).unwrap();
        let err = Config::from_args(["ratewell-server", "--grid-t-min-k=-5"]).unwrap_err();
        assert!(err.to_string().contains("grid"), "{err}");
        for args in [
            ["ratewell-server", "--demo", "maybe"],
            ["ratewell-server", "--drain-s", "x"],
        ] {
            let err = Config::from_args(args).unwrap_err();
            assert!(matches!(err, ConfigError::Usage(_)), "{err}");
        }
        let err = Config::from_args(["ratewell-server", "--demo", "off"]).unwrap_err();
        assert!(
            err.to_string()
                .contains("with the demo off, a data_dir is needed"),
            "{err}"
        );
    }
}
