//! The gRPC adapter: thin handlers that convert wire messages ([`convert`]), admit the request
//! under the process-wide concurrency limit, run the engine call on the blocking pool, and map
//! errors to statuses in one place ([`status`]).

pub mod admin;
pub mod catalogue;
pub mod consistency;
pub mod convert;
pub mod populations;
pub mod rates;
pub mod status;
pub mod transport;

use crate::engine::{Engine, EngineError};
use std::sync::Arc;
use tokio::sync::Semaphore;
use std::time::Duration;
use tonic::Status;
use tonic_types::{ErrorDetails, StatusExt};

/// The wait suggested to a client whose call was shed.
const SHED_RETRY_HINT: Duration = Duration::from_millis(50);

/// State shared by every handler. Cheap to clone.
#[derive(Clone)]
pub struct AppState {
    /// The pure core.
    pub engine: Engine,
    permits: Arc<Semaphore>,
    max_in_flight: usize,
}

impl AppState {
    /// State over `engine` admitting at most `max_in_flight` engine calls at once; further
    /// calls are shed with RESOURCE_EXHAUSTED (clients retry with backoff).
    pub fn new(engine: Engine, max_in_flight: usize) -> Self {
        Self {
            engine,
            permits: Arc::new(Semaphore::new(max_in_flight)),
            max_in_flight,
        }
    }

    /// Runs `work` on the blocking pool under a concurrency permit and maps its error.
    pub async fn run<T, F>(&self, work: F) -> Result<T, Status>
    where
        T: Send + 'static,
        F: FnOnce(&Engine) -> Result<T, EngineError> + Send + 'static,
    {
        let permit = Arc::clone(&self.permits).try_acquire_owned().map_err(|_| {
            // The retry hint tells clients this is load shedding, worth retrying, unlike a
            // request over a configured limit (also RESOURCE_EXHAUSTED, without a hint).
            Status::with_error_details(
                tonic::Code::ResourceExhausted,
                format!(
                    "server busy: {} engine calls in flight (max_in_flight); retry with backoff",
                    self.max_in_flight
                ),
                ErrorDetails::with_retry_info(Some(SHED_RETRY_HINT)),
            )
        })?;
        let engine = self.engine.clone();
        let joined = tokio::task::spawn_blocking(move || {
            let _permit = permit;
            work(&engine)
        })
        .await;
        match joined {
            Ok(result) => result.map_err(|e| {
                tracing::debug!(error = %e, "request refused");
                status::to_status(&e)
            }),
            Err(join) => {
                tracing::error!(error = %join, "engine task failed");
                Err(Status::internal("internal error while computing the answer; the server keeps serving"))
            }
        }
    }
}
