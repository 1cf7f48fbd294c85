//! The canonical byte form of a rate table: the bytes the table-set digest hashes and table
//! files store, so a file's tables are verified by hashing them as they lie on disk.
//!
//! One record per table, little-endian, no padding: upper `u32`, lower `u32`, approximate `u8`
//! (0 or 1), then as IEEE-754 bits (`u64`): g_lower, g_upper, excitation_energy_k,
//! source_t_min_k, source_t_max_k, max_interpolation_error, the grid's knots of ln Upsilon and
//! the grid's slopes. The record length follows from the grid: [`record_bytes`].

use crate::rule::{LogGrid, RateTable, RuleError, TableHeader};

/// Fixed part of a record: two `u32` keys, the approximate byte and six numbers.
const FIXED_BYTES: usize = 4 + 4 + 1 + 6 * 8;

/// Length of one record on a grid of `knots` knots.
pub fn record_bytes(knots: usize) -> usize {
    FIXED_BYTES + 16 * knots
}

/// Appends `table`'s record to `out`.
pub fn append_record(table: &RateTable, out: &mut Vec<u8>) {
    let h = table.header();
    out.reserve(record_bytes(table.knot_pairs().len()));
    out.extend_from_slice(&h.upper.to_le_bytes());
    out.extend_from_slice(&h.lower.to_le_bytes());
    out.push(u8::from(h.approximate));
    let numbers = [
        h.g_lower,
        h.g_upper,
        h.excitation_energy_k,
        h.source_t_min_k,
        h.source_t_max_k,
        table.max_interpolation_error(),
    ];
    for v in numbers
        .into_iter()
        .chain(table.ln_upsilon())
        .chain(table.slopes())
    {
        out.extend_from_slice(&v.to_bits().to_le_bytes());
    }
}

/// Why records could not be read back.
#[derive(Debug, thiserror::Error)]
pub enum RecordError {
    /// The bytes are not a whole number of records.
    #[error("{bytes} bytes of tables are not a whole number of {record}-byte records")]
    Length {
        /// Bytes given.
        bytes: usize,
        /// Bytes per record on this grid.
        record: usize,
    },
    /// A record's approximate byte is neither 0 nor 1.
    #[error("table {index}: approximate byte {value}, must be 0 or 1")]
    Approximate {
        /// Record index, from 0.
        index: usize,
        /// The byte found.
        value: u8,
    },
    /// A record does not make a valid table.
    #[error("table {index}: {source}")]
    Table {
        /// Record index, from 0.
        index: usize,
        /// What the rule refused.
        source: RuleError,
    },
}

fn f64s(bytes: &[u8]) -> impl Iterator<Item = f64> + '_ {
    bytes
        .chunks_exact(8)
        .map(|b| f64::from_bits(u64::from_le_bytes(b.try_into().expect("8 bytes"))))
}

/// The tables held in `bytes`, a concatenation of records on `grid`.
pub fn read_records(bytes: &[u8], grid: LogGrid) -> Result<Vec<RateTable>, RecordError> {
    let mut tables = Vec::new();
    append_tables(bytes, grid, &mut tables)?;
    Ok(tables)
}

/// Appends the tables held in `bytes` (whole records on `grid`) to `tables`; errors count
/// records from the first table already in `tables`.
pub fn append_tables(bytes: &[u8], grid: LogGrid, tables: &mut Vec<RateTable>) -> Result<(), RecordError> {
    let first = tables.len();
    let record = record_bytes(grid.knots());
    if !bytes.len().is_multiple_of(record) {
        return Err(RecordError::Length {
            bytes: bytes.len(),
            record,
        });
    }
    let knot_bytes = 8 * grid.knots();
    tables.reserve(bytes.len() / record);
    for (i, r) in bytes.chunks_exact(record).enumerate() {
        let index = first + i;
        let table = {
            let approximate = match r[8] {
                0 => false,
                1 => true,
                value => return Err(RecordError::Approximate { index, value }),
            };
            let mut numbers = f64s(&r[9..FIXED_BYTES]);
            let mut next = || numbers.next().expect("six numbers");
            let header = TableHeader {
                upper: u32::from_le_bytes(r[0..4].try_into().expect("4 bytes")),
                lower: u32::from_le_bytes(r[4..8].try_into().expect("4 bytes")),
                g_lower: next(),
                g_upper: next(),
                excitation_energy_k: next(),
                source_t_min_k: next(),
                source_t_max_k: next(),
                approximate,
            };
            let error = next();
            let knots = f64s(&r[FIXED_BYTES..FIXED_BYTES + knot_bytes])
                .zip(f64s(&r[FIXED_BYTES + knot_bytes..]))
                .map(|(y, m)| [y, m])
                .collect();
            RateTable::from_knot_pairs(header, grid, knots, error)
                .map_err(|source| RecordError::Table { index, source })?
        };
        tables.push(table);
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    fn table(upper: u32, approximate: bool) -> RateTable {
        let grid = LogGrid::from_range(1e3, 1e6, 10).unwrap();
        let header = TableHeader {
            upper,
            lower: 1,
            g_lower: 2.0,
            g_upper: 4.0,
            excitation_energy_k: 2.0e4,
            source_t_min_k: 3e3,
            source_t_max_k: 3e5,
            approximate,
        };
        let y = (0..grid.knots()).map(|i| (0.37 * i as f64).sin()).collect();
        RateTable::from_knots(header, grid, y)
            .unwrap()
            .with_max_interpolation_error(1.25e-4)
    }

    // Round trip of IEEE-754 bits through little-endian bytes: exact by construction
    // (common practice, no source); checked on every field, both approximate values.
    #[test]
    fn records_round_trip_bit_for_bit() {
        let tables = [table(2, false), table(3, true)];
        let mut bytes = Vec::new();
        for t in &tables {
            append_record(t, &mut bytes);
        }
        let grid = *tables[0].grid();
        assert_eq!(bytes.len(), 2 * record_bytes(grid.knots()));
        let back = read_records(&bytes, grid).unwrap();
        assert_eq!(back, tables);
    }

    #[test]
    fn damaged_records_are_refused_by_name() {
        let t = table(2, false);
        let grid = *t.grid();
        let mut bytes = Vec::new();
        append_record(&t, &mut bytes);
        let m = read_records(&bytes[..bytes.len() - 1], grid)
            .unwrap_err()
            .to_string();
        assert!(m.contains("not a whole number of"), "{m}");
        let mut bad = bytes.clone();
        bad[8] = 7;
        let m = read_records(&bad, grid).unwrap_err().to_string();
        assert_eq!(m, "table 0: approximate byte 7, must be 0 or 1");
        let mut bad = bytes.clone();
        // g_lower (the first number) set to -1.
        bad[9..17].copy_from_slice(&(-1.0f64).to_bits().to_le_bytes());
        let m = read_records(&bad, grid).unwrap_err().to_string();
        assert!(m.starts_with("table 0: ") && m.contains("g_lower"), "{m}");
    }
}
