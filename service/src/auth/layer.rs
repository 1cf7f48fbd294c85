//! The server layer that applies a [`Gate`] to every call before routing: a refused call is
//! answered UNAUTHENTICATED at once; an admitted one carries its [`Caller`] in the extensions.
//!
//! Every refused Admin call is written to the audit log. Refused calls to the other services
//! (with `auth_scope = all`) can come in floods from one misconfigured job array, so they are
//! logged at most once per ten seconds, with the count refused since the last line.

use super::Gate;
use crate::api::status::refusal_status;
use crate::connections::RateLimitedWarning;
use std::sync::Arc;
use std::task::{Context, Poll};

/// The peer address of a connection, plain or TLS.
fn peer_of(extensions: &http::Extensions) -> Option<std::net::SocketAddr> {
    use tonic::transport::server::{TcpConnectInfo, TlsConnectInfo};
    extensions
        .get::<TcpConnectInfo>()
        .and_then(TcpConnectInfo::remote_addr)
        .or_else(|| {
            extensions
                .get::<TlsConnectInfo<TcpConnectInfo>>()
                .and_then(|c| c.get_ref().remote_addr())
        })
}

/// Paths of the Admin service, whose refusals are always audited.
const ADMIN_PREFIX: &str = "/ratewell.v1.Admin/";

/// Tower layer applying `gate` to every request.
#[derive(Debug, Clone)]
pub struct AuthLayer {
    gate: Arc<Gate>,
    refused: Arc<RateLimitedWarning>,
}

impl AuthLayer {
    /// The layer over `gate`.
    pub fn new(gate: Gate) -> Self {
        Self {
            gate: Arc::new(gate),
            refused: Arc::default(),
        }
    }
}

impl<S> tower_layer::Layer<S> for AuthLayer {
    type Service = AuthService<S>;

    fn layer(&self, inner: S) -> AuthService<S> {
        AuthService {
            inner,
            gate: Arc::clone(&self.gate),
            refused: Arc::clone(&self.refused),
        }
    }
}

/// The service [`AuthLayer`] wraps around the routes.
#[derive(Debug, Clone)]
pub struct AuthService<S> {
    inner: S,
    gate: Arc<Gate>,
    refused: Arc<RateLimitedWarning>,
}

impl<S, B, RB> tower_service::Service<http::Request<B>> for AuthService<S>
where
    S: tower_service::Service<http::Request<B>, Response = http::Response<RB>>,
    RB: Default,
{
    type Response = http::Response<RB>;
    type Error = S::Error;
    type Future =
        futures::future::Either<futures::future::Ready<Result<http::Response<RB>, S::Error>>, S::Future>;

    fn poll_ready(&mut self, cx: &mut Context<'_>) -> Poll<Result<(), Self::Error>> {
        self.inner.poll_ready(cx)
    }

    fn call(&mut self, mut request: http::Request<B>) -> Self::Future {
        let header = request
            .headers()
            .get(http::header::AUTHORIZATION)
            .map(http::HeaderValue::as_bytes);
        match self.gate.check(request.uri().path(), header) {
            Ok(caller) => {
                if let Some(caller) = caller {
                    request.extensions_mut().insert(caller);
                }
                futures::future::Either::Right(self.inner.call(request))
            }
            Err(refusal) => {
                let peer = peer_of(request.extensions());
                let path = request.uri().path();
                if path.starts_with(ADMIN_PREFIX) {
                    tracing::warn!(
                        target: "ratewell::audit",
                        peer = ?peer,
                        method = ?path,
                        refused = %refusal,
                        "call refused before its handler"
                    );
                } else if let Some(count) = self.refused.due() {
                    tracing::warn!(
                        target: "ratewell::audit",
                        peer = ?peer,
                        method = ?path,
                        refused = %refusal,
                        refused_since_last_line = count,
                        "calls refused before their handlers (at most one line per 10 s; this is the latest)"
                    );
                }
                futures::future::Either::Left(futures::future::ready(
                    Ok(refusal_status(&refusal).into_http()),
                ))
            }
        }
    }
}
