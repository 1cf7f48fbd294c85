//! The batched entry points: one table at many temperatures or locations, many tables of one
//! grid at shared locations (transition-major rows), and many tables at one location. Each
//! gives the same bits as the scalar rule in [`RateTable::write_at`] for every value.

use super::errors::RuleError;
use super::grid::{Location, OutsidePolicy, check_temperatures};
use super::kernels::{BLOCK, KernelWidth};
use super::outputs::RateOutputs;
use super::table::RateTable;

impl RateTable {
    /// Fills `out` with rate coefficients for many temperatures (K); `out` must have the
    /// temperatures' length. Values equal [`Self::evaluate`] bit for bit. Temperatures are
    /// checked, located and evaluated in blocks by the vectorised kernel.
    pub fn evaluate_into(
        &self,
        temperatures_k: &[f64],
        outside: OutsidePolicy,
        out: &mut RateOutputs<'_>,
    ) -> Result<(), RuleError> {
        let n = temperatures_k.len();
        out.check_len(n)?;
        let mut block = [Location::default(); BLOCK];
        for (start, temps) in (0..n).step_by(BLOCK).zip(temperatures_k.chunks(BLOCK)) {
            check_temperatures(self.grid(), start, temps, outside)?;
            let locs = &mut block[..temps.len()];
            self.grid().locate_into(temps, locs);
            self.write_checked(locs, &mut out.slots(start..start + temps.len()));
        }
        Ok(())
    }

    /// Writes the values at every location (already located on this table's grid, e.g. once
    /// for a whole batch of tables) into `out`, slot `j` for `locations[j]`: the same bits as
    /// [`Self::write_at`] for each, computed by the vectorised kernel. `out` must have the
    /// locations' length.
    pub fn write_located(&self, locations: &[Location], out: &mut RateOutputs<'_>) -> Result<(), RuleError> {
        out.check_len(locations.len())?;
        self.write_checked(locations, out);
        Ok(())
    }

    /// [`Self::write_located`] with lengths already checked; picks the widest kernel available.
    pub(super) fn write_checked(&self, locations: &[Location], out: &mut RateOutputs<'_>) {
        self.write_checked_as(KernelWidth::widest(), locations, out);
    }

    /// [`Self::write_checked`] with the kernel compiled for `width` (one the processor has).
    pub(super) fn write_checked_as(
        &self,
        width: KernelWidth,
        locations: &[Location],
        out: &mut RateOutputs<'_>,
    ) {
        self.kernel().run_width(width, locations, out);
    }
}

/// Which threads [`write_rows`] may use.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum Threads {
    /// The calling thread only: no thread pool is started (a library inside an MPI rank must
    /// not start threads it was not asked for).
    #[default]
    Caller,
    /// Batches of 65,536 values or more are spread by rows over rayon's global thread pool;
    /// smaller ones run on the calling thread. Only which thread computes
    /// a row changes, so the bits are those of [`Threads::Caller`].
    Pool,
}

/// Fewest values for which [`Threads::Pool`] hands work to the thread pool, and the fewest
/// per task it hands over (below this a hand-off costs more than it saves).
const PARALLEL_MIN_VALUES: usize = 1 << 16;

/// Evaluates many tables of one grid at the same located temperatures into transition-major
/// outputs: row `r` (slots `r * n .. (r + 1) * n`, `n = locations.len()`) holds `tables[r]`,
/// with the same bits as [`RateTable::write_located`] on its own, on the threads `threads`
/// allows. `out` must have `tables.len() * n` slots.
pub fn write_rows(
    tables: &[&RateTable],
    locations: &[Location],
    threads: Threads,
    out: &mut RateOutputs<'_>,
) -> Result<(), RuleError> {
    use rayon::prelude::*;
    let n = locations.len();
    let total = tables.len().saturating_mul(n);
    out.check_len(total)?;
    check_same_grid(tables.iter().map(|t| &**t))?;
    if n == 0 {
        return Ok(());
    }
    let rows = out.rows(n);
    if threads == Threads::Caller || total < PARALLEL_MIN_VALUES {
        // On the calling thread (asked for, or a hand-off to the pool would cost more).
        for (t, mut row) in tables.iter().zip(rows) {
            t.write_checked(locations, &mut row);
        }
    } else {
        tables
            .par_iter()
            .zip(rows)
            .with_min_len(PARALLEL_MIN_VALUES.div_ceil(n))
            .for_each(|(t, mut row)| t.write_checked(locations, &mut row));
    }
    Ok(())
}

/// Evaluates many tables of one grid at one located temperature: slot `r` of `out` holds
/// `tables[r]`, with the same bits as [`RateTable::write_at`] for each. The logarithms are
/// worked out table by table first (so many coefficient fetches are in flight at once), then
/// the exponentials run over the whole buffer with the widest kernel. `out` must have
/// `tables.len()` slots.
pub fn write_tables_at(
    tables: &[RateTable],
    location: &Location,
    out: &mut RateOutputs<'_>,
) -> Result<(), RuleError> {
    out.check_len(tables.len())?;
    check_same_grid(tables.iter())?;
    let direction = out.direction;
    let (exc, deexc) = (direction.wants_excitation(), direction.wants_deexcitation());
    let (excitation, deexcitation, flags) = (&mut *out.excitation, &mut *out.deexcitation, &mut *out.flags);
    for (r, t) in tables.iter().enumerate() {
        let ln_q_ul = t.ln_deexcitation_at(location);
        if deexc {
            deexcitation[r] = ln_q_ul;
        }
        if exc {
            excitation[r] = t.ln_excitation_from(ln_q_ul, location);
        }
        flags[r] = t.flags_at(location);
    }
    let width = KernelWidth::widest();
    if deexc {
        width.exp_in_place(deexcitation);
    }
    if exc {
        width.exp_in_place(excitation);
    }
    Ok(())
}

/// Refuses a batch whose tables do not all share the first table's grid, naming the first
/// table that differs.
fn check_same_grid<'a>(mut tables: impl Iterator<Item = &'a RateTable>) -> Result<(), RuleError> {
    let Some(first) = tables.next() else {
        return Ok(());
    };
    match tables.find(|t| t.grid() != first.grid()) {
        Some(other) => Err(RuleError::BadTable {
            upper: other.header().upper,
            lower: other.header().lower,
            field: "grid",
            message: "differs from the grid of the other tables in the batch".into(),
        }),
        None => Ok(()),
    }
}
