//! C strings in and out.

use crate::status::{Failure, RATEWELL_BUFFER_TOO_SMALL};
use std::ffi::{CStr, c_char};

/// A required NUL-terminated UTF-8 argument.
///
/// # Safety
/// `text` is NULL or points to a NUL-terminated string.
pub(crate) unsafe fn required<'a>(argument: &str, text: *const c_char) -> Result<&'a str, Failure> {
    if text.is_null() {
        return Err(Failure::null(argument));
    }
    // SAFETY: non-null and NUL-terminated by the caller's promise.
    unsafe { CStr::from_ptr(text) }
        .to_str()
        .map_err(|_| Failure::invalid(argument, "(bytes that are not UTF-8)", "must be UTF-8 text"))
}

/// An optional argument: NULL or "" both mean absent.
///
/// # Safety
/// As [`required`].
pub(crate) unsafe fn optional<'a>(argument: &str, text: *const c_char) -> Result<Option<&'a str>, Failure> {
    if text.is_null() {
        return Ok(None);
    }
    // SAFETY: as above.
    let s = unsafe { required(argument, text) }?;
    Ok((!s.is_empty()).then_some(s))
}

/// Copies `text` and a NUL into `buffer` of `length` bytes, or fails naming the size needed.
///
/// # Safety
/// `buffer` points to `length` writable bytes (checked for NULL here).
pub(crate) unsafe fn copy_out(
    argument: &str,
    text: &str,
    buffer: *mut c_char,
    length: usize,
) -> Result<(), Failure> {
    if buffer.is_null() {
        return Err(Failure::null(argument));
    }
    let needed = text.len() + 1;
    if length < needed {
        return Err(Failure {
            status: RATEWELL_BUFFER_TOO_SMALL,
            message: format!(
                "{argument}: buffer of {length} bytes is too small, {needed} needed (NUL included)"
            ),
        });
    }
    // SAFETY: `length >= needed` writable bytes at `buffer` by the caller's promise.
    unsafe {
        std::ptr::copy_nonoverlapping(text.as_ptr().cast::<c_char>(), buffer, text.len());
        *buffer.add(text.len()) = 0;
    }
    Ok(())
}

/// A caller's array as a slice, checking the pointer when the length is not zero.
///
/// # Safety
/// `data` points to `length` readable values, or `length` is 0.
pub(crate) unsafe fn slice<'a, T>(argument: &str, data: *const T, length: usize) -> Result<&'a [T], Failure> {
    if length == 0 {
        return Ok(&[]);
    }
    if data.is_null() {
        return Err(Failure::null(argument));
    }
    // SAFETY: non-null, `length` values by the caller's promise.
    Ok(unsafe { std::slice::from_raw_parts(data, length) })
}

/// A caller's output array as a mutable slice (NULL with any length: absent, empty slice).
///
/// # Safety
/// `data` points to `length` writable values, or is NULL.
pub(crate) unsafe fn slice_mut<'a, T>(data: *mut T, length: usize) -> &'a mut [T] {
    if data.is_null() || length == 0 {
        return &mut [];
    }
    // SAFETY: non-null, `length` writable values by the caller's promise.
    unsafe { std::slice::from_raw_parts_mut(data, length) }
}
