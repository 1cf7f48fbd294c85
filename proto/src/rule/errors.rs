//! Errors of the evaluation rule.

/// Errors of the evaluation rule. Messages name the field, value and allowed range.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum RuleError {
    /// A temperature that is not a finite positive number.
    #[error("temperatures[{index}] = {value_k} K: must be finite and > 0")]
    TemperatureNotPositive {
        /// Position in the request.
        index: usize,
        /// Offending value, K.
        value_k: f64,
    },
    /// A temperature outside the grid while extrapolation is refused.
    #[error(
        "temperatures[{index}] = {value_k} K: outside the table grid [{min_k}, {max_k}] K and extrapolation was not allowed"
    )]
    OutsideGrid {
        /// Position in the request.
        index: usize,
        /// Offending value, K.
        value_k: f64,
        /// Lowest grid temperature, K.
        min_k: f64,
        /// Highest grid temperature, K.
        max_k: f64,
    },
    /// A grid description that cannot define a table.
    #[error("grid {field} = {value}: {allowed}")]
    BadGrid {
        /// Offending field.
        field: &'static str,
        /// Offending value.
        value: f64,
        /// What is allowed.
        allowed: &'static str,
    },
    /// A table whose contents are inconsistent.
    #[error("table {upper}-{lower} {field}: {message}")]
    BadTable {
        /// Upper level index (1-based).
        upper: u32,
        /// Lower level index (1-based).
        lower: u32,
        /// Offending field.
        field: &'static str,
        /// What is wrong.
        message: String,
    },
    /// Output slices of the wrong length.
    #[error("output buffer {field} has length {got}, expected {expected}")]
    BufferLength {
        /// Which buffer.
        field: &'static str,
        /// Its length.
        got: usize,
        /// The length needed.
        expected: usize,
    },
}

pub(super) fn check_len(field: &'static str, got: usize, expected: usize) -> Result<(), RuleError> {
    if got == expected {
        Ok(())
    } else {
        Err(RuleError::BufferLength { field, got, expected })
    }
}
