//! Which rate coefficients a batch produces, and the caller's buffers it writes them into.

use super::errors::{RuleError, check_len};
use std::ops::Range;

/// Which rate coefficients a batched evaluation fills.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Direction {
    /// Excitation q_lu only.
    Excitation,
    /// De-excitation q_ul only.
    Deexcitation,
    /// Both.
    Both,
}

impl Direction {
    /// Whether excitation values are produced.
    pub fn wants_excitation(self) -> bool {
        matches!(self, Direction::Excitation | Direction::Both)
    }
    /// Whether de-excitation values are produced.
    pub fn wants_deexcitation(self) -> bool {
        matches!(self, Direction::Deexcitation | Direction::Both)
    }
}

/// The output buffers of a batched evaluation: excitation q_lu and de-excitation q_ul
/// (cm^3 s^-1) and [`flags`](super::flags) bits, one slot per value. Made by
/// [`RateOutputs::new`], which checks the lengths once; every batched entry point of the rule
/// writes into one of these.
#[derive(Debug)]
pub struct RateOutputs<'a> {
    pub(super) direction: Direction,
    /// Length of `flags` when excitation is wanted, empty otherwise.
    pub(super) excitation: &'a mut [f64],
    /// Length of `flags` when de-excitation is wanted, empty otherwise.
    pub(super) deexcitation: &'a mut [f64],
    pub(super) flags: &'a mut [u32],
}

impl<'a> RateOutputs<'a> {
    /// Buffers for `flags.len()` values in `direction`. `excitation_cm3_s` and
    /// `deexcitation_cm3_s` must have the flags' length when their direction is wanted; an
    /// unwanted one is never written and may have any length (empty, typically).
    pub fn new(
        direction: Direction,
        excitation_cm3_s: &'a mut [f64],
        deexcitation_cm3_s: &'a mut [f64],
        flags: &'a mut [u32],
    ) -> Result<Self, RuleError> {
        let n = flags.len();
        let excitation = wanted(direction.wants_excitation(), "excitation", excitation_cm3_s, n)?;
        let deexcitation = wanted(
            direction.wants_deexcitation(),
            "deexcitation",
            deexcitation_cm3_s,
            n,
        )?;
        Ok(Self {
            direction,
            excitation,
            deexcitation,
            flags,
        })
    }

    /// Which rate coefficients are written.
    pub fn direction(&self) -> Direction {
        self.direction
    }

    /// Number of value slots.
    pub fn len(&self) -> usize {
        self.flags.len()
    }

    /// Whether there are no value slots.
    pub fn is_empty(&self) -> bool {
        self.flags.is_empty()
    }

    /// Refuses buffers that do not hold exactly `expected` values.
    pub(super) fn check_len(&self, expected: usize) -> Result<(), RuleError> {
        check_len("flags", self.flags.len(), expected)
    }

    /// The slots in `range` (within `0..len`), as outputs of their own.
    pub(super) fn slots(&mut self, range: Range<usize>) -> RateOutputs<'_> {
        let direction = self.direction;
        RateOutputs {
            direction,
            excitation: part(direction.wants_excitation(), self.excitation, range.clone()),
            deexcitation: part(direction.wants_deexcitation(), self.deexcitation, range.clone()),
            flags: &mut self.flags[range],
        }
    }

    /// Consecutive rows of `n` slots (`n` > 0), as outputs of their own.
    pub(super) fn rows(&mut self, n: usize) -> Vec<RateOutputs<'_>> {
        let direction = self.direction;
        let mut excitation = self.excitation.chunks_mut(n);
        let mut deexcitation = self.deexcitation.chunks_mut(n);
        self.flags
            .chunks_mut(n)
            .map(|flags| RateOutputs {
                direction,
                excitation: excitation.next().unwrap_or_default(),
                deexcitation: deexcitation.next().unwrap_or_default(),
                flags,
            })
            .collect()
    }
}

/// `buffer` checked to hold `n` values when its direction is wanted; empty when it is not.
fn wanted<'a>(
    is_wanted: bool,
    field: &'static str,
    buffer: &'a mut [f64],
    n: usize,
) -> Result<&'a mut [f64], RuleError> {
    if is_wanted {
        check_len(field, buffer.len(), n)?;
        Ok(buffer)
    } else {
        Ok(&mut [])
    }
}

/// `buffer[range]` when wanted, an empty slice when not.
fn part(is_wanted: bool, buffer: &mut [f64], range: Range<usize>) -> &mut [f64] {
    if is_wanted { &mut buffer[range] } else { &mut [] }
}
