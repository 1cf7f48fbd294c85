//! Retry policy: which failures are retried, and how long to wait between attempts
//! (exponential backoff with jitter, under an overall deadline).

use std::time::Duration;
use tonic::Code;

/// How idempotent calls are retried.
#[derive(Debug, Clone, PartialEq)]
pub struct RetryPolicy {
    /// Most attempts per call, the first one included (>= 1).
    pub max_attempts: u32,
    /// Wait before the first retry (before jitter).
    pub initial_backoff: Duration,
    /// Upper bound of any one wait.
    pub max_backoff: Duration,
    /// Growth of the wait per retry (>= 1).
    pub multiplier: f64,
    /// Fraction of each wait that is randomised, in [0, 1]: the wait is drawn uniformly from
    /// [(1 - jitter) w, w], so many jobs that failed together do not retry together.
    pub jitter: f64,
    /// Total time a call may take over all its attempts and waits.
    pub deadline: Duration,
}

impl Default for RetryPolicy {
    fn default() -> Self {
        Self {
            max_attempts: 5,
            initial_backoff: Duration::from_millis(50),
            max_backoff: Duration::from_secs(2),
            multiplier: 2.0,
            jitter: 0.5,
            deadline: Duration::from_secs(30),
        }
    }
}

/// Whether a failure is worth another attempt. UNAVAILABLE (the server or the connection is
/// not there right now, or the server is stopping) always is; so is any failure of the
/// transport itself, whatever code tonic gave it (a connection reset mid-call is Unknown or
/// Internal with an h2 error inside): no server answered, so asking another one may help.
/// RESOURCE_EXHAUSTED is retried only when the server attached a retry hint
/// (google.rpc.RetryInfo), which it does when it sheds load; a batch over a configured limit is
/// also RESOURCE_EXHAUSTED but carries no hint, and asking again would not help. Every other
/// code is an answer that will not change by asking again.
pub fn is_retryable(status: &tonic::Status) -> bool {
    use tonic_types::StatusExt;
    match status.code() {
        Code::Unavailable => true,
        Code::ResourceExhausted => status.get_details_retry_info().is_some(),
        _ => is_transport_failure(status),
    }
}

/// Whether `status` was made on this side from a transport error (connection refused, reset,
/// closed mid-call) rather than sent by a server. A server's status arrives as headers and has
/// no error source; tonic attaches the underlying error to the statuses it makes from transport
/// failures. A deadline is never counted here: it is the caller's budget, not a lost server.
pub fn is_transport_failure(status: &tonic::Status) -> bool {
    status.code() != Code::DeadlineExceeded && std::error::Error::source(status).is_some()
}

/// Whether `status` is the channel's own timer firing (tonic enforces the grpc-timeout it
/// sends and answers CANCELLED "Timeout expired" itself): no answer came at all, which is how a
/// hung server looks. A server that is merely slow answers DEADLINE_EXCEEDED first.
pub(crate) fn is_local_timeout(status: &tonic::Status) -> bool {
    let mut source = std::error::Error::source(status);
    while let Some(error) = source {
        if error.is::<tonic::TimeoutExpired>() {
            return true;
        }
        source = error.source();
    }
    false
}

impl RetryPolicy {
    /// The wait before retry number `retry` (0 for the first retry), given a uniform random
    /// number `unit` in [0, 1). Grows as initial * multiplier^retry up to `max_backoff`, then
    /// the top `jitter` fraction of it is randomised.
    pub fn backoff(&self, retry: u32, unit: f64) -> Duration {
        let base = self.initial_backoff.as_secs_f64() * self.multiplier.powi(retry.min(64) as i32);
        let capped = base.min(self.max_backoff.as_secs_f64());
        let jitter = self.jitter.clamp(0.0, 1.0);
        let unit = unit.clamp(0.0, 1.0);
        Duration::from_secs_f64(capped * (1.0 - jitter * unit))
    }

    /// The wait before retry number `retry`, drawn with the thread's random generator.
    pub fn jittered_backoff(&self, retry: u32) -> Duration {
        self.backoff(retry, rand::random::<f64>())
    }

    /// Checks the policy's fields, naming a bad one.
    pub fn validate(&self) -> Result<(), crate::ClientError> {
        use crate::ClientError;
        if self.max_attempts == 0 {
            return Err(ClientError::invalid("retry.max_attempts", 0, "must be >= 1"));
        }
        if !self.multiplier.is_finite() || self.multiplier < 1.0 {
            return Err(ClientError::invalid(
                "retry.multiplier",
                self.multiplier,
                "must be finite and >= 1",
            ));
        }
        if !(0.0..=1.0).contains(&self.jitter) {
            return Err(ClientError::invalid(
                "retry.jitter",
                self.jitter,
                "must be within [0, 1]",
            ));
        }
        if self.deadline.is_zero() {
            return Err(ClientError::invalid("retry.deadline", "0 s", "must be > 0"));
        }
        if self.max_backoff < self.initial_backoff {
            return Err(ClientError::invalid(
                "retry.max_backoff",
                format!("{:?}", self.max_backoff),
                format!("must be >= initial_backoff ({:?})", self.initial_backoff),
            ));
        }
        Ok(())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn policy() -> RetryPolicy {
        RetryPolicy {
            max_attempts: 10,
            initial_backoff: Duration::from_millis(100),
            max_backoff: Duration::from_secs(1),
            multiplier: 2.0,
            jitter: 0.5,
            deadline: Duration::from_secs(10),
        }
    }

    // Exponential backoff with a cap and randomised waits: common practice, no source
    // (it is the scheme of gRPC's connection-backoff document, from memory).
    #[test]
    fn waits_grow_exponentially_up_to_the_cap() {
        let p = policy();
        let no_jitter: Vec<u128> = (0..6).map(|r| p.backoff(r, 0.0).as_millis()).collect();
        assert_eq!(no_jitter, vec![100, 200, 400, 800, 1000, 1000]);
        // Huge retry numbers neither overflow nor exceed the cap.
        assert_eq!(p.backoff(1000, 0.0), Duration::from_secs(1));
    }

    #[test]
    fn jitter_keeps_each_wait_within_its_band() {
        let p = policy();
        // unit -> 1 gives the bottom of the band: (1 - 0.5) * 400 ms.
        assert_eq!(p.backoff(2, 1.0).as_millis(), 200);
        for r in 0..8 {
            let top = p.backoff(r, 0.0);
            for _ in 0..200 {
                let w = p.jittered_backoff(r);
                assert!(
                    w <= top && w >= top / 2,
                    "retry {r}: {w:?} outside [{:?}, {top:?}]",
                    top / 2
                );
            }
        }
    }

    #[test]
    fn only_transient_codes_are_retried() {
        use tonic::Status;
        use tonic_types::{ErrorDetails, StatusExt};
        assert!(is_retryable(&Status::unavailable("down")));
        let shed = Status::with_error_details(
            Code::ResourceExhausted,
            "busy",
            ErrorDetails::with_retry_info(Some(Duration::from_millis(50))),
        );
        assert!(is_retryable(&shed));
        // Over a configured limit: no hint, no retry.
        assert!(!is_retryable(&Status::resource_exhausted("batch too large")));
        // A transport failure is retried whatever code tonic gave it; the same code sent by a
        // server (no error source) is not.
        let reset = Status::from_error(Box::new(std::io::Error::new(
            std::io::ErrorKind::ConnectionReset,
            "connection reset by peer",
        )));
        assert!(is_transport_failure(&reset) && is_retryable(&reset), "{reset:?}");
        assert!(!is_retryable(&Status::unknown("server said unknown")));
        // The channel's own timer is told apart from a server's CANCELLED.
        let own = Status::from_error(Box::new(tonic::TimeoutExpired(())));
        assert_eq!(own.code(), Code::Cancelled);
        assert!(is_local_timeout(&own));
        assert!(!is_local_timeout(&Status::cancelled("Timeout expired")));
        assert!(!is_retryable(&Status::internal("server said internal")));
        for code in [
            Code::InvalidArgument,
            Code::NotFound,
            Code::OutOfRange,
            Code::FailedPrecondition,
            Code::DeadlineExceeded,
            Code::Internal,
            Code::Unimplemented,
            Code::PermissionDenied,
        ] {
            assert!(!is_retryable(&tonic::Status::new(code, "x")), "{code:?}");
        }
    }

    #[test]
    fn bad_policies_are_named() {
        let mut p = policy();
        p.max_attempts = 0;
        assert_eq!(
            p.validate().unwrap_err().to_string(),
            "retry.max_attempts = 0: must be >= 1"
        );
        let mut p = policy();
        p.jitter = 1.5;
        assert!(
            p.validate()
                .unwrap_err()
                .to_string()
                .starts_with("retry.jitter = 1.5")
        );
        assert!(policy().validate().is_ok());
    }
}
