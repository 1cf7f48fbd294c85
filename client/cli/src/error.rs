//! The command-line tool's errors and their exit codes.

use ratewell_client::ClientError;

/// What can stop a command.
#[derive(Debug, thiserror::Error)]
pub(crate) enum CliError {
    /// A failure of the client library (server, connection, pinning, arguments).
    #[error(transparent)]
    Client(#[from] ClientError),
    /// A bad or missing argument, named in the message.
    #[error("{0}")]
    Usage(String),
    /// A check that did not pass (e.g. an endpoint not serving), with its report.
    #[error("{0}")]
    Failed(String),
    /// A file that could not be written.
    #[error("{path}: {message}")]
    Io {
        /// The file.
        path: String,
        /// What went wrong.
        message: String,
    },
}

impl CliError {
    /// 1 server or connection failure, 2 bad arguments, 3 dataset stamp or pin mismatch.
    pub(crate) fn exit_code(&self) -> u8 {
        match self {
            CliError::Usage(_) => 2,
            CliError::Io { .. } | CliError::Failed(_) => 1,
            CliError::Client(e) => e.exit_code(),
        }
    }

    /// What the user can do about this error, when the tool knows.
    pub(crate) fn hint(&self) -> Option<&'static str> {
        match self {
            CliError::Client(e) if e.is_outside_grid() => Some(
                "add --extrapolate to evaluate outside the grid (such values are flagged G and \
                 rest on a continuation rule, not on data: treat them with care)",
            ),
            _ => None,
        }
    }

    /// A usage error for one argument: "--name: message".
    pub(crate) fn argument(name: &str, e: impl std::fmt::Display) -> Self {
        CliError::Usage(format!("{name}: {e}"))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn exit_codes_separate_arguments_pins_and_failures() {
        assert_eq!(CliError::Usage("x".into()).exit_code(), 2);
        let pin = ClientError::HashMismatch {
            expected: "a".into(),
            got: "b".into(),
            dataset: "d@1".into(),
        };
        assert_eq!(CliError::from(pin).exit_code(), 3);
        let t = ClientError::Timeout {
            operation: "X",
            after: std::time::Duration::from_secs(1),
        };
        assert_eq!(CliError::from(t).exit_code(), 1);
        // A temperature outside the grid is a usage mistake, with a hint to allow it.
        let outside = CliError::from(ClientError::Rule(ratewell_proto::rule::RuleError::OutsideGrid {
            index: 0,
            value_k: 1e12,
            min_k: 10.0,
            max_k: 1e9,
        }));
        assert_eq!(outside.exit_code(), 2);
        assert!(outside.hint().is_some_and(|h| h.contains("--extrapolate")));
        assert!(CliError::Usage("x".into()).hint().is_none());
        assert_eq!(
            CliError::argument("--temperatures", "temperatures[1] = -3 K: must be finite and > 0")
                .to_string(),
            "--temperatures: temperatures[1] = -3 K: must be finite and > 0"
        );
    }
}
