//! The server layer that observes every call: its method, its final status code (from the
//! response headers of an error answered at once, else from the trailers at the end of the
//! answer; a client that goes away first counts as CANCELLED) and its duration.

use super::Metrics;
use futures::future::BoxFuture;
use http_body::{Body, Frame, SizeHint};
use std::pin::Pin;
use std::sync::Arc;
use std::task::{Context, Poll};
use std::time::Instant;
use tonic::Code;

/// Tower layer recording calls into `metrics`.
#[derive(Debug, Clone)]
pub struct MetricsLayer {
    metrics: Arc<Metrics>,
}

impl MetricsLayer {
    /// The layer over `metrics`.
    pub fn new(metrics: Arc<Metrics>) -> Self {
        Self { metrics }
    }
}

impl<S> tower_layer::Layer<S> for MetricsLayer {
    type Service = MetricsService<S>;

    fn layer(&self, inner: S) -> MetricsService<S> {
        MetricsService {
            inner,
            metrics: Arc::clone(&self.metrics),
        }
    }
}

/// The service [`MetricsLayer`] wraps around the routes.
#[derive(Debug, Clone)]
pub struct MetricsService<S> {
    inner: S,
    metrics: Arc<Metrics>,
}

/// The call being observed; records exactly once.
struct Pending {
    metrics: Arc<Metrics>,
    path: String,
    started: Instant,
}

impl Pending {
    fn finish(self, code: Code) {
        self.metrics.record_call(&self.path, code, self.started.elapsed());
    }
}

/// The `grpc-status` in `headers`, if any.
fn status_in(headers: &http::HeaderMap) -> Option<Code> {
    let value = headers.get("grpc-status")?.to_str().ok()?;
    Some(Code::from_i32(value.trim().parse().ok()?))
}

impl<S, B, RB> tower_service::Service<http::Request<B>> for MetricsService<S>
where
    S: tower_service::Service<http::Request<B>, Response = http::Response<RB>>,
    S::Future: Send + 'static,
    S::Error: Send + 'static,
    RB: Body + Unpin + Send + 'static,
{
    type Response = http::Response<ObservedBody<RB>>;
    type Error = S::Error;
    type Future = BoxFuture<'static, Result<Self::Response, Self::Error>>;

    fn poll_ready(&mut self, cx: &mut Context<'_>) -> Poll<Result<(), Self::Error>> {
        self.inner.poll_ready(cx)
    }

    fn call(&mut self, request: http::Request<B>) -> Self::Future {
        let pending = Pending {
            metrics: Arc::clone(&self.metrics),
            path: request.uri().path().to_owned(),
            started: Instant::now(),
        };
        let answer = self.inner.call(request);
        Box::pin(async move {
            match answer.await {
                Ok(response) => {
                    let pending = match status_in(response.headers()) {
                        Some(code) => {
                            pending.finish(code);
                            None
                        }
                        None => Some(pending),
                    };
                    Ok(response.map(|inner| ObservedBody { inner, pending }))
                }
                Err(e) => {
                    pending.finish(Code::Unknown);
                    Err(e)
                }
            }
        })
    }
}

/// A response body that records its call when the trailers pass, the stream ends or breaks,
/// or it is dropped unfinished.
pub struct ObservedBody<B> {
    inner: B,
    pending: Option<Pending>,
}

impl<B> ObservedBody<B> {
    fn finish(&mut self, code: Code) {
        if let Some(p) = self.pending.take() {
            p.finish(code);
        }
    }
}

impl<B> Drop for ObservedBody<B> {
    fn drop(&mut self) {
        // Dropped before its end: the client went away (or the connection broke).
        self.finish(Code::Cancelled);
    }
}

impl<B: Body + Unpin> Body for ObservedBody<B> {
    type Data = B::Data;
    type Error = B::Error;

    fn poll_frame(
        self: Pin<&mut Self>,
        cx: &mut Context<'_>,
    ) -> Poll<Option<Result<Frame<Self::Data>, Self::Error>>> {
        let this = self.get_mut();
        let polled = Pin::new(&mut this.inner).poll_frame(cx);
        match &polled {
            Poll::Ready(Some(Ok(frame))) => {
                if let Some(trailers) = frame.trailers_ref() {
                    this.finish(status_in(trailers).unwrap_or(Code::Unknown));
                }
            }
            Poll::Ready(Some(Err(_))) => this.finish(Code::Unknown),
            // An answer that ends without trailers carries no status.
            Poll::Ready(None) => this.finish(Code::Unknown),
            Poll::Pending => {}
        }
        polled
    }

    fn is_end_stream(&self) -> bool {
        self.inner.is_end_stream()
    }

    fn size_hint(&self) -> SizeHint {
        self.inner.size_hint()
    }
}
