//! The one place engine errors become gRPC statuses. The match is exhaustive with no catch-all
//! arm, so a new error variant forces a decision about its code. The codes follow what the
//! client should do (documented once, in `proto/ratewell/v1/common.proto`):
//! INVALID_ARGUMENT and OUT_OF_RANGE: change the request; RESOURCE_EXHAUSTED with a retry hint:
//! retry later; without one: split the request; FAILED_PRECONDITION: the data or the server's
//! settings must change; NOT_FOUND: name something that exists; UNAVAILABLE: retry, possibly
//! elsewhere (only for conditions that can pass); INTERNAL: a bug.
//!
//! Every message and detail is bounded ([`super::bounded`]) so a status stays far below the
//! HTTP/2 header limit whatever the request held.

use super::bounded::{MAX_MESSAGE_BYTES, MAX_VIOLATION_BYTES, bounded, bounded_violations};
use crate::auth::Refusal;
use crate::dataset::DatasetError;
use crate::engine::EngineError;
use crate::physics::PhysicsError;
use crate::tables::TableError;
use ratewell_proto::rule::RuleError;
use std::io::ErrorKind;
use tonic::{Code, Status};
use tonic_types::{ErrorDetails, StatusExt};

/// Converts an engine error into the status a client sees.
pub fn to_status(error: &EngineError) -> Status {
    let message = bounded(&error.to_string(), MAX_MESSAGE_BYTES);
    match error {
        EngineError::InvalidArgument { field, allowed, .. } => {
            let mut details = ErrorDetails::new();
            details.add_bad_request_violation(
                bounded(field, MAX_VIOLATION_BYTES),
                bounded(allowed, MAX_VIOLATION_BYTES),
            );
            Status::with_error_details(Code::InvalidArgument, message, details)
        }
        EngineError::BadBatch { violations, total } => {
            let mut details = ErrorDetails::new();
            for (field, description) in bounded_violations(violations, *total) {
                details.add_bad_request_violation(field, description);
            }
            Status::with_error_details(Code::InvalidArgument, message, details)
        }
        EngineError::SpeciesData { .. } => Status::failed_precondition(message),
        EngineError::Degenerate { .. } => Status::out_of_range(message),
        EngineError::TooLarge(limit) => {
            // No retry hint: the same request would be refused again (unlike load shedding).
            let mut details = ErrorDetails::new();
            details.add_quota_failure_violation(limit.setting, bounded(&limit.what, MAX_VIOLATION_BYTES));
            Status::with_error_details(Code::ResourceExhausted, message, details)
        }
        EngineError::UnknownDataset { .. }
        | EngineError::UnknownSpecies { .. }
        | EngineError::UnknownTransition { .. } => Status::not_found(message),
        EngineError::HashMismatch { .. } => Status::failed_precondition(message),
        EngineError::Load(load) => load_status(load, message),
        EngineError::Table(table) => table_status(table, message),
        EngineError::Rule(rule) => rule_status(rule, message),
        // The caller gave up (deadline, disconnect, shutdown cut) before the work stopped, so
        // nobody reads this; when the call itself still waits, it gets the reason instead
        // (DEADLINE_EXCEEDED or UNAVAILABLE, from `AppState::run_cancellable`).
        EngineError::Cancelled => Status::cancelled(message),
        EngineError::Solve(physics) => solve_status(physics, message),
    }
}

/// A call refused by authentication: UNAUTHENTICATED, whatever the reason (gRPC status code
/// guide: the request does not have valid authentication credentials).
pub fn refusal_status(refusal: &Refusal) -> Status {
    match refusal {
        Refusal::Missing { .. } | Refusal::Malformed | Refusal::Unknown | Refusal::NoTokens => {
            Status::unauthenticated(refusal.to_string())
        }
    }
}

/// Whether an I/O error can pass by itself (worth a retry, possibly on another server).
fn transient(kind: ErrorKind) -> bool {
    matches!(
        kind,
        ErrorKind::Interrupted
            | ErrorKind::TimedOut
            | ErrorKind::WouldBlock
            | ErrorKind::ResourceBusy
            | ErrorKind::OutOfMemory
            | ErrorKind::StorageFull
            | ErrorKind::QuotaExceeded
            | ErrorKind::StaleNetworkFileHandle
            | ErrorKind::ConnectionReset
            | ErrorKind::ConnectionAborted
            | ErrorKind::NotConnected
            | ErrorKind::BrokenPipe
    )
}

fn load_status(error: &DatasetError, message: String) -> Status {
    match error {
        DatasetError::Io { source, .. } => match source.kind() {
            ErrorKind::NotFound => Status::not_found(message),
            // A folder name the file system cannot hold is a bad request.
            ErrorKind::InvalidFilename => Status::invalid_argument(message),
            kind if transient(kind) => Status::unavailable(message),
            // Not a folder, not UTF-8, no permission, ...: the same on every retry and every
            // replica until someone changes the files.
            _ => Status::failed_precondition(message),
        },
        DatasetError::MissingManifest { .. }
        | DatasetError::Invalid { .. }
        | DatasetError::OverLimit(_)
        | DatasetError::Escapes { .. } => Status::failed_precondition(message),
    }
}

fn table_status(error: &TableError, message: String) -> Status {
    match error {
        // Data that cannot be tabulated is a property of the dataset, not of the request.
        TableError::NonPositiveUpsilon { .. } | TableError::Source { .. } => {
            Status::failed_precondition(message)
        }
        TableError::Evaluation(_) => Status::internal(message),
        TableError::Rule(rule) => rule_status(rule, message),
        // The engine reports a stopped build as EngineError::Cancelled; the same code here.
        TableError::Stopped => Status::cancelled(message),
    }
}

fn rule_status(error: &RuleError, message: String) -> Status {
    match error {
        RuleError::TemperatureNotPositive { .. } | RuleError::BadGrid { .. } => {
            Status::invalid_argument(message)
        }
        RuleError::OutsideGrid { index, .. } => {
            // The typed error keeps the temperature's position: name it as the bad field.
            let mut details = ErrorDetails::new();
            details.add_bad_request_violation(
                format!("temperatures[{index}]"),
                "outside the table grid: set outside_grid = OUTSIDE_GRID_EXTRAPOLATE (values flagged OUTSIDE_GRID) or ask for a wider grid",
            );
            Status::with_error_details(Code::OutOfRange, message, details)
        }
        RuleError::BadTable { .. } | RuleError::BufferLength { .. } => Status::internal(message),
    }
}

/// A physics error outside a point's solve (setting up rates, critical densities): values
/// that cannot be represented come from the request's temperature; structural ones from a
/// loaded dataset that passed validation, so a bug.
fn solve_status(error: &PhysicsError, message: String) -> Status {
    match error {
        PhysicsError::OutOfRange { .. }
        | PhysicsError::NonFinite { .. }
        | PhysicsError::NoDepopulation { .. }
        | PhysicsError::SingularSystem { .. }
        | PhysicsError::NegativePopulation { .. } => Status::out_of_range(message),
        PhysicsError::NotIncreasing { .. }
        | PhysicsError::LengthMismatch { .. }
        | PhysicsError::TooFewPoints { .. }
        | PhysicsError::LevelOutOfRange { .. }
        | PhysicsError::SameLevel { .. }
        | PhysicsError::TailUndetermined { .. } => Status::internal(message),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn io(kind: ErrorKind) -> EngineError {
        EngineError::Load(DatasetError::Io {
            path: "x".into(),
            source: std::io::Error::from(kind),
        })
    }

    #[test]
    fn permanent_load_errors_are_never_unavailable() {
        // gRPC status code guide (grpc.io "Status codes and their use"): UNAVAILABLE is for
        // transient conditions a retry may fix (common practice, no further source).
        for kind in [
            ErrorKind::NotADirectory,
            ErrorKind::InvalidData,
            ErrorKind::PermissionDenied,
            ErrorKind::IsADirectory,
            ErrorKind::InvalidFilename,
        ] {
            assert_ne!(to_status(&io(kind)).code(), Code::Unavailable, "{kind:?}");
        }
        assert_eq!(
            to_status(&io(ErrorKind::InvalidFilename)).code(),
            Code::InvalidArgument
        );
        assert_eq!(to_status(&io(ErrorKind::NotFound)).code(), Code::NotFound);
        assert_eq!(to_status(&io(ErrorKind::TimedOut)).code(), Code::Unavailable);
    }

    #[test]
    fn many_bad_values_give_a_small_status() {
        let bad = (0..100_000).map(|i| (i, -1e300));
        let err = EngineError::bad_batch(bad, |(i, v): (usize, f64)| {
            (format!("t[{i}]"), format!("t[{i}] = {v} K: must be > 0"))
        })
        .unwrap();
        let status = to_status(&err);
        assert_eq!(status.code(), Code::InvalidArgument);
        assert!(
            status.message().len() <= MAX_MESSAGE_BYTES,
            "{}",
            status.message()
        );
        assert!(
            status.message().contains("100000 bad values"),
            "{}",
            status.message()
        );
        assert!(status.message().contains("-1e300 K"), "{}", status.message());
        // The encoded details: far below a 16 KiB header block even after base64 (4/3).
        assert!(status.details().len() < 4096, "{} bytes", status.details().len());
        let listed = status.get_details_bad_request().unwrap().field_violations;
        assert_eq!(listed.len(), super::super::bounded::MAX_VIOLATIONS + 1);
        assert!(listed.last().unwrap().description.contains("more bad values"));
    }

    #[test]
    fn a_temperature_outside_the_grid_keeps_its_index_value_and_range() {
        // OUT_OF_RANGE: the request must change (gRPC status code guide; common practice).
        let status = to_status(&EngineError::Rule(RuleError::OutsideGrid {
            index: 3,
            value_k: 2e9,
            min_k: 10.0,
            max_k: 1e9,
        }));
        assert_eq!(status.code(), Code::OutOfRange);
        assert_eq!(
            status.message(),
            "temperatures[3] = 2000000000 K: outside the table grid [10, 1000000000] K and extrapolation was not allowed"
        );
        let violations = status.get_details_bad_request().unwrap().field_violations;
        assert_eq!(violations[0].field, "temperatures[3]");
        assert!(violations[0].description.contains("OUTSIDE_GRID_EXTRAPOLATE"));
    }

    #[test]
    fn species_data_that_make_no_rates_are_a_precondition_not_a_bug() {
        let status = to_status(&EngineError::SpeciesData {
            species: "X".into(),
            source: PhysicsError::NonFinite {
                quantity: "radiative rate",
                detail: "radiative[0].a_s = inf".into(),
            },
        });
        assert_eq!(status.code(), Code::FailedPrecondition);
        assert!(
            status
                .message()
                .starts_with("dataset load failed, previous data keep serving: species X: ")
        );
    }
}
