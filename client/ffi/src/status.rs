//! Status codes, the thread-local last-error message, and the guard around every exported
//! function.

use ratewell_client::ClientError;
use ratewell_client::pb;
use std::cell::RefCell;
use std::ffi::{CString, c_char};
use std::panic::{AssertUnwindSafe, catch_unwind};

/// Success.
pub const RATEWELL_OK: i32 = 0;
/// A bad argument: null pointer, wrong length, NaN, negative or zero temperature, bad unit.
pub const RATEWELL_INVALID_ARGUMENT: i32 = 1;
/// A temperature outside the table grid while extrapolation was not allowed.
pub const RATEWELL_OUT_OF_RANGE: i32 = 2;
/// An unknown species, transition or dataset.
pub const RATEWELL_NOT_FOUND: i32 = 3;
/// The answer came from a dataset whose content hash differs from the pinned one (refused).
pub const RATEWELL_HASH_MISMATCH: i32 = 4;
/// The answer names another dataset or version than the one asked for (refused).
pub const RATEWELL_STAMP_MISMATCH: i32 = 5;
/// No server answered in time (down, unreachable, overloaded): worth retrying later.
pub const RATEWELL_UNAVAILABLE: i32 = 6;
/// The server answered with another error, or an answer broke the contract.
pub const RATEWELL_SERVER_ERROR: i32 = 7;
/// A table file could not be written or was refused (not a table file, newer format,
/// truncated, corrupted, digest mismatch).
pub const RATEWELL_TABLE_FILE: i32 = 8;
/// An output string buffer is too small (the message says the size needed).
pub const RATEWELL_BUFFER_TOO_SMALL: i32 = 9;
/// A bug in ratewell (a caught panic); the message says where.
pub const RATEWELL_INTERNAL: i32 = 10;

thread_local! {
    static LAST_ERROR: RefCell<CString> = RefCell::new(CString::default());
}

/// An error on its way out: status and message.
#[derive(Debug)]
pub(crate) struct Failure {
    pub(crate) status: i32,
    pub(crate) message: String,
}

impl Failure {
    /// A bad argument named with its value and what is allowed.
    pub(crate) fn invalid(argument: &str, value: impl std::fmt::Display, allowed: &str) -> Self {
        Failure {
            status: RATEWELL_INVALID_ARGUMENT,
            message: format!("{argument} = {value}: {allowed}"),
        }
    }
    /// A null pointer where one is required.
    pub(crate) fn null(argument: &str) -> Self {
        Failure::invalid(argument, "NULL", "must point to valid memory")
    }
}

/// The status that tells a caller what to do about a client error.
pub(crate) fn status_of(e: &ClientError) -> i32 {
    use ratewell_proto::rule::RuleError;
    match e {
        ClientError::InvalidArgument { .. } => RATEWELL_INVALID_ARGUMENT,
        ClientError::UnknownTransition { .. } => RATEWELL_NOT_FOUND,
        ClientError::HashMismatch { .. }
        | ClientError::PinRefused { .. }
        | ClientError::TablesDigestMismatch { .. } => RATEWELL_HASH_MISMATCH,
        ClientError::StampMismatch { .. } => RATEWELL_STAMP_MISMATCH,
        ClientError::Timeout { .. } | ClientError::Transport { .. } => RATEWELL_UNAVAILABLE,
        ClientError::Malformed { .. } => RATEWELL_SERVER_ERROR,
        ClientError::TableFile { .. } => RATEWELL_TABLE_FILE,
        ClientError::Runtime(_) => RATEWELL_INTERNAL,
        ClientError::Rule(r) => match r {
            RuleError::OutsideGrid { .. } => RATEWELL_OUT_OF_RANGE,
            RuleError::TemperatureNotPositive { .. }
            | RuleError::BadGrid { .. }
            | RuleError::BufferLength { .. } => RATEWELL_INVALID_ARGUMENT,
            RuleError::BadTable { .. } => RATEWELL_SERVER_ERROR,
        },
        ClientError::Status { code, .. } => match code {
            tonic::Code::InvalidArgument => RATEWELL_INVALID_ARGUMENT,
            tonic::Code::OutOfRange => RATEWELL_OUT_OF_RANGE,
            tonic::Code::NotFound => RATEWELL_NOT_FOUND,
            tonic::Code::FailedPrecondition => RATEWELL_HASH_MISMATCH,
            tonic::Code::Unavailable
            | tonic::Code::DeadlineExceeded
            | tonic::Code::ResourceExhausted
            | tonic::Code::Unknown
            | tonic::Code::Cancelled
            | tonic::Code::Aborted => RATEWELL_UNAVAILABLE,
            _ => RATEWELL_SERVER_ERROR,
        },
    }
}

impl From<ClientError> for Failure {
    fn from(e: ClientError) -> Self {
        Failure {
            status: status_of(&e),
            message: e.to_string(),
        }
    }
}

fn set_last_error(message: &str) {
    let text = CString::new(message.replace('\0', " ")).unwrap_or_default();
    LAST_ERROR.with(|slot| *slot.borrow_mut() = text);
}

/// Runs `body`, turning its error or panic into a status and the thread's last-error message.
pub(crate) fn guard(body: impl FnOnce() -> Result<(), Failure>) -> i32 {
    match catch_unwind(AssertUnwindSafe(body)) {
        Ok(Ok(())) => {
            set_last_error("");
            RATEWELL_OK
        }
        Ok(Err(f)) => {
            set_last_error(&f.message);
            f.status
        }
        Err(panic) => {
            let what = panic
                .downcast_ref::<&str>()
                .map(|s| s.to_string())
                .or_else(|| panic.downcast_ref::<String>().cloned())
                .unwrap_or_else(|| "unknown panic".into());
            set_last_error(&format!("internal error in ratewell (please report): {what}"));
            RATEWELL_INTERNAL
        }
    }
}

/// Runs a function that returns a plain value (a count), giving `fallback` on a panic.
pub(crate) fn guard_value<T>(fallback: T, body: impl FnOnce() -> T) -> T {
    catch_unwind(AssertUnwindSafe(body)).unwrap_or(fallback)
}

/// The message of the last failed call on this thread ("" after a success). The pointer stays
/// valid until the next ratewell call on this thread; copy it if you keep it.
#[unsafe(no_mangle)]
pub extern "C" fn ratewell_last_error_message() -> *const c_char {
    LAST_ERROR.with(|slot| slot.borrow().as_ptr())
}

/// Copies the last error message of this thread into `buffer` (`length` bytes, NUL included;
/// cut to fit). Returns the message's full length in bytes without the NUL, so a caller can
/// tell it was cut. `buffer` may be NULL with `length` 0 to ask for the length.
///
/// # Safety
/// `buffer` must point to `length` writable bytes, or be NULL.
#[unsafe(no_mangle)]
pub unsafe extern "C" fn ratewell_last_error(buffer: *mut c_char, length: usize) -> usize {
    LAST_ERROR.with(|slot| {
        let message = slot.borrow();
        let bytes = message.as_bytes();
        if !buffer.is_null() && length > 0 {
            let n = bytes.len().min(length - 1);
            // SAFETY: the caller promises `length` writable bytes at `buffer`; n + 1 <= length.
            unsafe {
                std::ptr::copy_nonoverlapping(bytes.as_ptr().cast::<c_char>(), buffer, n);
                *buffer.add(n) = 0;
            }
        }
        bytes.len()
    })
}

/// Which part of a dataset stamp to read.
pub(crate) fn stamp_field<'a>(
    stamp: &'a pb::DatasetStamp,
    digest: &'a str,
    field: i32,
) -> Result<&'a str, Failure> {
    Ok(match field {
        RATEWELL_STAMP_ID => &stamp.id,
        RATEWELL_STAMP_VERSION => &stamp.version,
        RATEWELL_STAMP_CONTENT_HASH => &stamp.content_hash,
        RATEWELL_STAMP_TABLES_DIGEST => &stamp.tables_digest,
        RATEWELL_STAMP_TABLE_SET_DIGEST => digest,
        other => {
            return Err(Failure::invalid(
                "field",
                other,
                "must be one of RATEWELL_STAMP_ID (0), _VERSION (1), _CONTENT_HASH (2), _TABLES_DIGEST (3), _TABLE_SET_DIGEST (4)",
            ));
        }
    })
}

/// Stamp field: dataset id.
pub const RATEWELL_STAMP_ID: i32 = 0;
/// Stamp field: dataset version.
pub const RATEWELL_STAMP_VERSION: i32 = 1;
/// Stamp field: hex content hash of the dataset.
pub const RATEWELL_STAMP_CONTENT_HASH: i32 = 2;
/// Stamp field: hex digest of all the dataset's default-grid tables on the server.
pub const RATEWELL_STAMP_TABLES_DIGEST: i32 = 3;
/// Stamp field: hex digest of this table set (tables only; "" for population answers).
pub const RATEWELL_STAMP_TABLE_SET_DIGEST: i32 = 4;

/// Temperature unit: kelvin.
pub const RATEWELL_KELVIN: i32 = 1;
/// Temperature unit: electronvolt.
pub const RATEWELL_ELECTRON_VOLT: i32 = 2;
/// Rate unit: cm^3 s^-1.
pub const RATEWELL_CM3_PER_S: i32 = 1;
/// Rate unit: m^3 s^-1.
pub const RATEWELL_M3_PER_S: i32 = 2;
/// Outside the grid: refuse (RATEWELL_OUT_OF_RANGE).
pub const RATEWELL_REFUSE: i32 = 0;
/// Outside the grid: extrapolate and flag (OUTSIDE_GRID).
pub const RATEWELL_EXTRAPOLATE: i32 = 1;
/// Flag bit: the rate comes from an approximation formula.
pub const RATEWELL_FLAG_APPROXIMATE: u32 = 1;
/// Flag bit: outside the source range of the data (the value leans on their documented continuation).
pub const RATEWELL_FLAG_BEYOND_SOURCE: u32 = 2;
/// Flag bit: outside the table grid (extrapolated, only when asked for).
pub const RATEWELL_FLAG_OUTSIDE_GRID: u32 = 4;
