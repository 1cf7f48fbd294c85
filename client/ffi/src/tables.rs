//! Table sets: immutable, evaluated into caller-owned arrays with the one evaluation rule, from
//! any number of threads at once.

use crate::status::{
    Failure, RATEWELL_CM3_PER_S, RATEWELL_ELECTRON_VOLT, RATEWELL_EXTRAPOLATE, RATEWELL_KELVIN,
    RATEWELL_M3_PER_S, RATEWELL_REFUSE, guard, guard_value, stamp_field,
};
use crate::strings::{copy_out, required, slice, slice_mut};
use ratewell_client::{
    Direction, EvalOptions, LocalTables, OutsidePolicy, RateUnit, TemperatureUnit, Transition,
};
use std::ffi::c_char;
use std::path::Path;
use std::sync::Arc;

/// An immutable table set of one species (opaque). Safe to evaluate from many threads at once.
pub struct RatewellTables {
    pub(crate) tables: Arc<LocalTables>,
}

/// # Safety
/// `tables` is NULL or a live handle.
unsafe fn tables_ref<'a>(tables: *const RatewellTables) -> Result<&'a RatewellTables, Failure> {
    // SAFETY: the caller's promise.
    unsafe { tables.as_ref() }.ok_or_else(|| Failure::null("tables"))
}

/// Frees a table set (NULL: nothing to do).
///
/// # Safety
/// `tables` came from ratewell and is not used afterwards.
#[unsafe(no_mangle)]
pub unsafe extern "C" fn ratewell_tables_free(tables: *mut RatewellTables) {
    if !tables.is_null() {
        guard_value((), || {
            // SAFETY: made by Box::into_raw, freed once.
            drop(unsafe { Box::from_raw(tables) });
        });
    }
}

/// Number of tables (transitions) in the set; 0 for NULL.
///
/// # Safety
/// `tables` is NULL or a live handle.
#[unsafe(no_mangle)]
pub unsafe extern "C" fn ratewell_tables_count(tables: *const RatewellTables) -> usize {
    // SAFETY: the caller's promise.
    guard_value(0, || {
        unsafe { tables.as_ref() }.map_or(0, |t| t.tables.tables().len())
    })
}

/// The levels (1-based) of table `index` (0-based, in the server's order).
///
/// # Safety
/// `tables` is a live handle; `upper` and `lower` are writable.
#[unsafe(no_mangle)]
pub unsafe extern "C" fn ratewell_tables_transition(
    tables: *const RatewellTables,
    index: usize,
    upper: *mut u32,
    lower: *mut u32,
) -> i32 {
    guard(|| {
        // SAFETY: the caller's promises.
        let t = unsafe { tables_ref(tables) }?;
        let all = t.tables.tables();
        let table = all.get(index).ok_or_else(|| {
            Failure::invalid(
                "index",
                index,
                &format!("must be below the table count {}", all.len()),
            )
        })?;
        if upper.is_null() {
            return Err(Failure::null("upper"));
        }
        if lower.is_null() {
            return Err(Failure::null("lower"));
        }
        // SAFETY: both non-null and writable by the caller's promise.
        unsafe {
            *upper = table.header().upper;
            *lower = table.header().lower;
        }
        Ok(())
    })
}

/// Copies one stamp field (`RATEWELL_STAMP_*`) of the set, NUL-terminated, into `buffer` of
/// `length` bytes (65 hold a hash; RATEWELL_BUFFER_TOO_SMALL names the size needed).
///
/// # Safety
/// `tables` is a live handle; `buffer` points to `length` writable bytes.
#[unsafe(no_mangle)]
pub unsafe extern "C" fn ratewell_tables_stamp(
    tables: *const RatewellTables,
    field: i32,
    buffer: *mut c_char,
    length: usize,
) -> i32 {
    guard(|| {
        // SAFETY: the caller's promises.
        let t = unsafe { tables_ref(tables) }?;
        let text = stamp_field(t.tables.stamp(), t.tables.digest(), field)?;
        // SAFETY: as above.
        unsafe { copy_out("buffer", text, buffer, length) }
    })
}

fn options(temperature_unit: i32, rate_unit: i32, outside: i32) -> Result<EvalOptions, Failure> {
    let temperature_unit = match temperature_unit {
        RATEWELL_KELVIN => TemperatureUnit::Kelvin,
        RATEWELL_ELECTRON_VOLT => TemperatureUnit::ElectronVolt,
        other => {
            return Err(Failure::invalid(
                "temperature_unit",
                other,
                "must be RATEWELL_KELVIN (1) or RATEWELL_ELECTRON_VOLT (2)",
            ));
        }
    };
    let rate_unit = match rate_unit {
        RATEWELL_CM3_PER_S => RateUnit::CubicCentimetrePerSecond,
        RATEWELL_M3_PER_S => RateUnit::CubicMetrePerSecond,
        other => {
            return Err(Failure::invalid(
                "rate_unit",
                other,
                "must be RATEWELL_CM3_PER_S (1) or RATEWELL_M3_PER_S (2)",
            ));
        }
    };
    let outside = match outside {
        RATEWELL_REFUSE => OutsidePolicy::Refuse,
        RATEWELL_EXTRAPOLATE => OutsidePolicy::Extrapolate,
        other => {
            return Err(Failure::invalid(
                "outside",
                other,
                "must be RATEWELL_REFUSE (0) or RATEWELL_EXTRAPOLATE (1)",
            ));
        }
    };
    Ok(EvalOptions {
        temperature_unit,
        rate_unit,
        outside,
        ..EvalOptions::default()
    })
}

/// Evaluates rate coefficients with the server's rule (same bits as a server lookup).
///
/// - `uppers`, `lowers`: `transition_count` transitions (1-based levels); count 0 means every
///   table in the set's order (see `ratewell_tables_transition`).
/// - `temperatures`: `temperature_count` values in `temperature_unit` (`RATEWELL_KELVIN` or
///   `RATEWELL_ELECTRON_VOLT`), finite and > 0.
/// - `rate_unit`: `RATEWELL_CM3_PER_S` or `RATEWELL_M3_PER_S`; `outside`: `RATEWELL_REFUSE`
///   (a temperature off the grid is RATEWELL_OUT_OF_RANGE) or `RATEWELL_EXTRAPOLATE` (flagged).
/// - `excitation`, `deexcitation`: outputs of `output_length` values each, transition-major
///   (`value[t * temperature_count + j]`); either may be NULL when not wanted, not both.
/// - `flags`: `output_length` flag words (`RATEWELL_FLAG_*`), required.
///
/// `output_length` must equal transitions x temperatures. Nothing is allocated per value;
/// the call runs on the calling thread.
///
/// # Safety
/// Pointers point to arrays of the lengths given (or are NULL where allowed).
#[unsafe(no_mangle)]
pub unsafe extern "C" fn ratewell_tables_evaluate(
    tables: *const RatewellTables,
    uppers: *const u32,
    lowers: *const u32,
    transition_count: usize,
    temperatures: *const f64,
    temperature_count: usize,
    temperature_unit: i32,
    rate_unit: i32,
    outside: i32,
    excitation: *mut f64,
    deexcitation: *mut f64,
    flags: *mut u32,
    output_length: usize,
) -> i32 {
    guard(|| {
        // SAFETY: the caller's promises on every pointer and length.
        let t = unsafe { tables_ref(tables) }?;
        let (uppers, lowers, temps) = unsafe {
            (
                slice("uppers", uppers, transition_count)?,
                slice("lowers", lowers, transition_count)?,
                slice("temperatures", temperatures, temperature_count)?,
            )
        };
        let mut options = options(temperature_unit, rate_unit, outside)?;
        options.direction = match (excitation.is_null(), deexcitation.is_null()) {
            (false, false) => Direction::Both,
            (false, true) => Direction::Excitation,
            (true, false) => Direction::Deexcitation,
            (true, true) => {
                return Err(Failure::invalid(
                    "excitation, deexcitation",
                    "NULL, NULL",
                    "at least one output array is needed",
                ));
            }
        };
        if flags.is_null() {
            return Err(Failure::null("flags"));
        }
        let rows = if transition_count == 0 {
            t.tables.tables().len()
        } else {
            transition_count
        };
        let expected = rows.checked_mul(temperature_count).ok_or_else(|| {
            Failure::invalid(
                "temperature_count",
                temperature_count,
                "too many values to address",
            )
        })?;
        if output_length != expected {
            return Err(Failure::invalid(
                "output_length",
                output_length,
                &format!("must equal transitions x temperatures = {rows} x {temperature_count} = {expected}"),
            ));
        }
        let transitions: Vec<Transition> = uppers
            .iter()
            .zip(lowers)
            .map(|(&upper, &lower)| Transition { upper, lower })
            .collect();
        // SAFETY: non-null outputs hold `output_length` values by the caller's promise.
        let (e, d, f) = unsafe {
            (
                slice_mut(excitation, output_length),
                slice_mut(deexcitation, output_length),
                slice_mut(flags, output_length),
            )
        };
        t.tables
            .evaluate_to_slices(&transitions, temps, options, e, d, f)?;
        Ok(())
    })
}

/// Saves the set as a table file in folder `dir` (created if missing), named by dataset,
/// species, content hash and table-set digest, written atomically; copies the file's path into
/// `path_out` (`path_length` bytes; NULL with 0 to skip).
///
/// # Safety
/// `tables` is a live handle; `dir` is NUL-terminated; `path_out` has `path_length` bytes.
#[unsafe(no_mangle)]
pub unsafe extern "C" fn ratewell_tables_save(
    tables: *const RatewellTables,
    dir: *const c_char,
    path_out: *mut c_char,
    path_length: usize,
) -> i32 {
    guard(|| {
        // SAFETY: the caller's promises.
        let t = unsafe { tables_ref(tables) }?;
        let dir = unsafe { required("dir", dir) }?;
        let path = t.tables.save(Path::new(dir))?;
        if path_out.is_null() && path_length == 0 {
            return Ok(());
        }
        // SAFETY: as above.
        unsafe { copy_out("path_out", &path.display().to_string(), path_out, path_length) }
    })
}

/// Loads a table file with no server (format, checksum and table-set digest checked); the set
/// evaluates to the same bits as the server's. On success `*out` holds a handle to free with
/// `ratewell_tables_free`.
///
/// # Safety
/// `path` is NUL-terminated; `out` is writable.
#[unsafe(no_mangle)]
pub unsafe extern "C" fn ratewell_tables_load(path: *const c_char, out: *mut *mut RatewellTables) -> i32 {
    guard(|| {
        if out.is_null() {
            return Err(Failure::null("out"));
        }
        // SAFETY: the caller's promise.
        let path = unsafe { required("path", path) }?;
        let tables = Arc::new(LocalTables::load(Path::new(path))?);
        // SAFETY: `out` is non-null and writable.
        unsafe { *out = Box::into_raw(Box::new(RatewellTables { tables })) };
        Ok(())
    })
}
