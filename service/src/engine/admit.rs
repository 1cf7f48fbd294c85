//! Admission checks: a dataset's shape against the load limits before any table is built, and
//! a request's work and answer size against the request limits before any work starts. Each
//! refusal is a [`LimitError`] naming the quantity, the limit and the setting.

use crate::dataset::Dataset;
use crate::limits::{LimitError, Limits, RAISE_ADVICE, SPLIT_ADVICE, check, product};

/// Bytes a protobuf answer spends per repeated double (packed, 8 bytes).
const DOUBLE_BYTES: u64 = 8;
/// Upper bound of the bytes of a packed uint32 flag word.
const FLAG_BYTES: u64 = 5;
/// Upper bound of the bytes of one reported line in a solve answer (two level numbers, a
/// wavelength and an emissivity, with field tags and the message's length prefix).
const LINE_BYTES: u64 = 2 * 6 + 2 * 9 + 3;
/// Fixed bytes of one solve point besides its arrays (temperature, density, power, residual,
/// flags, tags and length prefixes).
const POINT_FIXED_BYTES: u64 = 64;

/// Refuses a dataset over the species, level or transition limits (call before building its
/// tables: every later allocation is proportional to these counts).
pub fn check_dataset(limits: &Limits, dataset: &Dataset) -> Result<(), LimitError> {
    check(
        format!("species in dataset {}@{}", dataset.id, dataset.version),
        dataset.species.len() as u64,
        limits.max_species,
        "max_species",
        RAISE_ADVICE,
    )?;
    let mut transitions = 0u64;
    for s in &dataset.species {
        check(
            format!("levels of species {:?}", s.name),
            s.levels.len() as u64,
            limits.max_levels_per_species,
            "max_levels_per_species",
            RAISE_ADVICE,
        )?;
        transitions = transitions.saturating_add((s.radiative.len() + s.collisions.len()) as u64);
    }
    check(
        format!(
            "transitions (radiative and collisional) in dataset {}@{}",
            dataset.id, dataset.version
        ),
        transitions,
        limits.max_transitions,
        "max_transitions",
        RAISE_ADVICE,
    )
}

/// Refuses building `knots` x `transitions` table values for one request.
pub fn check_table_build(limits: &Limits, knots: usize, transitions: usize) -> Result<(), LimitError> {
    check(
        "grid knots x transitions to build for this request",
        product(knots, transitions),
        limits.max_table_values_per_request,
        "max_table_values_per_request",
        "ask for fewer species or knots per request, or use the default grid (always kept)",
    )
}

/// Refuses a solve of `points` points on `levels` levels over `max_solve_work`.
pub fn check_solve_work(limits: &Limits, points: usize, levels: usize) -> Result<(), LimitError> {
    check(
        "points x levels^2 of the solve",
        product(points, levels).saturating_mul(levels as u64),
        limits.max_solve_work,
        "max_solve_work",
        SPLIT_ADVICE,
    )
}

/// Refuses a comparison covering more than `max_compare_transitions` transitions.
pub fn check_compare(limits: &Limits, transitions: usize) -> Result<(), LimitError> {
    check(
        "transitions compared (both datasets)",
        transitions as u64,
        limits.max_compare_transitions,
        "max_compare_transitions",
        "name fewer species in the request",
    )
}

/// Upper bound of the encoded bytes of a lookup answer with `values` values, `directions` of
/// them per value (1 or 2).
pub fn lookup_answer_bytes(values: usize, directions: usize) -> u64 {
    product(values, directions)
        .saturating_mul(DOUBLE_BYTES)
        .saturating_add(product(values, 1).saturating_mul(FLAG_BYTES))
}

/// Upper bound of the encoded bytes of a solve answer: per point the populations and the two
/// critical-density lists (`levels` each) and every line.
pub fn solve_answer_bytes(points: usize, levels: usize, lines: usize) -> u64 {
    let per_point = (3 * levels as u64)
        .saturating_mul(DOUBLE_BYTES)
        .saturating_add((lines as u64).saturating_mul(LINE_BYTES))
        .saturating_add(POINT_FIXED_BYTES);
    (points as u64).saturating_mul(per_point)
}

/// Refuses an answer estimated over the message limit.
pub fn check_answer_bytes(estimate: u64, max_message_bytes: usize) -> Result<(), LimitError> {
    check(
        "estimated answer size in bytes",
        estimate,
        max_message_bytes as u64,
        "max_message_bytes",
        SPLIT_ADVICE,
    )
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn solve_work_counts_levels_squared() {
        let limits = Limits {
            max_solve_work: 1_000_000,
            ..Limits::default()
        };
        assert!(check_solve_work(&limits, 100, 100).is_ok());
        let err = check_solve_work(&limits, 101, 100).unwrap_err();
        assert_eq!(err.value, 1_010_000);
        assert_eq!(err.setting, "max_solve_work");
        // Saturates instead of wrapping.
        assert_eq!(
            check_solve_work(&limits, usize::MAX, usize::MAX)
                .unwrap_err()
                .value,
            u64::MAX
        );
    }

    #[test]
    fn answer_estimates_cover_the_packed_arrays() {
        // Protobuf encoding guide: packed doubles take 8 bytes each (common practice, no
        // further source); the estimate may not be below that.
        assert!(lookup_answer_bytes(1000, 2) >= 16_000);
        assert!(solve_answer_bytes(10, 5, 3) >= 10 * 15 * 8);
        assert!(check_answer_bytes(lookup_answer_bytes(1 << 20, 2), 16 << 20).is_err());
    }
}
