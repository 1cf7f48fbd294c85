//! Reading a dataset file with its size checked first: the file's length against
//! `max_file_bytes` and the folder's running total against `max_dataset_bytes`, before any
//! byte is read, and the read itself capped so a file that grows meanwhile is still bounded.

use super::error::DatasetError;
use crate::limits::Limits;
use std::io::Read;
use std::path::Path;

/// Reads `path` (shown as `name` in every error) as UTF-8 text, adding its size to `total_bytes`.
pub(super) fn read_text(
    path: &Path,
    name: &str,
    limits: &Limits,
    total_bytes: &mut u64,
) -> Result<String, DatasetError> {
    // Errors name the file as shown (relative to the data folder when confined).
    let io = |source| DatasetError::Io {
        path: name.into(),
        source,
    };
    let file = std::fs::File::open(path).map_err(io)?;
    let declared = file.metadata().map_err(io)?.len();
    limits.check_file_bytes(name, declared)?;
    limits.check_dataset_bytes(total_bytes.saturating_add(declared))?;
    let mut bytes = Vec::with_capacity(declared as usize);
    file.take(limits.max_file_bytes.saturating_add(1))
        .read_to_end(&mut bytes)
        .map_err(io)?;
    let read = bytes.len() as u64;
    limits.check_file_bytes(name, read)?;
    *total_bytes = total_bytes.saturating_add(read);
    limits.check_dataset_bytes(*total_bytes)?;
    String::from_utf8(bytes).map_err(|e| {
        io(std::io::Error::new(
            std::io::ErrorKind::InvalidData,
            format!(
                "not UTF-8 text (invalid byte at offset {})",
                e.utf8_error().valid_up_to()
            ),
        ))
    })
}
