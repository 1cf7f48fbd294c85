//! Connections: one lazily connected `Channel` per endpoint, cloned freely, and the choice of
//! endpoint. With several endpoints the client uses one at a time and moves on to the next when
//! a call fails with UNAVAILABLE or RESOURCE_EXHAUSTED (simple failover, no background probe).

use crate::config::ClientConfig;
use crate::error::ClientError;
use std::sync::atomic::{AtomicUsize, Ordering};
use tonic::transport::{Channel, Endpoint};

/// The endpoints of one client and which one is in use.
#[derive(Debug)]
pub(crate) struct Pool {
    endpoints: Vec<(String, Channel)>,
    current: AtomicUsize,
}

/// "host:port" gets "http://"; TLS schemes are refused (not built in).
pub(crate) fn normalise_address(address: &str) -> Result<String, ClientError> {
    let a = address.trim();
    let bad = |allowed: &str| ClientError::invalid("server", format!("{address:?}"), allowed);
    if a.is_empty() {
        return Err(bad("must be an address like http://127.0.0.1:50051"));
    }
    let full = if a.contains("://") {
        a.to_string()
    } else {
        format!("http://{a}")
    };
    if !full.starts_with("http://") {
        return Err(bad(
            "must use http:// (plain HTTP/2 inside the cluster; TLS is not built into this client)",
        ));
    }
    Ok(full)
}

impl Pool {
    /// Sets up a lazy channel per endpoint (nothing connects until the first call).
    /// Must run inside a tokio runtime.
    pub(crate) fn new(config: &ClientConfig) -> Result<Self, ClientError> {
        let mut endpoints = Vec::with_capacity(config.endpoints.len());
        for address in &config.endpoints {
            let address = normalise_address(address)?;
            let transport = |e: &dyn std::fmt::Display| ClientError::Transport {
                endpoint: address.clone(),
                message: e.to_string(),
            };
            let mut endpoint = Endpoint::from_shared(address.clone())
                .map_err(|e| transport(&e))?
                .connect_timeout(config.connect_timeout)
                .tcp_nodelay(true);
            if let Some(interval) = config.keepalive_interval {
                endpoint = endpoint
                    .http2_keep_alive_interval(interval)
                    .keep_alive_timeout(config.connect_timeout)
                    .keep_alive_while_idle(true);
            }
            endpoints.push((address, endpoint.connect_lazy()));
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
    pub(crate) fn current(&self) -> (usize, &str, Channel) {
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
    pub(crate) fn all(&self) -> impl Iterator<Item = (&str, Channel)> {
        self.endpoints.iter().map(|(a, c)| (a.as_str(), c.clone()))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn addresses_are_normalised_and_tls_is_refused() {
        assert_eq!(
            normalise_address("127.0.0.1:50051").unwrap(),
            "http://127.0.0.1:50051"
        );
        assert_eq!(normalise_address("http://h:1").unwrap(), "http://h:1");
        let e = normalise_address("https://h:1").unwrap_err().to_string();
        assert!(e.starts_with("server = \"https://h:1\": must use http://"), "{e}");
        assert!(normalise_address(" ").is_err());
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
