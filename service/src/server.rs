//! Serving: builds the engine from the configuration, registers the gRPC services (ours,
//! standard health checking, reflection), and runs until the shutdown future resolves, then
//! drains: health NOT_SERVING, a short pause, then a graceful stop bounded by
//! `shutdown_grace`. `main` and the end-to-end tests both call [`run`].

use crate::api::AppState;
use crate::api::admin::AdminHandler;
use crate::api::catalogue::CatalogueHandler;
use crate::api::consistency::ConsistencyHandler;
use crate::api::populations::PopulationsHandler;
use crate::api::rates::RatesHandler;
use crate::api::transport::TransportHandler;
use crate::auth::{AuthLayer, Gate};
use crate::config::Config;
use crate::connections::ConnectionGate;
use crate::engine::{Engine, EngineError};
use crate::linger::LingeringStream;
use crate::metrics::MetricsLayer;
use ratewell_proto::pb::{
    admin_server::AdminServer, catalogue_server::CatalogueServer, consistency_server::ConsistencyServer,
    populations_server::PopulationsServer, rates_server::RatesServer, transport_server::TransportServer,
};
use std::future::Future;
use std::sync::Arc;
use std::time::{Duration, Instant};
use tokio::net::TcpListener;
use tokio_stream::StreamExt;
use tokio_stream::wrappers::TcpListenerStream;
use tokio_util::task::TaskTracker;

/// Why the server could not start or stopped with an error.
#[derive(Debug, thiserror::Error)]
pub enum ServerError {
    /// The embedded demo or the data folder itself could not be loaded at start-up (a bad
    /// dataset folder inside the data folder is refused on its own and does not stop the
    /// server; see [`build_engine`]).
    #[error("start-up failed: {0}")]
    Load(#[from] EngineError),
    /// The transport failed.
    #[error("transport error: {0}")]
    Transport(#[from] tonic::transport::Error),
    /// Reflection could not be built from the descriptor set.
    #[error("reflection setup failed: {0}")]
    Reflection(#[from] tonic_reflection::server::Error),
    /// The tokens file could not be read or breaks its format.
    #[error("start-up failed: {0}")]
    Tokens(#[from] crate::auth::TokensFileError),
    /// The TLS certificate or key could not be read.
    #[error("start-up failed: {0}")]
    Tls(#[from] crate::tls::TlsError),
    /// The metrics address could not be bound.
    #[error("cannot listen for metrics on {addr}: {source}")]
    MetricsBind {
        /// The configured `metrics_listen`.
        addr: std::net::SocketAddr,
        /// The I/O error.
        source: std::io::Error,
    },
    /// A start-up task panicked or was cancelled.
    #[error("start-up task failed: {0}")]
    Join(#[from] tokio::task::JoinError),
}

/// Builds the engine and loads the configured datasets (demo and/or every dataset folder of
/// the data folder). CPU-heavy: runs table precompute.
///
/// A dataset folder that fails to load is refused on its own and the others are served: a
/// long-running service should not lose every dataset to one bad file. Each refusal is logged
/// at error level with the folder and, for every problem, its file, line and field; health
/// checking reports it (`api::health`) until a `LoadDataset` of the fixed folder succeeds.
/// Only an unreadable data folder, or a demo that fails to load, is an error here.
pub fn build_engine(config: &Config) -> Result<Engine, EngineError> {
    let engine = Engine::new(config.engine_config());
    if config.demo {
        let report = engine.load_demo()?;
        tracing::info!(dataset = %report.stamp.label(), hash = %report.stamp.content_hash, tables = report.table_count, seconds = report.precompute_seconds, "demo dataset loaded (invented data)");
    }
    let outcomes = engine.load_data_folder()?;
    let refused = outcomes.iter().filter(|(_, r)| r.is_err()).count();
    for (folder, result) in &outcomes {
        match result {
            Ok(report) => {
                tracing::info!(folder = %folder, dataset = %report.stamp.label(), hash = %report.stamp.content_hash, tables = report.table_count, seconds = report.precompute_seconds, "dataset loaded");
            }
            Err(error) => log_refused_folder(folder, error),
        }
    }
    if refused > 0 {
        tracing::warn!(
            refused,
            folders = outcomes.len(),
            "some dataset folders were refused at start-up; every other dataset is served; \
             health check \"{}\" reports NOT_SERVING until LoadDataset of each fixed folder succeeds",
            crate::api::health::FOLDERS_SERVICE
        );
    }
    if engine.datasets().is_empty() {
        tracing::warn!(
            "no dataset loaded: only catalogue, health and LoadDataset calls can succeed until a folder loads"
        );
    }
    Ok(engine)
}

/// Logs one refused folder: a summary line, then one line per located problem.
fn log_refused_folder(folder: &str, error: &EngineError) {
    // The inner error: "previous data keep serving" (a reload's wording) has no meaning here.
    let (problems, detail) = match error {
        EngineError::Load(e) => (e.problems(), e.to_string()),
        other => (Vec::new(), other.to_string()),
    };
    tracing::error!(
        folder = %folder,
        problems = problems.len(),
        error = %detail,
        "dataset folder refused at start-up; the other datasets are served"
    );
    for p in problems {
        tracing::error!(
            folder = %folder,
            file = %p.file,
            line = p.line,
            field = %p.field,
            problem = %p.message,
            "dataset problem"
        );
    }
}

/// How long before the end of the shutdown grace the calls still in flight are cut: a quarter
/// of the grace, at most 250 ms, which leaves the cut calls' UNAVAILABLE statuses time to be
/// written and their connections time to close before the server is aborted.
fn cut_margin(grace: Duration) -> Duration {
    (grace / 4).min(Duration::from_millis(250))
}

/// Serves on `listener` until `shutdown` resolves, then drains and stops: health NOT_SERVING,
/// `drain`, no new connections or calls, then in-flight calls get until `shutdown_grace` to
/// finish; those still running [`cut_margin`] before its end are answered UNAVAILABLE and their
/// work told to stop. `run` returns within `drain + shutdown_grace` (plus at most one
/// [`crate::linger::LINGER`] for the metrics endpoint).
pub async fn run(
    listener: TcpListener,
    config: Config,
    shutdown: impl Future<Output = ()> + Send + 'static,
) -> Result<(), ServerError> {
    let started = Instant::now();
    let engine_config = config.clone();
    let engine = tokio::task::spawn_blocking(move || build_engine(&engine_config)).await??;
    serve(listener, config, engine, shutdown, started).await
}

/// Serves an already built engine (tests and benchmarks use this to skip loading twice).
pub async fn serve(
    listener: TcpListener,
    config: Config,
    engine: Engine,
    shutdown: impl Future<Output = ()> + Send + 'static,
    started: Instant,
) -> Result<(), ServerError> {
    let token_gate = match &config.tokens_file {
        Some(path) => Gate::from_file(path, config.auth_scope)?,
        None => Gate::closed_admin(),
    };
    let (health, health_service) = tonic_health::server::health_reporter();
    let state = AppState::new(engine, config.max_in_flight)
        .with_request_timeout(config.request_timeout)
        .with_health(health.clone());
    let limit = config.max_message_bytes;
    state.publish_folder_health().await;
    // Reflection names exactly the services served (Transport only when enabled).
    let mut served: Vec<&str> = vec![
        "ratewell.v1.Catalogue",
        "ratewell.v1.Rates",
        "ratewell.v1.Populations",
        "ratewell.v1.Consistency",
        "ratewell.v1.Admin",
        "grpc.health.v1.Health",
        "grpc.reflection.v1.ServerReflection",
        "grpc.reflection.v1alpha.ServerReflection",
    ];
    if config.benchmark_endpoints {
        served.push("ratewell.v1.Transport");
    }
    let reflection = || {
        served.iter().fold(
            tonic_reflection::server::Builder::configure()
                .register_encoded_file_descriptor_set(ratewell_proto::FILE_DESCRIPTOR_SET)
                .register_encoded_file_descriptor_set(tonic_health::pb::FILE_DESCRIPTOR_SET),
            |b, name| b.with_service_name(*name),
        )
    };
    let reflection_v1 = reflection().build_v1()?;
    let reflection_v1alpha = reflection().build_v1alpha()?;

    macro_rules! limited {
        ($server:ident, $handler:expr) => {
            $server::new($handler)
                .max_decoding_message_size(limit)
                .max_encoding_message_size(limit)
        };
    }
    health.set_serving::<CatalogueServer<CatalogueHandler>>().await;
    health.set_serving::<RatesServer<RatesHandler>>().await;
    health
        .set_serving::<PopulationsServer<PopulationsHandler>>()
        .await;
    health
        .set_serving::<ConsistencyServer<ConsistencyHandler>>()
        .await;
    health.set_serving::<AdminServer<AdminHandler>>().await;

    let mut builder = tonic::transport::Server::builder()
        // A backstop only: AppState answers DEADLINE_EXCEEDED at request_timeout first (the
        // transport's own timer would answer CANCELLED).
        .timeout(config.request_timeout + Duration::from_secs(1))
        .http2_keepalive_interval(Some(config.keepalive_interval))
        .http2_keepalive_timeout(Some(config.keepalive_timeout))
        .tcp_nodelay(true)
        .max_concurrent_streams(Some(config.limits.max_streams_per_connection))
        .layer(MetricsLayer::new(Arc::clone(&state.metrics)))
        .layer(crate::api::wire_status::WireStatusLayer)
        .layer(tonic::service::InterceptorLayer::new(crate::api::record_arrival))
        .layer(AuthLayer::new(token_gate.clone()));
    if let Some(age) = config.connection_age() {
        // Calls in flight when a connection reaches its age finish (up to the request timeout).
        builder = builder
            .max_connection_age(age)
            .max_connection_age_grace(config.request_timeout);
    }
    if let (Some(cert), Some(key)) = (&config.tls_cert_file, &config.tls_key_file) {
        builder = builder.tls_config(crate::tls::server_tls(cert, key)?)?;
    }
    let mut router = builder
        .add_service(health_service)
        .add_service(reflection_v1)
        .add_service(reflection_v1alpha)
        .add_service(limited!(CatalogueServer, CatalogueHandler(state.clone())))
        .add_service(limited!(RatesServer, RatesHandler(state.clone())))
        .add_service(limited!(PopulationsServer, PopulationsHandler(state.clone())))
        .add_service(limited!(ConsistencyServer, ConsistencyHandler(state.clone())))
        .add_service(limited!(AdminServer, AdminHandler(state.clone())));
    if config.benchmark_endpoints {
        router = router.add_service(limited!(TransportServer, TransportHandler));
        tracing::warn!("benchmark-only Transport service enabled");
    }

    // serve_with_incoming ignores the builder's nodelay flag, so set it per connection; every
    // connection closes by lingering (see `linger`), tracked so the stop can wait for it.
    let local = listener.local_addr().ok();
    let closing = TaskTracker::new();
    // Connections over max_connections are closed at accept; the others must send the HTTP/2
    // preface within the handshake timeout (see `connections`).
    let tracker = closing.clone();
    let gate = ConnectionGate::new(config.limits.max_connections, config.limits.handshake_timeout());
    let incoming = TcpListenerStream::new(listener).filter_map(move |conn| match conn {
        Ok(stream) => {
            let _ = stream.set_nodelay(true);
            let peer = stream.peer_addr().ok();
            gate.admit(peer, || LingeringStream::new(stream, tracker.clone()))
                .map(Ok)
        }
        Err(e) => Some(Err(e)),
    });
    tracing::info!(
        listen = %local.map_or_else(String::new, |a| a.to_string()),
        ready_after_ms = started.elapsed().as_millis() as u64,
        max_message_bytes = config.max_message_bytes,
        max_in_flight = config.max_in_flight,
        max_lookup_values = config.max_lookup_values,
        max_solve_points = config.max_solve_points,
        request_timeout_s = config.request_timeout.as_secs_f64(),
        grid = %format!(
            "{} K to {} K at {} per decade",
            config.grid_t_min_k, config.grid_t_max_k, config.grid_points_per_decade
        ),
        table_bytes = state.engine.table_bytes(),
        tls = config.tls_cert_file.is_some(),
        tokens = token_gate.token_count(),
        token_scope = token_gate.scope().as_str(),
        table_cache_bytes = config.limits.table_cache_bytes,
        max_connections = config.limits.max_connections,
        handshake_timeout_s = config.limits.handshake_timeout_s,
        "serving"
    );

    let (metrics_stop, metrics_stopped) = tokio::sync::oneshot::channel::<()>();
    let metrics_task = match config.metrics_listen {
        Some(addr) => {
            let listener = TcpListener::bind(addr)
                .await
                .map_err(|source| ServerError::MetricsBind { addr, source })?;
            tracing::info!(listen = ?listener.local_addr().ok(), "metrics at /metrics");
            Some(tokio::spawn(crate::metrics::endpoint::serve(
                listener,
                Arc::clone(&state.metrics),
                state.clone(),
                async move {
                    let _ = metrics_stopped.await;
                },
            )))
        }
        None => None,
    };
    let (stop_tx, stop_rx) = tokio::sync::oneshot::channel::<()>();
    let mut server = tokio::spawn(router.serve_with_incoming_shutdown(incoming, async {
        let _ = stop_rx.await;
    }));
    shutdown.await;
    tracing::info!("shutdown requested: health NOT_SERVING, draining");
    health
        .set_service_status("", tonic_health::ServingStatus::NotServing)
        .await;
    health
        .set_not_serving::<CatalogueServer<CatalogueHandler>>()
        .await;
    health.set_not_serving::<RatesServer<RatesHandler>>().await;
    health
        .set_not_serving::<PopulationsServer<PopulationsHandler>>()
        .await;
    health
        .set_not_serving::<ConsistencyServer<ConsistencyHandler>>()
        .await;
    health.set_not_serving::<AdminServer<AdminHandler>>().await;
    tokio::time::sleep(config.drain).await;
    let _ = stop_tx.send(());
    let deadline = tokio::time::Instant::now() + config.shutdown_grace;
    // Calls still in flight a margin before the deadline are cut (UNAVAILABLE) so that their
    // statuses are written and the connections close before the server is aborted.
    let cut_at = deadline - cut_margin(config.shutdown_grace);
    let stopped = match tokio::time::timeout_at(cut_at, &mut server).await {
        Ok(joined) => Some(joined),
        Err(_) => {
            tracing::warn!(
                grace_s = config.shutdown_grace.as_secs_f64(),
                in_flight = state.in_flight(),
                "in-flight calls still running at the end of the grace period; cutting them with UNAVAILABLE"
            );
            state.cut_in_flight();
            match tokio::time::timeout_at(deadline, &mut server).await {
                Ok(joined) => Some(joined),
                Err(_) => {
                    tracing::warn!(
                        "connections still open when the grace period ran out; stopping without them"
                    );
                    server.abort();
                    None
                }
            }
        }
    };
    if let Some(joined) = stopped {
        joined??;
    }
    // Closed connections drain their peers' last bytes, so the final answers arrive whole;
    // this wait stays within the grace period (and at most one linger).
    closing.close();
    let linger_end = deadline.min(tokio::time::Instant::now() + crate::linger::LINGER);
    if tokio::time::timeout_at(linger_end, closing.wait()).await.is_err() {
        tracing::debug!(open = closing.len(), "closing connections still draining at stop");
    }
    let _ = metrics_stop.send(());
    if let Some(task) = metrics_task {
        let _ = tokio::time::timeout(crate::linger::LINGER, task).await;
    }
    tracing::info!("stopped");
    Ok(())
}
