//! The client's one error enum. Messages name the field, the value and what was allowed.

use ratewell_proto::rule::RuleError;
use std::time::Duration;

/// Everything that can go wrong in a client call or a local evaluation.
#[derive(Debug, thiserror::Error)]
pub enum ClientError {
    /// A call ended with a gRPC status other than OK: from the server, or from the transport
    /// when no server answered (then the message says so and names the address tried).
    #[error("{operation} at {endpoint}: {code:?}: {message}")]
    Status {
        /// Which call failed (e.g. "LookupRates").
        operation: &'static str,
        /// The endpoint that answered.
        endpoint: String,
        /// The gRPC status code.
        code: tonic::Code,
        /// The server's message.
        message: String,
    },
    /// A response came from a dataset whose content hash differs from the pinned one.
    /// The answer is discarded.
    #[error("dataset {dataset}: content hash {got} differs from the pinned {expected}; answer refused")]
    HashMismatch {
        /// The pinned content hash.
        expected: String,
        /// The content hash the response carried.
        got: String,
        /// "id@version" of the dataset that answered.
        dataset: String,
    },
    /// A response whose tables digest differs from the pinned one: the same data, perhaps, but
    /// tables built differently (another build of the server). The answer is discarded.
    #[error("dataset {dataset}: tables digest {got} differs from the pinned {expected}; answer refused")]
    TablesDigestMismatch {
        /// The pinned tables digest.
        expected: String,
        /// The tables digest the response carried.
        got: String,
        /// "id@version" of the dataset that answered.
        dataset: String,
    },
    /// The server itself refused the request because the pinned hash differs (FAILED_PRECONDITION).
    #[error("dataset {dataset}: server refused the pinned content hash {expected}: {message}")]
    PinRefused {
        /// The pinned content hash.
        expected: String,
        /// The dataset asked for.
        dataset: String,
        /// The server's message.
        message: String,
    },
    /// A response named a dataset other than the one asked for, or lacked its stamp, or its
    /// stamp changed between the parts of one chunked answer.
    #[error("{operation}: {message}")]
    StampMismatch {
        /// Which call.
        operation: &'static str,
        /// What differed.
        message: String,
    },
    /// A response that breaks the contract (wrong array lengths, missing fields).
    #[error("{operation}: malformed response: {message}")]
    Malformed {
        /// Which call.
        operation: &'static str,
        /// What is wrong.
        message: String,
    },
    /// A call did not finish within its time budget (enforced on the client side too).
    #[error("{operation}: no answer within {after:?}")]
    Timeout {
        /// Which call.
        operation: &'static str,
        /// The time budget that ran out.
        after: Duration,
    },
    /// An endpoint could not be set up (bad address, TLS, connection failure).
    #[error("endpoint {endpoint}: {message}")]
    Transport {
        /// The endpoint address.
        endpoint: String,
        /// What went wrong.
        message: String,
    },
    /// A bad argument, caught before anything was sent.
    #[error("{field} = {value}: {allowed}")]
    InvalidArgument {
        /// The argument's name (with index for arrays, e.g. `temperatures[3]`).
        field: String,
        /// The offending value, with its unit where it has one.
        value: String,
        /// What is allowed.
        allowed: String,
    },
    /// A transition that the fetched tables do not hold.
    #[error("species {species}: no rate table for transition {upper}-{lower} in dataset {dataset}")]
    UnknownTransition {
        /// The species.
        species: String,
        /// Upper level index (1-based).
        upper: u32,
        /// Lower level index (1-based).
        lower: u32,
        /// "id@version" of the tables' dataset.
        dataset: String,
    },
    /// The evaluation rule refused (outside the grid, bad table, bad temperature).
    #[error(transparent)]
    Rule(#[from] RuleError),
    /// A table file could not be written, or was refused when read (not a table file, a
    /// newer format, truncated, corrupted, or its tables do not match their digest).
    #[error("table file {path}: {message}")]
    TableFile {
        /// The file (or folder) concerned, as the caller named it.
        path: String,
        /// What is wrong.
        message: String,
    },
    /// No tokio runtime is running where one is needed, or a blocking call was made inside one.
    #[error("runtime: {0}")]
    Runtime(String),
}

impl ClientError {
    /// A [`ClientError::InvalidArgument`] from its three parts.
    pub fn invalid(
        field: impl Into<String>,
        value: impl std::fmt::Display,
        allowed: impl Into<String>,
    ) -> Self {
        ClientError::InvalidArgument {
            field: field.into(),
            value: value.to_string(),
            allowed: allowed.into(),
        }
    }

    /// The gRPC status code when the server answered with one.
    pub fn code(&self) -> Option<tonic::Code> {
        match self {
            ClientError::Status { code, .. } => Some(*code),
            _ => None,
        }
    }

    /// Whether this error means that no server could be reached or none answered: a refused,
    /// reset or hung connection, or a server stopping. A server's own refusal is not.
    pub fn is_unreachable(&self) -> bool {
        match self {
            ClientError::Status { code, .. } => matches!(
                code,
                tonic::Code::Unavailable | tonic::Code::Unknown | tonic::Code::Cancelled
            ),
            ClientError::Timeout { .. } | ClientError::Transport { .. } => true,
            _ => false,
        }
    }

    /// Whether a temperature outside the table grid was refused (locally or by the server):
    /// allowing extrapolation would answer it.
    pub fn is_outside_grid(&self) -> bool {
        match self {
            ClientError::Rule(RuleError::OutsideGrid { .. }) => true,
            ClientError::Status { code, message, .. } => {
                *code == tonic::Code::OutOfRange && message.contains("extrapolation")
            }
            _ => false,
        }
    }

    /// The process exit code that programs built on this library use for this error (the
    /// `ratewell` tool and the deploy demo): 2 for a bad argument (a temperature outside the
    /// grid or not positive included) or unknown transition, 3 for a dataset hash, pin or stamp
    /// mismatch, 1 for everything else (server, connection, timeout, table file).
    pub fn exit_code(&self) -> u8 {
        if self.is_outside_grid() {
            return 2;
        }
        match self {
            ClientError::InvalidArgument { .. }
            | ClientError::UnknownTransition { .. }
            | ClientError::Rule(RuleError::TemperatureNotPositive { .. } | RuleError::BadGrid { .. }) => 2,
            ClientError::HashMismatch { .. }
            | ClientError::TablesDigestMismatch { .. }
            | ClientError::PinRefused { .. }
            | ClientError::StampMismatch { .. } => 3,
            ClientError::Status { .. }
            | ClientError::Malformed { .. }
            | ClientError::Timeout { .. }
            | ClientError::Transport { .. }
            | ClientError::Rule(_)
            | ClientError::TableFile { .. }
            | ClientError::Runtime(_) => 1,
        }
    }

    /// A status from a call, kept with the call's name.
    pub(crate) fn from_status(operation: &'static str, endpoint: &str, status: &tonic::Status) -> Self {
        let message = if status.code() == tonic::Code::Unavailable
            && status.message().starts_with("tcp connect error")
        {
            // The transport's own status: nothing listens there (or it cannot be reached).
            format!(
                "no server answers at {endpoint} ({}); start one there (ratewell-server --listen \
                 HOST:PORT) or point --server / RATEWELL_SERVER at a running one",
                status.message()
            )
        } else {
            status.message().to_string()
        };
        ClientError::Status {
            operation,
            endpoint: endpoint.to_string(),
            code: status.code(),
            message,
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn messages_name_field_value_and_range() {
        // Message shape required by the project rules: "temperatures[3] = -5 K: must be > 0".
        let e = ClientError::invalid("temperatures[3]", "-5 K", "must be finite and > 0");
        assert_eq!(e.to_string(), "temperatures[3] = -5 K: must be finite and > 0");
        let e = ClientError::HashMismatch {
            expected: "aa".into(),
            got: "bb".into(),
            dataset: "demo@1.0.0".into(),
        };
        let s = e.to_string();
        assert!(
            s.contains("demo@1.0.0") && s.contains("aa") && s.contains("bb"),
            "{s}"
        );
    }
}
