//! Every client setting in one place, with named defaults.

use crate::dataset::DatasetRef;
use crate::error::ClientError;
use crate::retry::RetryPolicy;
use std::path::PathBuf;
use std::time::Duration;

/// The address tried when none is given.
pub const DEFAULT_ENDPOINT: &str = "http://127.0.0.1:50051";
/// Per-attempt time budget, sent to the server as grpc-timeout and enforced locally.
pub const DEFAULT_CALL_TIMEOUT: Duration = Duration::from_secs(10);
/// Time allowed to open a connection.
pub const DEFAULT_CONNECT_TIMEOUT: Duration = Duration::from_secs(3);
/// Largest message sent or received, bytes: 64 MiB, the server's limit (tonic's own default
/// of 4 MiB is too small for large table sets and lookups).
pub const DEFAULT_MAX_MESSAGE_BYTES: usize = 64 * 1024 * 1024;
/// HTTP/2 keep-alive ping interval, so a dead server is noticed between calls.
pub const DEFAULT_KEEPALIVE_INTERVAL: Duration = Duration::from_secs(30);

/// TLS for the connections: the certificate authority that signed the servers' certificates,
/// from a PEM file, and optionally the name the certificates carry when it differs from the
/// host in the address.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct TlsSettings {
    /// PEM file of the certificate authority (or the self-signed server certificate) to trust.
    pub ca_file: PathBuf,
    /// The name to check the server certificate against (default: the address's host).
    pub server_name: Option<String>,
}

impl TlsSettings {
    /// Trust the certificate authority in `ca_file`.
    pub fn new(ca_file: impl Into<PathBuf>) -> Self {
        Self {
            ca_file: ca_file.into(),
            server_name: None,
        }
    }
}

/// Client settings. Start from [`ClientConfig::new`] and change what you need.
#[derive(Debug, Clone)]
pub struct ClientConfig {
    /// Server addresses ("http://host:port", or "https://host:port" with [`Self::tls`];
    /// "host:port" gets the scheme that `tls` implies). With several, the client uses one at a
    /// time and moves to the next when one is unreachable, hung, stopping or shedding load.
    pub endpoints: Vec<String>,
    /// A bearer token sent with every call (`authorization: Bearer ...`), for servers that
    /// guard their calls with tokens. Send it only over TLS or inside a trusted network.
    pub token: Option<String>,
    /// TLS settings; `None`: plain HTTP/2 (addresses must be http://).
    pub tls: Option<TlsSettings>,
    /// Start on a randomly chosen endpoint, so many jobs spread over the servers.
    pub spread_start: bool,
    /// Per-attempt time budget.
    pub call_timeout: Duration,
    /// Time allowed to open a connection.
    pub connect_timeout: Duration,
    /// Retries of idempotent calls (attempts, backoff, overall deadline). An attempt that gets
    /// no answer within `call_timeout` (a hung server) is retried on the next endpoint like a
    /// refused connection.
    pub retry: RetryPolicy,
    /// How long a call keeps trying while no endpoint can be reached at all (refused or reset
    /// connections, servers stopping), for jobs that start before the service or span its
    /// restart. Zero: such failures count against `retry.max_attempts` like any other. When
    /// set, they do not count, waits are capped at `retry.max_backoff`, and the call's overall
    /// deadline is at least this long.
    pub wait_for_server: Duration,
    /// When no server can be reached (every endpoint refused, reset or hung, after the retry
    /// policy), answer a server lookup ([`crate::Client::lookup_rates`] and its stream form)
    /// from this client's already fetched tables of that species and grid, if it holds them:
    /// the same evaluation rule, so the same bits, the same stamp, and a caution saying so.
    /// Off by default: a job that must notice a lost service should see the error.
    pub fall_back_to_fetched_tables: bool,
    /// Largest message sent or received, bytes.
    pub max_message_bytes: usize,
    /// HTTP/2 keep-alive ping interval (`None`: no pings).
    pub keepalive_interval: Option<Duration>,
    /// Dataset used by calls that need one (id, optional version, optional pinned hash).
    pub dataset: Option<DatasetRef>,
    /// Temperatures per message in [`crate::Client::lookup_rates_stream`] when the caller
    /// passes 0.
    pub stream_temperatures_per_message: usize,
    /// A folder shared by the processes of a node (or a job): [`crate::Client::fetch_tables`]
    /// reads a species' table file from it when present, and otherwise the first process
    /// fetches and writes it while the others wait on a lock file and then read it. Entries are
    /// named by what was asked (dataset id, version, pinned hash, species, grid) and reused as
    /// they are: pin the content hash, or use one folder per job, so an unpinned request does
    /// not keep an older version across jobs. `None`: no folder.
    pub cache_dir: Option<PathBuf>,
}

impl ClientConfig {
    /// Defaults for one endpoint.
    pub fn new(endpoint: impl Into<String>) -> Self {
        Self {
            endpoints: vec![endpoint.into()],
            token: None,
            tls: None,
            spread_start: true,
            call_timeout: DEFAULT_CALL_TIMEOUT,
            connect_timeout: DEFAULT_CONNECT_TIMEOUT,
            retry: RetryPolicy::default(),
            wait_for_server: Duration::ZERO,
            fall_back_to_fetched_tables: false,
            max_message_bytes: DEFAULT_MAX_MESSAGE_BYTES,
            keepalive_interval: Some(DEFAULT_KEEPALIVE_INTERVAL),
            dataset: None,
            stream_temperatures_per_message: 4096,
            cache_dir: None,
        }
    }

    /// Several endpoints, tried in turn (failover).
    pub fn with_endpoints(mut self, endpoints: Vec<String>) -> Self {
        self.endpoints = endpoints;
        self
    }

    /// The dataset for calls that need one.
    pub fn with_dataset(mut self, dataset: DatasetRef) -> Self {
        self.dataset = Some(dataset);
        self
    }

    /// Another per-attempt time budget.
    pub fn with_call_timeout(mut self, timeout: Duration) -> Self {
        self.call_timeout = timeout;
        self
    }

    /// A shared table-file folder (see [`ClientConfig::cache_dir`]).
    pub fn with_cache_dir(mut self, dir: impl Into<PathBuf>) -> Self {
        self.cache_dir = Some(dir.into());
        self
    }

    /// Another retry policy.
    pub fn with_retry(mut self, retry: RetryPolicy) -> Self {
        self.retry = retry;
        self
    }

    /// Sends `token` as a bearer token with every call.
    pub fn with_token(mut self, token: impl Into<String>) -> Self {
        self.token = Some(token.into());
        self
    }

    /// Sends the token held in `path` (its first line that is neither empty nor a `#` comment,
    /// trimmed), so the token stays out of command lines and environment listings.
    pub fn with_token_file(self, path: impl AsRef<std::path::Path>) -> Result<Self, ClientError> {
        let path = path.as_ref();
        let text = std::fs::read_to_string(path).map_err(|e| {
            ClientError::invalid("token_file", path.display(), format!("cannot be read: {e}"))
        })?;
        let token = text
            .lines()
            .map(str::trim)
            .find(|l| !l.is_empty() && !l.starts_with('#'))
            .ok_or_else(|| ClientError::invalid("token_file", path.display(), "holds no token line"))?;
        crate::transport::check_token(token)?;
        Ok(self.with_token(token))
    }

    /// Connects with TLS, trusting the certificate authority in `tls.ca_file`.
    pub fn with_tls(mut self, tls: TlsSettings) -> Self {
        self.tls = Some(tls);
        self
    }

    /// Keep trying for up to `wait` while no server can be reached (see
    /// [`ClientConfig::wait_for_server`]).
    pub fn with_wait_for_server(mut self, wait: Duration) -> Self {
        self.wait_for_server = wait;
        self
    }

    /// Checks every field, naming a bad one.
    pub fn validate(&self) -> Result<(), ClientError> {
        if self.endpoints.is_empty() {
            return Err(ClientError::invalid(
                "endpoints",
                "[] (empty)",
                "at least one server address is needed",
            ));
        }
        for (field, d) in [
            ("call_timeout", self.call_timeout),
            ("connect_timeout", self.connect_timeout),
        ] {
            if d.is_zero() {
                return Err(ClientError::invalid(field, "0 s", "must be > 0"));
            }
        }
        if let Some(token) = &self.token {
            crate::transport::check_token(token)?;
        }
        if let Some(tls) = &self.tls
            && !tls.ca_file.is_file()
        {
            return Err(ClientError::invalid(
                "tls.ca_file",
                tls.ca_file.display(),
                "must be a readable PEM file of the certificate authority to trust",
            ));
        }
        if self.max_message_bytes < 1024 {
            return Err(ClientError::invalid(
                "max_message_bytes",
                self.max_message_bytes,
                "must be >= 1024",
            ));
        }
        if self.stream_temperatures_per_message == 0 {
            return Err(ClientError::invalid(
                "stream_temperatures_per_message",
                0,
                "must be >= 1",
            ));
        }
        if let Some(dir) = &self.cache_dir {
            if dir.as_os_str().is_empty() {
                return Err(ClientError::invalid(
                    "cache_dir",
                    "\"\" (empty)",
                    "a folder path, or no cache folder",
                ));
            }
            if dir.exists() && !dir.is_dir() {
                return Err(ClientError::invalid(
                    "cache_dir",
                    dir.display(),
                    "must be a folder (this path is a file)",
                ));
            }
        }
        self.retry.validate()
    }
}

impl Default for ClientConfig {
    fn default() -> Self {
        Self::new(DEFAULT_ENDPOINT)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn defaults_are_valid_and_bad_fields_are_named() {
        assert!(ClientConfig::default().validate().is_ok());
        let c = ClientConfig::default().with_endpoints(vec![]);
        assert!(c.validate().unwrap_err().to_string().starts_with("endpoints = "));
        let c = ClientConfig::default().with_call_timeout(Duration::ZERO);
        assert_eq!(
            c.validate().unwrap_err().to_string(),
            "call_timeout = 0 s: must be > 0"
        );
        // A token file: comments and blank lines skipped; an empty file refused by name.
        let dir = std::env::temp_dir().join(format!("ratewell-client-token-{}", std::process::id()));
        std::fs::create_dir_all(&dir).unwrap();
        let file = dir.join("token");
        std::fs::write(&file, "# mine\n\n  tok-123  \n").unwrap();
        let c = ClientConfig::default().with_token_file(&file).unwrap();
        assert_eq!(c.token.as_deref(), Some("tok-123"));
        std::fs::write(&file, "# nothing\n").unwrap();
        let e = ClientConfig::default()
            .with_token_file(&file)
            .unwrap_err()
            .to_string();
        assert!(
            e.starts_with("token_file = ") && e.ends_with("holds no token line"),
            "{e}"
        );
        let _ = std::fs::remove_dir_all(&dir);
        // 64 MiB, the size the server is configured with (the server's default --max-message-bytes).
        assert_eq!(ClientConfig::default().max_message_bytes, 67_108_864);
    }
}
