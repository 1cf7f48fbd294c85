//! Population solves on the server, answered into a handle the caller reads arrays from.

use crate::connection::RatewellConnection;
use crate::status::{Failure, guard, guard_value, stamp_field};
use crate::strings::{copy_out, required, slice, slice_mut};
use ratewell_client::{PopulationQuery, pb};
use std::ffi::c_char;

/// The answer of one population solve (opaque): level fractions, radiated power and flags per
/// point, with the dataset stamp.
pub struct RatewellPopulations {
    answer: pb::SolvePopulationsResponse,
}

/// # Safety
/// `p` is NULL or a live handle.
unsafe fn answer_ref<'a>(p: *const RatewellPopulations) -> Result<&'a pb::SolvePopulationsResponse, Failure> {
    // SAFETY: the caller's promise.
    unsafe { p.as_ref() }
        .map(|p| &p.answer)
        .ok_or_else(|| Failure::null("populations"))
}

/// Solves statistical equilibrium for `species` on the server: with `grid` = 1 every
/// temperature (K) with every density (cm^-3), point `i * density_count + j`; with `grid` = 0
/// pairs of equal-length arrays. On success `*out` holds an answer to free with
/// `ratewell_populations_free`.
///
/// # Safety
/// `connection` is live; arrays have the lengths given; `species` is NUL-terminated; `out`
/// is writable.
#[unsafe(no_mangle)]
pub unsafe extern "C" fn ratewell_solve_populations(
    connection: *const RatewellConnection,
    species: *const c_char,
    temperatures_k: *const f64,
    temperature_count: usize,
    densities_cm3: *const f64,
    density_count: usize,
    grid: i32,
    out: *mut *mut RatewellPopulations,
) -> i32 {
    guard(|| {
        // SAFETY: the caller's promises.
        let connection = unsafe { connection.as_ref() }.ok_or_else(|| Failure::null("connection"))?;
        if out.is_null() {
            return Err(Failure::null("out"));
        }
        let (species, temps, dens) = unsafe {
            (
                required("species", species)?,
                slice("temperatures_k", temperatures_k, temperature_count)?,
                slice("densities_cm3", densities_cm3, density_count)?,
            )
        };
        if temps.is_empty() || dens.is_empty() {
            return Err(Failure::invalid(
                "temperature_count, density_count",
                format!("{temperature_count}, {density_count}"),
                "both must be >= 1",
            ));
        }
        let query = match grid {
            1 => PopulationQuery::grid(species, temps.to_vec(), dens.to_vec()),
            0 => PopulationQuery::points(species, temps.to_vec(), dens.to_vec()),
            other => return Err(Failure::invalid("grid", other, "must be 1 (grid) or 0 (pairs)")),
        };
        let answer = connection
            .runtime
            .block_on(connection.client.solve_populations(&query))?;
        // SAFETY: `out` is non-null and writable.
        unsafe { *out = Box::into_raw(Box::new(RatewellPopulations { answer })) };
        Ok(())
    })
}

/// Frees a population answer (NULL: nothing to do).
///
/// # Safety
/// `populations` came from ratewell and is not used afterwards.
#[unsafe(no_mangle)]
pub unsafe extern "C" fn ratewell_populations_free(populations: *mut RatewellPopulations) {
    if !populations.is_null() {
        guard_value((), || {
            // SAFETY: made by Box::into_raw, freed once.
            drop(unsafe { Box::from_raw(populations) });
        });
    }
}

/// Number of (temperature, density) points; 0 for NULL.
///
/// # Safety
/// `populations` is NULL or live.
#[unsafe(no_mangle)]
pub unsafe extern "C" fn ratewell_populations_point_count(populations: *const RatewellPopulations) -> usize {
    // SAFETY: the caller's promise.
    guard_value(0, || {
        unsafe { answer_ref(populations) }.map_or(0, |a| a.points.len())
    })
}

/// Number of levels of the species; 0 for NULL.
///
/// # Safety
/// `populations` is NULL or live.
#[unsafe(no_mangle)]
pub unsafe extern "C" fn ratewell_populations_level_count(populations: *const RatewellPopulations) -> usize {
    // SAFETY: the caller's promise.
    guard_value(0, || {
        unsafe { answer_ref(populations) }.map_or(0, |a| a.level_count as usize)
    })
}

fn check_length(argument: &str, got: usize, expected: usize, what: &str) -> Result<(), Failure> {
    if got == expected {
        Ok(())
    } else {
        Err(Failure::invalid(
            argument,
            got,
            &format!("must equal {what} = {expected}"),
        ))
    }
}

/// Copies the level fractions, point-major (`out[p * level_count + j]`, level j + 1), into
/// `out` of `length` = points x levels values.
///
/// # Safety
/// `populations` is live; `out` has `length` writable values.
#[unsafe(no_mangle)]
pub unsafe extern "C" fn ratewell_populations_fractions(
    populations: *const RatewellPopulations,
    out: *mut f64,
    length: usize,
) -> i32 {
    guard(|| {
        // SAFETY: the caller's promises.
        let a = unsafe { answer_ref(populations) }?;
        let levels = a.level_count as usize;
        check_length("length", length, a.points.len() * levels, "points x levels")?;
        if out.is_null() {
            return Err(Failure::null("out"));
        }
        // SAFETY: as above.
        let out = unsafe { slice_mut(out, length) };
        for (p, point) in a.points.iter().enumerate() {
            if point.fractions.len() != levels {
                return Err(Failure {
                    status: crate::status::RATEWELL_SERVER_ERROR,
                    message: format!("point {p} has {} fractions, not {levels}", point.fractions.len()),
                });
            }
            out[p * levels..(p + 1) * levels].copy_from_slice(&point.fractions);
        }
        Ok(())
    })
}

/// Copies the radiated power per ion of each point (W) into `out` of `length` = points.
///
/// # Safety
/// `populations` is live; `out` has `length` writable values.
#[unsafe(no_mangle)]
pub unsafe extern "C" fn ratewell_populations_radiated_power(
    populations: *const RatewellPopulations,
    out: *mut f64,
    length: usize,
) -> i32 {
    guard(|| {
        // SAFETY: the caller's promises.
        let a = unsafe { answer_ref(populations) }?;
        check_length("length", length, a.points.len(), "points")?;
        if out.is_null() {
            return Err(Failure::null("out"));
        }
        // SAFETY: as above.
        let out = unsafe { slice_mut(out, length) };
        for (o, p) in out.iter_mut().zip(&a.points) {
            *o = p.radiated_power;
        }
        Ok(())
    })
}

/// Copies each point's flags (OR of `RATEWELL_FLAG_*` of every rate used) into `out` of
/// `length` = points.
///
/// # Safety
/// `populations` is live; `out` has `length` writable values.
#[unsafe(no_mangle)]
pub unsafe extern "C" fn ratewell_populations_flags(
    populations: *const RatewellPopulations,
    out: *mut u32,
    length: usize,
) -> i32 {
    guard(|| {
        // SAFETY: the caller's promises.
        let a = unsafe { answer_ref(populations) }?;
        check_length("length", length, a.points.len(), "points")?;
        if out.is_null() {
            return Err(Failure::null("out"));
        }
        // SAFETY: as above.
        let out = unsafe { slice_mut(out, length) };
        for (o, p) in out.iter_mut().zip(&a.points) {
            *o = p.flags;
        }
        Ok(())
    })
}

/// Copies one stamp field (`RATEWELL_STAMP_*`) of the answer into `buffer` (`length` bytes).
///
/// # Safety
/// `populations` is live; `buffer` has `length` writable bytes.
#[unsafe(no_mangle)]
pub unsafe extern "C" fn ratewell_populations_stamp(
    populations: *const RatewellPopulations,
    field: i32,
    buffer: *mut c_char,
    length: usize,
) -> i32 {
    guard(|| {
        // SAFETY: the caller's promises.
        let a = unsafe { answer_ref(populations) }?;
        let stamp = a.stamp.clone().unwrap_or_default();
        let text = stamp_field(&stamp, "", field)?.to_string();
        // SAFETY: as above.
        unsafe { copy_out("buffer", &text, buffer, length) }
    })
}
