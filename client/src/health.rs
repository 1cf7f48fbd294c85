//! Serving status from the standard gRPC health service.

use tonic_health::pb::health_check_response::ServingStatus as WireStatus;

/// What a server says about itself.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ServingStatus {
    /// Ready for calls.
    Serving,
    /// Up but not taking calls (starting, draining, or shutting down).
    NotServing,
    /// The server does not know.
    Unknown,
    /// The server does not know the named service.
    ServiceUnknown,
}

impl ServingStatus {
    /// From the wire value (unknown numbers count as `Unknown`).
    pub fn from_wire(value: i32) -> Self {
        match WireStatus::try_from(value) {
            Ok(WireStatus::Serving) => ServingStatus::Serving,
            Ok(WireStatus::NotServing) => ServingStatus::NotServing,
            Ok(WireStatus::ServiceUnknown) => ServingStatus::ServiceUnknown,
            Ok(WireStatus::Unknown) | Err(_) => ServingStatus::Unknown,
        }
    }

    /// Lower-case name for output.
    pub fn name(self) -> &'static str {
        match self {
            ServingStatus::Serving => "serving",
            ServingStatus::NotServing => "not-serving",
            ServingStatus::Unknown => "unknown",
            ServingStatus::ServiceUnknown => "service-unknown",
        }
    }
}

/// One endpoint's answer to a health check.
#[derive(Debug)]
pub struct EndpointHealth {
    /// The endpoint address.
    pub endpoint: String,
    /// Its status, or why it could not be asked.
    pub status: Result<ServingStatus, crate::ClientError>,
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn wire_numbers_follow_the_grpc_health_protocol() {
        // grpc.health.v1 HealthCheckResponse.ServingStatus: UNKNOWN 0, SERVING 1,
        // NOT_SERVING 2, SERVICE_UNKNOWN 3 (gRPC health checking protocol, health.proto).
        assert_eq!(ServingStatus::from_wire(0), ServingStatus::Unknown);
        assert_eq!(ServingStatus::from_wire(1), ServingStatus::Serving);
        assert_eq!(ServingStatus::from_wire(2), ServingStatus::NotServing);
        assert_eq!(ServingStatus::from_wire(3), ServingStatus::ServiceUnknown);
        assert_eq!(ServingStatus::from_wire(77), ServingStatus::Unknown);
    }
}
