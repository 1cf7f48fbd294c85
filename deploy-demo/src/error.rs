//! The demo job's errors and the exit code each one maps to.

use ratewell_client::ClientError;

/// What can stop a run or a verification.
#[derive(Debug, thiserror::Error)]
pub(crate) enum JobError {
    /// A failure of the client library: server, connection, pinning, or a bad argument it checked.
    #[error(transparent)]
    Client(#[from] ClientError),
    /// A bad command-line value: field, value, and what is allowed.
    #[error("{field} = {value}: {allowed}")]
    Argument {
        /// The option.
        field: &'static str,
        /// The value given.
        value: String,
        /// The allowed range or form.
        allowed: String,
    },
    /// A server answer the job cannot use (e.g. a population point with no levels).
    #[error("{operation}: {message}")]
    Answer {
        /// The call.
        operation: &'static str,
        /// What was wrong.
        message: String,
    },
    /// A summary file that cannot be read or parsed, or output that cannot be written.
    #[error("{path}: {message}")]
    File {
        /// The file ("stdout" for standard output).
        path: String,
        /// What went wrong.
        message: String,
    },
}

impl JobError {
    /// A bad command-line value.
    pub(crate) fn argument(field: &'static str, value: impl ToString, allowed: impl Into<String>) -> Self {
        JobError::Argument {
            field,
            value: value.to_string(),
            allowed: allowed.into(),
        }
    }

    /// 1 server, connection or file failure; 2 bad arguments; 3 dataset stamp or pin mismatch.
    /// (4, local and server values differing, is decided from a finished summary.)
    pub(crate) fn exit_code(&self) -> u8 {
        match self {
            JobError::Argument { .. } => 2,
            JobError::Answer { .. } | JobError::File { .. } => 1,
            JobError::Client(e) => e.exit_code(),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    // The exit codes documented in the job's --help and in deploy-demo/README.md.
    #[test]
    fn exit_codes_separate_arguments_pins_and_failures() {
        let bad = JobError::argument("steps", 1, "must be within [2, 1000000]");
        assert_eq!(bad.to_string(), "steps = 1: must be within [2, 1000000]");
        assert_eq!(bad.exit_code(), 2);
        let pin = ClientError::HashMismatch {
            expected: "a".into(),
            got: "b".into(),
            dataset: "demo@1.0.0".into(),
        };
        assert_eq!(JobError::from(pin).exit_code(), 3);
        let down = ClientError::Transport {
            endpoint: "http://127.0.0.1:1".into(),
            message: "connection refused".into(),
        };
        assert_eq!(JobError::from(down).exit_code(), 1);
    }
}
