//! The metrics endpoint: `GET /metrics` answers OpenMetrics text (Prometheus scrapes it);
//! anything else is 404. Plain HTTP/1.1 on its own address, so it can stay on an internal
//! interface while the gRPC port is exposed.

use super::Metrics;
use crate::api::AppState;
use axum::http::{StatusCode, header};
use axum::response::IntoResponse;
use std::future::Future;
use std::sync::Arc;
use tokio::net::TcpListener;

/// OpenMetrics text format 1.0.0 (the encoder's format).
const CONTENT_TYPE: &str = "application/openmetrics-text; version=1.0.0; charset=utf-8";

/// Serves `/metrics` on `listener` until `stop` resolves.
pub async fn serve(
    listener: TcpListener,
    metrics: Arc<Metrics>,
    state: AppState,
    stop: impl Future<Output = ()> + Send + 'static,
) -> std::io::Result<()> {
    let app = axum::Router::new().route(
        "/metrics",
        axum::routing::get(move || {
            let text = metrics.render(&state);
            async move { (StatusCode::OK, [(header::CONTENT_TYPE, CONTENT_TYPE)], text).into_response() }
        }),
    );
    axum::serve(listener, app).with_graceful_shutdown(stop).await
}
