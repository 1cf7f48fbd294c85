//! The gRPC adapter: thin handlers that convert wire messages ([`convert`]), admit the request
//! under the process-wide concurrency limit, run the engine call on the blocking pool, and map
//! errors to statuses in one place ([`status`]).

pub mod admin;
pub mod bounded;
pub mod catalogue;
pub mod consistency;
pub mod convert;
pub mod health;
pub mod populations;
pub mod rates;
pub mod status;
pub mod transport;
pub mod wire_status;

use crate::engine::{Cancel, Engine, EngineError};
use std::sync::Arc;
use std::time::Duration;
use tokio::sync::Semaphore;
use tonic::Status;
use tonic_types::{ErrorDetails, StatusExt};

/// The wait suggested to a client whose call was shed.
const SHED_RETRY_HINT: Duration = Duration::from_millis(50);

/// How long before a deadline the server gives up and answers DEADLINE_EXCEEDED: a tenth of
/// it, within [5 ms, 100 ms], so the answer beats the transport's own timer (which would
/// answer CANCELLED) even on a loaded machine.
fn deadline_margin(limit: Duration) -> Duration {
    (limit / 10).clamp(Duration::from_millis(5), Duration::from_millis(100))
}

/// When a request reached the server, recorded by [`record_arrival`].
#[derive(Debug, Clone, Copy)]
pub struct Arrival(pub std::time::Instant);

/// Interceptor (installed as a server layer) that records each request's arrival time, so a
/// handler measures the client's deadline from the same moment as the transport does.
pub fn record_arrival(mut request: tonic::Request<()>) -> Result<tonic::Request<()>, Status> {
    request
        .extensions_mut()
        .insert(Arrival(std::time::Instant::now()));
    Ok(request)
}

/// The time left until the client's deadline: the `grpc-timeout` header (gRPC over HTTP/2
/// spec: at most 8 digits and a unit H, M, S, m, u or n) less the time since arrival.
pub fn deadline_of<T>(request: &tonic::Request<T>) -> Option<Duration> {
    let timeout = grpc_timeout(request)?;
    let waited = request
        .extensions()
        .get::<Arrival>()
        .map_or(Duration::ZERO, |a| a.0.elapsed());
    Some(timeout.saturating_sub(waited))
}

/// The `grpc-timeout` header's value, if present and well formed.
fn grpc_timeout<T>(request: &tonic::Request<T>) -> Option<Duration> {
    let text = request.metadata().get("grpc-timeout")?.to_str().ok()?;
    let (digits, unit) = text.split_at(text.len().checked_sub(1)?);
    if digits.is_empty() || digits.len() > 8 {
        return None;
    }
    let value: u64 = digits.parse().ok()?;
    Some(match unit {
        "H" => Duration::from_secs(value.saturating_mul(3600)),
        "M" => Duration::from_secs(value.saturating_mul(60)),
        "S" => Duration::from_secs(value),
        "m" => Duration::from_millis(value),
        "u" => Duration::from_micros(value),
        "n" => Duration::from_nanos(value),
        _ => return None,
    })
}

/// The answer of a call cut because the server is stopping: UNAVAILABLE, which clients may
/// retry elsewhere.
pub fn stopping_status() -> Status {
    Status::unavailable(
        "server stopping: the call was cut when the shutdown grace period ran out; retry on another endpoint",
    )
}

/// Sets its flag when dropped: ties a computation's lifetime to the call waiting for it.
struct CancelOnDrop(Cancel);

impl Drop for CancelOnDrop {
    fn drop(&mut self) {
        self.0.cancel();
    }
}

/// State shared by every handler. Cheap to clone.
#[derive(Clone)]
pub struct AppState {
    /// The pure core.
    pub engine: Engine,
    permits: Arc<Semaphore>,
    max_in_flight: usize,
    request_timeout: Duration,
    cut: Arc<tokio::sync::watch::Sender<bool>>,
    health: Option<tonic_health::server::HealthReporter>,
    /// Counters and gauges served at the metrics endpoint.
    pub metrics: Arc<crate::metrics::Metrics>,
}

impl AppState {
    /// State over `engine` admitting at most `max_in_flight` engine calls at once (further
    /// calls are shed with RESOURCE_EXHAUSTED and a retry hint), each bounded by the default
    /// request timeout (see [`Self::with_request_timeout`]).
    pub fn new(engine: Engine, max_in_flight: usize) -> Self {
        Self {
            engine,
            permits: Arc::new(Semaphore::new(max_in_flight)),
            max_in_flight,
            request_timeout: crate::config::Config::default().request_timeout,
            cut: Arc::new(tokio::sync::watch::Sender::new(false)),
            health: None,
            metrics: Arc::default(),
        }
    }

    /// Keeps the dataset-folder entries of `health` up to date after every load
    /// ([`health::publish_folder_health`]).
    pub fn with_health(mut self, health: tonic_health::server::HealthReporter) -> Self {
        self.health = Some(health);
        self
    }

    /// Republishes the dataset-folder health entries (no-op without a health reporter).
    pub async fn publish_folder_health(&self) {
        if let Some(reporter) = &self.health {
            health::publish_folder_health(reporter, &self.engine).await;
        }
    }

    /// Bounds every call by `request_timeout` (answered DEADLINE_EXCEEDED).
    pub fn with_request_timeout(mut self, request_timeout: Duration) -> Self {
        self.request_timeout = request_timeout;
        self
    }

    /// Engine calls holding a concurrency permit now.
    pub fn in_flight(&self) -> usize {
        self.max_in_flight
            .saturating_sub(self.permits.available_permits())
    }

    /// The upper bound on any call's duration (and on a stream's silence).
    pub fn request_timeout(&self) -> Duration {
        self.request_timeout
    }

    /// Ends every call still in flight with UNAVAILABLE ([`stopping_status`]), streams
    /// included, and sets the stop flag of their work (when the shutdown grace runs out).
    pub fn cut_in_flight(&self) {
        self.cut.send_replace(true);
    }

    /// Resolves once [`Self::cut_in_flight`] was called (at once if it was already).
    pub async fn wait_for_cut(&self) {
        let mut cut = self.cut.subscribe();
        // The sender lives in `self`, so the wait ends only by the cut.
        let _ = cut.wait_for(|&c| c).await;
    }

    /// [`Self::run_cancellable`] for work that does not read the stop flag: when the call
    /// ends early (deadline, shutdown cut, client gone) it is answered at once, but the work
    /// goes on to its end on the blocking pool and keeps its permit until then. Only for work
    /// that is short whatever the request, or that should finish anyway (a dataset load, which
    /// is swapped in whole).
    pub async fn run<T, F>(&self, deadline: Option<Duration>, work: F) -> Result<T, Status>
    where
        T: Send + 'static,
        F: FnOnce(&Engine) -> Result<T, EngineError> + Send + 'static,
    {
        self.run_cancellable(deadline, move |engine, _| work(engine))
            .await
    }

    /// Runs certainly-small engine work (microseconds) on the calling async thread, under the
    /// same concurrency limit as [`Self::run`]; a panic in it is answered INTERNAL like a
    /// failed blocking task.
    pub fn run_inline<T, F>(&self, work: F) -> Result<T, Status>
    where
        F: FnOnce(&Engine) -> Result<T, EngineError>,
    {
        let _permit = Arc::clone(&self.permits)
            .try_acquire_owned()
            .map_err(|_| self.busy())?;
        match std::panic::catch_unwind(std::panic::AssertUnwindSafe(|| work(&self.engine))) {
            Ok(result) => result.map_err(|e| {
                tracing::debug!(error = %e, "request refused");
                status::to_status(&e)
            }),
            Err(_) => {
                tracing::error!("engine work panicked");
                Err(Status::internal(
                    "internal error while computing the answer; the server keeps serving",
                ))
            }
        }
    }

    /// The load-shedding answer: RESOURCE_EXHAUSTED with a retry hint, which tells clients
    /// this is worth retrying, unlike a request over a configured limit (also
    /// RESOURCE_EXHAUSTED, without a hint).
    fn busy(&self) -> Status {
        self.metrics.record_shed();
        Status::with_error_details(
            tonic::Code::ResourceExhausted,
            format!(
                "server busy: {} engine calls in flight (max_in_flight); retry with backoff",
                self.max_in_flight
            ),
            ErrorDetails::with_retry_info(Some(SHED_RETRY_HINT)),
        )
    }

    /// Runs `work` on the blocking pool under a concurrency permit (shedding the call with
    /// RESOURCE_EXHAUSTED when none is free) and maps its error. At the earlier of the
    /// client's deadline and `request_timeout` the call answers DEADLINE_EXCEEDED, a few
    /// milliseconds early so the status reaches the client before the transport's own timer
    /// cancels the call; when the shutdown grace runs out it answers UNAVAILABLE.
    ///
    /// Whenever the call ends before the work (deadline, shutdown cut, or the client going
    /// away, which drops this future) the work's [`Cancel`] flag is set. Engine work checks it
    /// between pieces and stops with [`EngineError::Cancelled`], and the permit, held by the
    /// work, is freed then: at most one piece of work after the call ended (one point of a
    /// solve or one table of a build per thread, one transition of a comparison, one block of
    /// a lookup).
    pub async fn run_cancellable<T, F>(&self, deadline: Option<Duration>, work: F) -> Result<T, Status>
    where
        T: Send + 'static,
        F: FnOnce(&Engine, &Cancel) -> Result<T, EngineError> + Send + 'static,
    {
        let permit = Arc::clone(&self.permits)
            .try_acquire_owned()
            .map_err(|_| self.busy())?;
        let engine = self.engine.clone();
        let cancel = Cancel::default();
        let worker_cancel = cancel.clone();
        // Dropped (and so cancelling) whenever this future ends early: deadline, shutdown cut,
        // or the client going away.
        let _cancel_on_drop = CancelOnDrop(cancel);
        let task = tokio::task::spawn_blocking(move || {
            let _permit = permit;
            work(&engine, &worker_cancel)
        });
        let limit = deadline.map_or(self.request_timeout, |d| d.min(self.request_timeout));
        let joined = tokio::select! {
            finished = tokio::time::timeout(limit.saturating_sub(deadline_margin(limit)), task) => match finished {
                Ok(joined) => joined,
                Err(_) => {
                    return Err(Status::deadline_exceeded(format!(
                        "deadline of {:.3} s exceeded before the answer was ready",
                        limit.as_secs_f64()
                    )));
                }
            },
            () = self.wait_for_cut() => return Err(stopping_status()),
        };
        match joined {
            Ok(result) => result.map_err(|e| {
                tracing::debug!(error = %e, "request refused");
                status::to_status(&e)
            }),
            Err(join) => {
                tracing::error!(error = %join, "engine task failed");
                Err(Status::internal(
                    "internal error while computing the answer; the server keeps serving",
                ))
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn grpc_timeout_headers_parse_as_the_spec_says() {
        // gRPC over HTTP/2 protocol spec, "Timeout" (common practice, no further source).
        let with = |v: &str| {
            let mut r = tonic::Request::new(());
            r.metadata_mut().insert("grpc-timeout", v.parse().unwrap());
            deadline_of(&r)
        };
        assert_eq!(with("100m"), Some(Duration::from_millis(100)));
        assert_eq!(with("2S"), Some(Duration::from_secs(2)));
        assert_eq!(with("1H"), Some(Duration::from_secs(3600)));
        assert_eq!(with("5000u"), Some(Duration::from_micros(5000)));
        assert_eq!(with("123456789m"), None);
        assert_eq!(with("m"), None);
        assert_eq!(with("10x"), None);
        assert_eq!(deadline_of(&tonic::Request::new(())), None);
    }
}
