//! A running blake3 digest of numbers by their exact IEEE 754 bits, so two jobs get the same
//! checksum only if every number they computed agrees bit for bit.

/// Accumulates f64 and u32 values (little-endian bytes) into a blake3 hash, counting them.
#[derive(Debug, Clone)]
pub(crate) struct NumberDigest {
    hasher: blake3::Hasher,
    bytes: Vec<u8>,
    values: u64,
}

impl NumberDigest {
    /// An empty digest; `domain` names what it covers, so two kinds of digest never collide.
    pub(crate) fn new(domain: &str) -> Self {
        let mut hasher = blake3::Hasher::new();
        hasher.update(&(domain.len() as u64).to_le_bytes());
        hasher.update(domain.as_bytes());
        Self {
            hasher,
            bytes: Vec::new(),
            values: 0,
        }
    }

    /// Adds floating-point numbers by their bits (so -0.0 and 0.0, or two NaNs, differ).
    pub(crate) fn add_f64s(&mut self, values: &[f64]) {
        self.bytes.clear();
        for v in values {
            self.bytes.extend_from_slice(&v.to_bits().to_le_bytes());
        }
        self.hasher.update(&self.bytes);
        self.values += values.len() as u64;
    }

    /// Adds unsigned integers (flags, level indices).
    pub(crate) fn add_u32s(&mut self, values: &[u32]) {
        self.bytes.clear();
        for v in values {
            self.bytes.extend_from_slice(&v.to_le_bytes());
        }
        self.hasher.update(&self.bytes);
        self.values += values.len() as u64;
    }

    /// Numbers added so far.
    pub(crate) fn values(&self) -> u64 {
        self.values
    }

    /// The hash so far, 64 lower-case hex digits.
    pub(crate) fn hex(&self) -> String {
        self.hasher.finalize().to_hex().to_string()
    }
}

/// One checksum over several digests' hex strings, in order.
pub(crate) fn combine(parts: &[&str]) -> String {
    let mut hasher = blake3::Hasher::new();
    for p in parts {
        hasher.update(p.as_bytes());
    }
    hasher.finalize().to_hex().to_string()
}

#[cfg(test)]
mod tests {
    use super::*;

    // The official BLAKE3 test vectors (github.com/BLAKE3-team/BLAKE3, test_vectors/
    // test_vectors.json: input_len 0 and 1, first 32 bytes of "hash"), so the checksum is plain
    // blake3 that any other tool can recompute.
    #[test]
    fn the_hash_is_blake3() {
        assert_eq!(
            combine(&[]),
            "af1349b9f5f9a1a6a0404dea36dcc9499bcb25c9adc112b7cc9a93cae41f3262"
        );
        // input_len 1: the single byte 0 (the vectors' repeating 0, 1, 2, ... pattern).
        assert_eq!(
            combine(&["\0"]),
            "2d3adedff11b61f14c886e35afa036736dcd87a74d27b5c1510225d0f592e213"
        );
    }

    #[test]
    fn equal_bits_give_equal_checksums_and_any_difference_shows() {
        let values = [1.0e-10, 2.5, 3.0e8];
        let digest = |f: &dyn Fn(&mut NumberDigest)| {
            let mut d = NumberDigest::new("rates");
            f(&mut d);
            d.hex()
        };
        let base = digest(&|d| d.add_f64s(&values));
        assert_eq!(base, digest(&|d| d.add_f64s(&values)));
        // Split into several calls: the same bytes, the same hash.
        assert_eq!(
            base,
            digest(&|d| {
                d.add_f64s(&values[..1]);
                d.add_f64s(&values[1..]);
            })
        );
        // One unit in the last place.
        let nudged = [values[0], f64::from_bits(values[1].to_bits() + 1), values[2]];
        assert_ne!(base, digest(&|d| d.add_f64s(&nudged)));
        // Order matters; so does the sign of zero.
        assert_ne!(base, digest(&|d| d.add_f64s(&[values[1], values[0], values[2]])));
        assert_ne!(digest(&|d| d.add_f64s(&[0.0])), digest(&|d| d.add_f64s(&[-0.0])));
        // The domain separates digests of the same numbers.
        let mut other = NumberDigest::new("solves");
        other.add_f64s(&values);
        assert_ne!(base, other.hex());
        assert_eq!(other.values(), 3);
        let mut flags = NumberDigest::new("rates");
        flags.add_u32s(&[1, 2]);
        assert_eq!(flags.values(), 2);
        assert_ne!(flags.hex(), NumberDigest::new("rates").hex());
    }
}
