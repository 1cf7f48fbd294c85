//! Dataset folders in standard gRPC health checking. Besides the server-wide entry (`""`) and
//! one entry per gRPC service, the server reports:
//!
//! - [`FOLDERS_SERVICE`] (`ratewell.dataset-folders`): SERVING when the last load of every
//!   dataset folder of the data folder succeeded, NOT_SERVING while any is refused;
//! - [`FOLDER_SERVICE_PREFIX`] + folder name (`ratewell.dataset-folder/<name>`): SERVING
//!   while data loaded from that folder are served (also after a refused reload, whose
//!   earlier version keeps serving), NOT_SERVING when it has never loaded.
//!
//! Why a folder was refused (file, line and field of every problem) is in the server's logs
//! and in the answer of `LoadDataset` for that folder.

use crate::engine::Engine;
use tonic_health::ServingStatus;
use tonic_health::server::HealthReporter;

/// Health-check name summarising every dataset folder.
pub const FOLDERS_SERVICE: &str = "ratewell.dataset-folders";

/// Prefix of the health-check name of one dataset folder.
pub const FOLDER_SERVICE_PREFIX: &str = "ratewell.dataset-folder/";

/// Sets the folder entries of `reporter` from the engine's recorded load outcomes.
pub async fn publish_folder_health(reporter: &HealthReporter, engine: &Engine) {
    let outcomes = engine.folder_outcomes();
    let mut all_loaded = true;
    for (name, outcome) in &outcomes {
        all_loaded &= matches!(outcome, crate::engine::FolderOutcome::Loaded { .. });
        let status = if outcome.serving() {
            ServingStatus::Serving
        } else {
            ServingStatus::NotServing
        };
        reporter
            .set_service_status(format!("{FOLDER_SERVICE_PREFIX}{name}"), status)
            .await;
    }
    let summary = if all_loaded {
        ServingStatus::Serving
    } else {
        ServingStatus::NotServing
    };
    reporter.set_service_status(FOLDERS_SERVICE, summary).await;
}
