//! The one place engine errors become gRPC statuses. The match is exhaustive with no catch-all
//! arm, so a new error variant forces a decision about its code.

use crate::auth::Refusal;
use crate::dataset::DatasetError;
use crate::engine::EngineError;
use crate::tables::TableError;
use ratewell_proto::rule::RuleError;
use tonic::{Code, Status};
use tonic_types::{ErrorDetails, StatusExt};

/// Converts an engine error into the status a client sees.
pub fn to_status(error: &EngineError) -> Status {
    let message = error.to_string();
    match error {
        EngineError::InvalidArgument { field, allowed, .. } => {
            let mut details = ErrorDetails::new();
            details.add_bad_request_violation(field.clone(), allowed.clone());
            Status::with_error_details(Code::InvalidArgument, message, details)
        }
        EngineError::BadBatch { violations } => {
            let mut details = ErrorDetails::new();
            for (field, description) in violations {
                details.add_bad_request_violation(field.clone(), description.clone());
            }
            Status::with_error_details(Code::InvalidArgument, message, details)
        }
        EngineError::OutOfRange(_) => Status::out_of_range(message),
        EngineError::TooLarge { .. } => Status::resource_exhausted(message),
        EngineError::UnknownDataset { .. }
        | EngineError::UnknownSpecies { .. }
        | EngineError::UnknownTransition { .. } => Status::not_found(message),
        EngineError::HashMismatch { .. } => Status::failed_precondition(message),
        EngineError::Load(load) => load_status(load, message),
        EngineError::Table(table) => table_status(table, message),
        EngineError::Rule(rule) => rule_status(rule, message),
        EngineError::Cancelled => Status::deadline_exceeded(message),
        EngineError::Solve(_) => Status::internal(message),
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

fn load_status(error: &DatasetError, message: String) -> Status {
    match error {
        DatasetError::Io { source, .. } if source.kind() == std::io::ErrorKind::NotFound => {
            Status::not_found(message)
        }
        DatasetError::Io { .. } => Status::unavailable(message),
        DatasetError::MissingManifest { .. }
        | DatasetError::Invalid { .. }
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
    }
}

fn rule_status(error: &RuleError, message: String) -> Status {
    match error {
        RuleError::TemperatureNotPositive { .. } | RuleError::BadGrid { .. } => {
            Status::invalid_argument(message)
        }
        RuleError::OutsideGrid { .. } => Status::out_of_range(message),
        RuleError::BadTable { .. } | RuleError::BufferLength { .. } => Status::internal(message),
    }
}
