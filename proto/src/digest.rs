//! The table-set digest: a blake3 hash of a species' served tables exactly as served (species
//! name, grid, and for every table its key, weights, energy, source range, approximate mark,
//! measured interpolation error, knots and slopes, all numbers as IEEE-754 bits). The server
//! sends it with every table set, the client recomputes it from what it received, and table
//! files are verified against it, so two table sets with equal digests evaluate to the same
//! bits everywhere. What is hashed per table is its canonical record ([`crate::records`]).

use crate::records::append_record;
use crate::rule::{LogGrid, RateTable};

/// Version tag hashed first, so a future change of what is hashed cannot collide with this one.
const DIGEST_TAG: &[u8] = b"ratewell table set v1\0";

/// The hasher after the set's prefix: tag, species, grid and table count.
fn prefixed(species: &str, grid: &LogGrid, tables: usize) -> blake3::Hasher {
    let mut hasher = blake3::Hasher::new();
    hasher.update(DIGEST_TAG);
    hasher.update(&(species.len() as u64).to_le_bytes());
    hasher.update(species.as_bytes());
    hasher.update(&grid.log10_t_min_k().to_bits().to_le_bytes());
    hasher.update(&grid.log10_t_step().to_bits().to_le_bytes());
    hasher.update(&(grid.knots() as u64).to_le_bytes());
    hasher.update(&(tables as u64).to_le_bytes());
    hasher
}

/// Hex blake3 digest of one species' table set, tables in the order given: the set's prefix,
/// then every table's canonical record ([`crate::records`]).
pub fn table_set_digest(species: &str, grid: &LogGrid, tables: &[RateTable]) -> String {
    let mut hasher = prefixed(species, grid, tables.len());
    // Records are gathered into a large buffer before each update: blake3 hashes many 1 KiB
    // chunks at once (its SIMD path) only when an update spans many chunks. The digest does not
    // depend on where the updates split the stream.
    const FLUSH_BYTES: usize = 1 << 20;
    let mut buffer: Vec<u8> = Vec::with_capacity(FLUSH_BYTES + (1 << 16));
    for table in tables {
        if buffer.len() >= FLUSH_BYTES {
            hasher.update(&buffer);
            buffer.clear();
        }
        append_record(table, &mut buffer);
    }
    hasher.update(&buffer);
    hasher.finalize().to_hex().to_string()
}

/// The digest [`table_set_digest`] gives for the tables whose records are `records`
/// (`tables` of them, on `grid`), computed from the bytes without decoding them.
pub fn table_set_digest_of_records(species: &str, grid: &LogGrid, tables: usize, records: &[u8]) -> String {
    let mut digest = RecordsDigest::new(species, grid, tables);
    digest.update(records);
    digest.finish()
}

/// [`table_set_digest_of_records`] fed in pieces, for records read from a file in chunks.
pub struct RecordsDigest(blake3::Hasher);

impl RecordsDigest {
    /// A digest of `tables` records of `species` on `grid`, before any record.
    pub fn new(species: &str, grid: &LogGrid, tables: usize) -> Self {
        Self(prefixed(species, grid, tables))
    }
    /// Adds the next bytes of the records (anywhere the stream is split).
    pub fn update(&mut self, records: &[u8]) {
        self.0.update(records);
    }
    /// The hex digest.
    pub fn finish(&self) -> String {
        self.0.finalize().to_hex().to_string()
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::rule::TableHeader;

    fn table(upper: u32, bump: f64) -> RateTable {
        let grid = LogGrid::from_range(1e3, 1e6, 10).unwrap();
        let header = TableHeader {
            upper,
            lower: 1,
            g_lower: 2.0,
            g_upper: 4.0,
            excitation_energy_k: 2.0e4,
            source_t_min_k: 3e3,
            source_t_max_k: 3e5,
            approximate: false,
        };
        let y = (0..grid.knots()).map(|i| 0.1 * i as f64 + bump).collect();
        RateTable::from_knots(header, grid, y).unwrap()
    }

    // blake3 is a streaming hash: the digest of a byte stream does not depend on how it is
    // split into updates (the BLAKE3 specification, O'Connor et al. 2020, section 2). Checked
    // here against one update per table on a set larger than the 1 MiB flush size.
    #[test]
    fn buffered_updates_give_the_digest_of_the_whole_stream() {
        let grid = LogGrid::from_range(1e3, 1e6, 10).unwrap();
        let tables: Vec<RateTable> = (0..6000).map(|k| table(2 + k, f64::from(k) * 1e-3)).collect();
        let mut reference = blake3::Hasher::new();
        reference.update(DIGEST_TAG);
        reference.update(&1u64.to_le_bytes());
        reference.update(b"X");
        reference.update(&grid.log10_t_min_k().to_bits().to_le_bytes());
        reference.update(&grid.log10_t_step().to_bits().to_le_bytes());
        reference.update(&(grid.knots() as u64).to_le_bytes());
        reference.update(&(tables.len() as u64).to_le_bytes());
        for t in &tables {
            let h = t.header();
            reference.update(&h.upper.to_le_bytes());
            reference.update(&h.lower.to_le_bytes());
            reference.update(&[u8::from(h.approximate)]);
            let numbers = [
                h.g_lower,
                h.g_upper,
                h.excitation_energy_k,
                h.source_t_min_k,
                h.source_t_max_k,
                t.max_interpolation_error(),
            ];
            for v in numbers.into_iter().chain(t.ln_upsilon()).chain(t.slopes()) {
                reference.update(&v.to_bits().to_le_bytes());
            }
        }
        assert_eq!(
            table_set_digest("X", &grid, &tables),
            reference.finalize().to_hex().to_string()
        );
    }

    // Digest behaviour: common practice, no source (a content digest changes with any bit).
    #[test]
    fn digest_is_stable_and_changes_with_any_number_or_name() {
        let grid = LogGrid::from_range(1e3, 1e6, 10).unwrap();
        let base = [table(2, 0.0), table(3, 0.0)];
        let d = table_set_digest("X", &grid, &base);
        assert_eq!(d.len(), 64);
        assert_eq!(d, table_set_digest("X", &grid, &[table(2, 0.0), table(3, 0.0)]));
        assert_ne!(d, table_set_digest("Y", &grid, &base));
        assert_ne!(d, table_set_digest("X", &grid, &[table(3, 0.0), table(2, 0.0)]));
        assert_ne!(d, table_set_digest("X", &grid, &[table(2, 0.0), table(3, 1e-15)]));
        assert_ne!(d, table_set_digest("X", &grid, &base[..1]));
        let other = base[0].clone().with_max_interpolation_error(1e-4);
        assert_ne!(d, table_set_digest("X", &grid, &[other, table(3, 0.0)]));
    }

    #[test]
    fn the_digest_of_records_is_the_digest_of_their_tables() {
        let grid = LogGrid::from_range(1e3, 1e6, 10).unwrap();
        let tables: Vec<RateTable> = (0..40).map(|k| table(2 + k, f64::from(k) * 1e-2)).collect();
        let mut records = Vec::new();
        for t in &tables {
            append_record(t, &mut records);
        }
        assert_eq!(
            table_set_digest_of_records("X", &grid, tables.len(), &records),
            table_set_digest("X", &grid, &tables)
        );
    }
}
