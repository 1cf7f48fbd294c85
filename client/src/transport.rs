//! Connections: one lazily connected `Channel` per endpoint (TLS when configured, the bearer
//! token added to every call), cloned freely, and the choice of endpoint. With several
//! endpoints the client uses one at a time and moves on to the next when a call finds its
//! server unreachable, hung, stopping or shedding load (simple failover, no background probe).

use crate::config::{ClientConfig, TlsSettings};
use crate::error::ClientError;
use std::sync::atomic::{AtomicUsize, Ordering};
use tonic::metadata::{Ascii, MetadataValue};
use tonic::service::Interceptor;
use tonic::service::interceptor::InterceptedService;
use tonic::transport::{Certificate, Channel, ClientTlsConfig, Endpoint};

/// A channel that adds the caller's credentials to every request.
pub(crate) type Connection = InterceptedService<Channel, Credentials>;

/// The `authorization` header every request carries (nothing without a token).
#[derive(Debug, Clone, Default)]
pub(crate) struct Credentials(Option<MetadataValue<Ascii>>);

impl Interceptor for Credentials {
    fn call(&mut self, mut request: tonic::Request<()>) -> Result<tonic::Request<()>, tonic::Status> {
        if let Some(value) = &self.0 {
            request.metadata_mut().insert("authorization", value.clone());
        }
        Ok(request)
    }
}

/// Checks that a token can travel in a header (printable ASCII, no spaces), without
/// echoing it: the message names its length only.
pub(crate) fn check_token(token: &str) -> Result<MetadataValue<Ascii>, ClientError> {
    let bad =
        |why: &str| ClientError::invalid("token", format!("({} characters, not shown)", token.len()), why);
    if token.is_empty() {
        return Err(bad("must not be empty"));
    }
    if !token.bytes().all(|b| b.is_ascii_graphic()) {
        return Err(bad("must be printable ASCII without spaces"));
    }
    format!("Bearer {token}")
        .parse()
        .map_err(|_| bad("must be printable ASCII without spaces"))
}

/// The endpoints of one client and which one is in use.
#[derive(Debug)]
pub(crate) struct Pool {
    endpoints: Vec<(String, Connection)>,
    current: AtomicUsize,
}

/// "host:port" gets "http://" (or "https://" when `tls` is on); the scheme must match `tls`.
pub(crate) fn normalise_address(address: &str, tls: bool) -> Result<String, ClientError> {
    let a = address.trim();
    let bad = |allowed: &str| ClientError::invalid("server", format!("{address:?}"), allowed);
    if a.is_empty() {
        return Err(bad("must be an address like http://127.0.0.1:50051"));
    }
    let full = if a.contains("://") {
        a.to_string()
    } else if tls {
        format!("https://{a}")
    } else {
        format!("http://{a}")
    };
    match (full.starts_with("https://"), full.starts_with("http://"), tls) {
        (true, _, true) | (false, true, false) => Ok(full),
        (true, _, false) => Err(bad(
            "https:// needs TLS settings: the certificate authority to trust (tls.ca_file, --tls-ca-file)",
        )),
        (false, true, true) => Err(bad("must use https:// when TLS is configured")),
        _ => Err(bad("must use http:// (or https:// with TLS settings)")),
    }
}

/// The TLS client settings from `tls` (the CA file is read here).
fn client_tls(tls: &TlsSettings) -> Result<ClientTlsConfig, ClientError> {
    let pem = std::fs::read(&tls.ca_file).map_err(|e| {
        ClientError::invalid(
            "tls.ca_file",
            tls.ca_file.display(),
            format!("cannot be read ({e}); must be a PEM file of the certificate authority to trust"),
        )
    })?;
    if !String::from_utf8_lossy(&pem).contains("-----BEGIN CERTIFICATE-----") {
        return Err(ClientError::invalid(
            "tls.ca_file",
            tls.ca_file.display(),
            "holds no PEM certificate (-----BEGIN CERTIFICATE-----)",
        ));
    }
    let mut config = ClientTlsConfig::new().ca_certificate(Certificate::from_pem(pem));
    if let Some(name) = &tls.server_name {
        config = config.domain_name(name.clone());
    }
    Ok(config)
}

impl Pool {
    /// Sets up a lazy channel per endpoint (nothing connects until the first call).
    /// Must run inside a tokio runtime.
    pub(crate) fn new(config: &ClientConfig) -> Result<Self, ClientError> {
        let mut endpoints = Vec::with_capacity(config.endpoints.len());
        let credentials = Credentials(config.token.as_deref().map(check_token).transpose()?);
        let tls = config.tls.as_ref().map(client_tls).transpose()?;
        for address in &config.endpoints {
            let address = normalise_address(address, tls.is_some())?;
            let transport = |e: &dyn std::fmt::Display| ClientError::Transport {
                endpoint: address.clone(),
                message: e.to_string(),
            };
            let mut endpoint = Endpoint::from_shared(address.clone())
                .map_err(|e| transport(&e))?
                .connect_timeout(config.connect_timeout)
                .tcp_nodelay(true);
            if let Some(tls) = &tls {
                endpoint = endpoint.tls_config(tls.clone()).map_err(|e| transport(&e))?;
            }
            if let Some(interval) = config.keepalive_interval {
                endpoint = endpoint
                    .http2_keep_alive_interval(interval)
                    .keep_alive_timeout(config.connect_timeout)
                    .keep_alive_while_idle(true);
            }
            let connection = InterceptedService::new(endpoint.connect_lazy(), credentials.clone());
            endpoints.push((address, connection));
        }
        let start = if config.spread_start && endpoints.len() > 1 {
            rand::random_range(0..endpoints.len())
        } else {
            0
        };
        Ok(Self {
            endpoints,
            current: AtomicUsize::new(start),
        })
    }

    /// The endpoint in use: its position, address and channel.
    pub(crate) fn current(&self) -> (usize, &str, Connection) {
        let i = self.current.load(Ordering::Relaxed) % self.endpoints.len();
        let (address, channel) = &self.endpoints[i];
        (i, address, channel.clone())
    }

    /// Moves on from endpoint `from` to the next one (unless another call already moved on).
    pub(crate) fn fail_over(&self, from: usize) {
        let next = (from + 1) % self.endpoints.len();
        let _ = self
            .current
            .compare_exchange(from, next, Ordering::Relaxed, Ordering::Relaxed);
    }

    /// Every endpoint's address and channel.
    pub(crate) fn all(&self) -> impl Iterator<Item = (&str, Connection)> {
        self.endpoints.iter().map(|(a, c)| (a.as_str(), c.clone()))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn addresses_get_the_scheme_tls_implies() {
        assert_eq!(
            normalise_address("127.0.0.1:50051", false).unwrap(),
            "http://127.0.0.1:50051"
        );
        assert_eq!(normalise_address("h:1", true).unwrap(), "https://h:1");
        assert_eq!(normalise_address("http://h:1", false).unwrap(), "http://h:1");
        let e = normalise_address("https://h:1", false).unwrap_err().to_string();
        assert!(
            e.starts_with("server = \"https://h:1\": https:// needs TLS settings"),
            "{e}"
        );
        let e = normalise_address("http://h:1", true).unwrap_err().to_string();
        assert!(e.ends_with("must use https:// when TLS is configured"), "{e}");
        assert!(normalise_address(" ", false).is_err());
        assert!(normalise_address("ftp://h:1", false).is_err());
    }

    #[test]
    fn tokens_are_checked_without_being_echoed() {
        assert!(check_token("abc-123_XYZ").is_ok());
        let e = check_token("secret with space").unwrap_err().to_string();
        assert!(!e.contains("secret"), "{e}");
        assert!(e.contains("17 characters"), "{e}");
        assert!(check_token("").is_err());
        assert!(check_token("tab\there").is_err());
    }

    #[tokio::test]
    async fn failover_moves_round_the_endpoints_once_per_failure() {
        let mut c = ClientConfig::new("127.0.0.1:1");
        c.endpoints.push("127.0.0.1:2".into());
        c.endpoints.push("127.0.0.1:3".into());
        c.spread_start = false;
        let pool = Pool::new(&c).unwrap();
        assert_eq!(pool.all().count(), 3);
        assert_eq!(pool.current().0, 0);
        pool.fail_over(0);
        // A second call that failed on endpoint 0 does not skip endpoint 1.
        pool.fail_over(0);
        assert_eq!(pool.current().1, "http://127.0.0.1:2");
        pool.fail_over(1);
        pool.fail_over(2);
        assert_eq!(pool.current().0, 0);
    }
}
