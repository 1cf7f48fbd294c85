//! The stop flag of a long computation: set when its caller gives up (the client's deadline
//! passed, the client went away, or the shutdown grace ran out), read between pieces of work,
//! so abandoned work ends early and frees its share of the machine.

use super::EngineError;
use std::sync::Arc;
use std::sync::atomic::{AtomicBool, Ordering};

/// A flag that asks a long computation to stop early. Cheap to clone; every clone shares one
/// flag.
#[derive(Debug, Clone, Default)]
pub struct Cancel(Arc<AtomicBool>);

impl Cancel {
    /// Asks the computation to stop.
    pub fn cancel(&self) {
        self.0.store(true, Ordering::Relaxed);
    }

    /// Whether stopping was asked for.
    pub fn is_cancelled(&self) -> bool {
        self.0.load(Ordering::Relaxed)
    }

    /// [`EngineError::Cancelled`] once stopping was asked for, so work between two pieces
    /// reads `cancel.check()?`.
    pub fn check(&self) -> Result<(), EngineError> {
        if self.is_cancelled() {
            Err(EngineError::Cancelled)
        } else {
            Ok(())
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn every_clone_sees_the_flag() {
        let cancel = Cancel::default();
        let seen_by_worker = cancel.clone();
        assert!(seen_by_worker.check().is_ok());
        cancel.cancel();
        assert!(seen_by_worker.is_cancelled());
        assert!(matches!(seen_by_worker.check(), Err(EngineError::Cancelled)));
    }
}
