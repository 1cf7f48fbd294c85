//! Admin service: load or reload a dataset folder; a failure leaves the old data serving.

use super::convert::stamp;
use super::{AppState, deadline_of};
use crate::auth::Caller;
use ratewell_proto::pb::{self, admin_server::Admin};
use tonic::{Request, Response, Status};

/// Handler of the Admin service.
#[derive(Clone)]
pub struct AdminHandler(pub AppState);

#[tonic::async_trait]
impl Admin for AdminHandler {
    async fn load_dataset(
        &self,
        request: Request<pb::LoadDatasetRequest>,
    ) -> Result<Response<pb::LoadDatasetResponse>, Status> {
        let deadline = deadline_of(&request);
        let caller = request
            .extensions()
            .get::<Caller>()
            .map_or_else(|| "(none)".to_owned(), |c| c.0.clone());
        let peer = request.remote_addr();
        let folder = request.into_inner().folder;
        let log_folder = folder.clone();
        let result = self
            .0
            .run(deadline, move |engine| engine.load_folder(&folder))
            .await;
        self.0.metrics.record_load(result.is_ok());
        // The audit trail: who asked for what and how it ended, one line per admin call.
        match &result {
            Ok(report) => tracing::info!(
                target: "ratewell::audit",
                caller = %caller,
                peer = ?peer,
                method = "LoadDataset",
                folder = ?log_folder,
                result = "ok",
                dataset = %report.stamp.label(),
                hash = %report.stamp.content_hash,
                "admin call"
            ),
            Err(status) => tracing::warn!(
                target: "ratewell::audit",
                caller = %caller,
                peer = ?peer,
                method = "LoadDataset",
                folder = ?log_folder,
                result = ?status.code(),
                "admin call"
            ),
        }
        match &result {
            Ok(report) => tracing::info!(
                folder = %log_folder,
                dataset = %report.stamp.label(),
                hash = %report.stamp.content_hash,
                tables = report.table_count,
                seconds = report.precompute_seconds,
                "dataset loaded"
            ),
            Err(status) => {
                tracing::warn!(folder = %log_folder, error = %status.message(), "dataset load refused; previous data keep serving")
            }
        }
        self.0.publish_folder_health().await;
        let report = result?;
        Ok(Response::new(pb::LoadDatasetResponse {
            stamp: Some(stamp(&report.stamp)),
            replaced: report.replaced.as_ref().map(stamp),
            species_count: report.species_count as u32,
            table_count: report.table_count as u32,
            precompute_seconds: report.precompute_seconds,
        }))
    }
}
