//! Resource limits: what one dataset may hold, what work one request may cause, how many bytes
//! of tables the cache keeps, and how many connections and streams the transport accepts.
//! Every limit is a setting (the `[limits]` table of the config file, a flag and an environment
//! variable; see `crate::config`) and
//! every refusal is a [`LimitError`] naming the quantity, its value, the limit and the setting
//! to raise, checked before the work or allocation it guards.

use serde::{Deserialize, Serialize};
use std::time::Duration;

/// A quantity over its configured limit.
#[derive(Debug, Clone, PartialEq, Eq, thiserror::Error)]
#[error("{what} = {value} is over the limit of {limit} (setting `{setting}`); {advice}")]
pub struct LimitError {
    /// What was measured, e.g. `points x levels^2 of the solve`.
    pub what: String,
    /// Its value.
    pub value: u64,
    /// The configured limit.
    pub limit: u64,
    /// The setting that holds the limit.
    pub setting: &'static str,
    /// What the caller can do: split the request, or ask the operator to raise the setting.
    pub advice: &'static str,
}

/// Advice for a request over a per-request limit.
pub const SPLIT_ADVICE: &str = "split the request into smaller ones";
/// Advice for a dataset over a load limit.
pub const RAISE_ADVICE: &str = "the operator can raise the setting if the host has the memory";

/// Checks `value <= limit`, naming `what` and `setting` otherwise.
pub fn check(
    what: impl Into<String>,
    value: u64,
    limit: u64,
    setting: &'static str,
    advice: &'static str,
) -> Result<(), LimitError> {
    if value <= limit {
        Ok(())
    } else {
        Err(LimitError {
            what: what.into(),
            value,
            limit,
            setting,
            advice,
        })
    }
}

/// Every limit. Defaults ([`DEFAULT_LIMITS`]) are sized for a host with a few GB of memory.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize, clap::Args)]
#[serde(default, deny_unknown_fields)]
pub struct Limits {
    /// Largest single dataset file, bytes (checked before it is read).
    #[arg(long, env = "RATEWELL_MAX_FILE_BYTES", default_value_t = DEFAULT_LIMITS.max_file_bytes)]
    pub max_file_bytes: u64,
    /// Largest total of a dataset folder's files, bytes.
    #[arg(long, env = "RATEWELL_MAX_DATASET_BYTES", default_value_t = DEFAULT_LIMITS.max_dataset_bytes)]
    pub max_dataset_bytes: u64,
    /// Most species in one dataset.
    #[arg(long, env = "RATEWELL_MAX_SPECIES", default_value_t = DEFAULT_LIMITS.max_species)]
    pub max_species: u64,
    /// Most levels in one species (a solve holds a levels x levels matrix per thread; 3,000 levels:
    /// 72 MB).
    #[arg(long, env = "RATEWELL_MAX_LEVELS_PER_SPECIES", default_value_t = DEFAULT_LIMITS.max_levels_per_species)]
    pub max_levels_per_species: u64,
    /// Most transitions (radiative plus collisional) in one dataset (200,000: about 0.5 GB of
    /// default-grid tables).
    #[arg(long, env = "RATEWELL_MAX_TRANSITIONS", default_value_t = DEFAULT_LIMITS.max_transitions)]
    pub max_transitions: u64,
    /// Byte budget of tables cached on non-default grids (default-grid tables of loaded datasets
    /// are kept apart and never evicted).
    #[arg(long, env = "RATEWELL_TABLE_CACHE_BYTES", default_value_t = DEFAULT_LIMITS.table_cache_bytes)]
    pub table_cache_bytes: u64,
    /// Largest grid knots x transitions one request may cause to be built on a non-default grid (a
    /// comparison counts both datasets).
    #[arg(long, env = "RATEWELL_MAX_TABLE_VALUES_PER_REQUEST", default_value_t = DEFAULT_LIMITS.max_table_values_per_request)]
    pub max_table_values_per_request: u64,
    /// Largest points x levels^2 of one population solve.
    #[arg(long, env = "RATEWELL_MAX_SOLVE_WORK", default_value_t = DEFAULT_LIMITS.max_solve_work)]
    pub max_solve_work: u64,
    /// Largest number of transitions one comparison may cover.
    #[arg(long, env = "RATEWELL_MAX_COMPARE_TRANSITIONS", default_value_t = DEFAULT_LIMITS.max_compare_transitions)]
    pub max_compare_transitions: u64,
    /// Most TCP connections served at once; further ones are closed at accept.
    #[arg(long, env = "RATEWELL_MAX_CONNECTIONS", default_value_t = DEFAULT_LIMITS.max_connections)]
    pub max_connections: u64,
    /// Longest time a new connection may take to send the HTTP/2 preface, seconds.
    #[arg(long, env = "RATEWELL_HANDSHAKE_TIMEOUT_S", default_value_t = DEFAULT_LIMITS.handshake_timeout_s)]
    pub handshake_timeout_s: f64,
    /// Most concurrent streams per HTTP/2 connection.
    #[arg(long, env = "RATEWELL_MAX_STREAMS_PER_CONNECTION", default_value_t = DEFAULT_LIMITS.max_streams_per_connection)]
    pub max_streams_per_connection: u32,
}

/// Every limit's default.
pub const DEFAULT_LIMITS: Limits = Limits {
    max_file_bytes: 64 << 20,
    max_dataset_bytes: 256 << 20,
    max_species: 1_000,
    max_levels_per_species: 3_000,
    max_transitions: 200_000,
    table_cache_bytes: 256 << 20,
    max_table_values_per_request: 20_000_000,
    max_solve_work: 20_000_000_000,
    max_compare_transitions: 400_000,
    max_connections: 1_000,
    handshake_timeout_s: 10.0,
    max_streams_per_connection: 256,
};

impl Default for Limits {
    fn default() -> Self {
        DEFAULT_LIMITS
    }
}

impl Limits {
    /// The handshake timeout as a duration.
    pub fn handshake_timeout(&self) -> Duration {
        Duration::from_secs_f64(self.handshake_timeout_s)
    }

    /// The first setting outside its allowed range, as (setting, value, allowed).
    pub fn invalid_setting(&self) -> Option<(&'static str, String, &'static str)> {
        let at_least_one = [
            ("max_file_bytes", self.max_file_bytes),
            ("max_dataset_bytes", self.max_dataset_bytes),
            ("max_species", self.max_species),
            ("max_levels_per_species", self.max_levels_per_species),
            ("max_transitions", self.max_transitions),
            ("max_table_values_per_request", self.max_table_values_per_request),
            ("max_solve_work", self.max_solve_work),
            ("max_compare_transitions", self.max_compare_transitions),
            ("max_connections", self.max_connections),
            (
                "max_streams_per_connection",
                u64::from(self.max_streams_per_connection),
            ),
        ];
        if let Some((name, v)) = at_least_one.into_iter().find(|(_, v)| *v == 0) {
            return Some((name, v.to_string(), "must be at least 1"));
        }
        let t = self.handshake_timeout_s;
        if !(t.is_finite() && t > 0.0 && t <= 3600.0) {
            return Some((
                "handshake_timeout_s",
                t.to_string(),
                "must be a number of seconds within (0, 3600]",
            ));
        }
        None
    }

    /// Refuses a dataset file of `bytes` (before reading it).
    pub fn check_file_bytes(&self, file: &str, bytes: u64) -> Result<(), LimitError> {
        check(
            format!("size of {file} in bytes"),
            bytes,
            self.max_file_bytes,
            "max_file_bytes",
            RAISE_ADVICE,
        )
    }

    /// Refuses a dataset folder whose files total `bytes`.
    pub fn check_dataset_bytes(&self, bytes: u64) -> Result<(), LimitError> {
        check(
            "total size of the dataset files in bytes",
            bytes,
            self.max_dataset_bytes,
            "max_dataset_bytes",
            RAISE_ADVICE,
        )
    }
}

/// Saturating `a * b` in u64.
pub fn product(a: usize, b: usize) -> u64 {
    (a as u64).saturating_mul(b as u64)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn refusals_name_value_limit_and_setting() {
        let limits = Limits::default();
        assert!(limits.check_file_bytes("a.toml", 64 << 20).is_ok());
        let err = limits.check_file_bytes("a.toml", (64 << 20) + 1).unwrap_err();
        let text = err.to_string();
        for part in ["a.toml", "67108865", "67108864", "`max_file_bytes`"] {
            assert!(text.contains(part), "{text}");
        }
    }

    #[test]
    fn zero_limits_are_refused_by_name() {
        let limits = Limits {
            max_solve_work: 0,
            ..Limits::default()
        };
        assert_eq!(limits.invalid_setting().map(|s| s.0), Some("max_solve_work"));
        let limits = Limits {
            handshake_timeout_s: f64::NAN,
            ..Limits::default()
        };
        assert_eq!(limits.invalid_setting().map(|s| s.0), Some("handshake_timeout_s"));
        assert_eq!(Limits::default().invalid_setting(), None);
    }

    #[test]
    fn products_saturate() {
        assert_eq!(product(usize::MAX, 3), u64::MAX);
        assert_eq!(product(3_000, 3_000), 9_000_000);
    }
}
