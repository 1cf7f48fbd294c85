//! Table files: a fetched table set saved to disk and read back with no server, giving the same
//! bits. The format is ratewell's own (version 1), little-endian:
//!
//! | bytes            | content                                                        |
//! |------------------|----------------------------------------------------------------|
//! | 0..8             | magic `RWTABLES`                                               |
//! | 8..12            | format version, u32 (this library writes 1 and reads up to 1)  |
//! | 12..20           | body length N, u64                                             |
//! | 20..20+N         | body: the protobuf encoding of `ratewell.v1.FetchTablesResponse` (stamp, species, grid, tables, cautions, table-set digest) |
//! | 20+N..20+N+32    | blake3 checksum of bytes 0..20+N                               |
//!
//! Reading checks, in order: the magic, the version (a newer one is refused with a message
//! saying so), the length (truncated or trailing bytes), the checksum (any changed byte), the
//! body, and finally the table-set digest recomputed from the tables. Protobuf stores doubles
//! as their 64 IEEE-754 bits, so knots and slopes come back exactly.
//!
//! Writing goes to a temporary name in the same folder, then a rename, so a reader never sees a
//! half-written file and two writers racing leave one whole file.

use crate::error::ClientError;
use crate::local::LocalTables;
use prost::Message;
use ratewell_proto::pb;
use std::io::Write;
use std::path::{Path, PathBuf};

/// First eight bytes of every table file.
pub const TABLE_FILE_MAGIC: &[u8; 8] = b"RWTABLES";
/// The format version this library writes, and the newest it reads.
pub const TABLE_FILE_VERSION: u32 = 1;
/// Ending of table file names.
pub const TABLE_FILE_EXTENSION: &str = "rwtables";

const HEADER_BYTES: usize = 20;
const CHECKSUM_BYTES: usize = 32;

fn file_error(path: &Path, message: impl Into<String>) -> ClientError {
    ClientError::TableFile {
        path: path.display().to_string(),
        message: message.into(),
    }
}

/// A name part made of letters, digits, '.' and '-' only ("Mk III" -> "Mk-III").
pub(crate) fn name_part(text: &str) -> String {
    let part: String = text
        .chars()
        .map(|c| {
            if c.is_ascii_alphanumeric() || c == '.' {
                c
            } else {
                '-'
            }
        })
        .collect();
    if part.is_empty() { "-".into() } else { part }
}

/// The bytes of a table file holding `response`.
pub(crate) fn encode(response: &pb::FetchTablesResponse) -> Vec<u8> {
    let body_len = response.encoded_len();
    let mut bytes = Vec::with_capacity(HEADER_BYTES + body_len + CHECKSUM_BYTES);
    bytes.extend_from_slice(TABLE_FILE_MAGIC);
    bytes.extend_from_slice(&TABLE_FILE_VERSION.to_le_bytes());
    bytes.extend_from_slice(&(body_len as u64).to_le_bytes());
    response
        .encode(&mut bytes)
        .expect("a Vec grows to hold any message");
    let checksum = blake3::hash(&bytes);
    bytes.extend_from_slice(checksum.as_bytes());
    bytes
}

/// The table set held in `bytes` (read from `path`, named in errors).
pub(crate) fn decode(path: &Path, bytes: &[u8]) -> Result<pb::FetchTablesResponse, ClientError> {
    if bytes.len() < TABLE_FILE_MAGIC.len() || &bytes[..8] != TABLE_FILE_MAGIC {
        return Err(file_error(
            path,
            "not a ratewell table file (it does not start with RWTABLES)",
        ));
    }
    if bytes.len() < HEADER_BYTES {
        return Err(file_error(
            path,
            format!(
                "truncated: {} bytes, shorter than the {HEADER_BYTES}-byte header",
                bytes.len()
            ),
        ));
    }
    let version = u32::from_le_bytes(bytes[8..12].try_into().expect("4 bytes"));
    if version > TABLE_FILE_VERSION {
        return Err(file_error(
            path,
            format!(
                "written in table-file format version {version}, newer than this library reads \
                 (up to {TABLE_FILE_VERSION}): update ratewell to read it"
            ),
        ));
    }
    if version == 0 {
        return Err(file_error(
            path,
            "format version 0: not a valid version (1 or more)",
        ));
    }
    let body_len = u64::from_le_bytes(bytes[12..20].try_into().expect("8 bytes"));
    let expected = (HEADER_BYTES as u64)
        .checked_add(body_len)
        .and_then(|n| n.checked_add(CHECKSUM_BYTES as u64));
    let actual = bytes.len() as u64;
    match expected {
        Some(e) if e == actual => {}
        Some(e) if e < actual => {
            return Err(file_error(
                path,
                format!("{} bytes after the checksum: the file is damaged", actual - e),
            ));
        }
        _ => {
            return Err(file_error(
                path,
                format!(
                    "truncated: the header announces {body_len} body bytes and a {CHECKSUM_BYTES}-byte \
                     checksum, the file holds {} bytes after the header",
                    actual - HEADER_BYTES as u64
                ),
            ));
        }
    }
    let end = HEADER_BYTES + body_len as usize;
    let checksum = blake3::hash(&bytes[..end]);
    if checksum.as_bytes() != &bytes[end..] {
        return Err(file_error(
            path,
            "checksum mismatch: the file was changed or damaged after it was written",
        ));
    }
    pb::FetchTablesResponse::decode(&bytes[HEADER_BYTES..end])
        .map_err(|e| file_error(path, format!("the body does not decode as a table set: {e}")))
}

/// Writes `bytes` to `dir/name` through a temporary name and a rename.
pub(crate) fn write_atomically(dir: &Path, name: &str, bytes: &[u8]) -> Result<PathBuf, ClientError> {
    std::fs::create_dir_all(dir).map_err(|e| file_error(dir, format!("cannot create the folder: {e}")))?;
    let path = dir.join(name);
    let temporary = dir.join(format!(
        ".{name}.{}.{:016x}.tmp",
        std::process::id(),
        rand::random::<u64>()
    ));
    let written = (|| {
        let mut file = std::fs::File::create(&temporary)?;
        file.write_all(bytes)?;
        file.sync_all()?;
        std::fs::rename(&temporary, &path)
    })();
    if let Err(e) = written {
        let _ = std::fs::remove_file(&temporary);
        return Err(file_error(&path, format!("cannot write: {e}")));
    }
    Ok(path)
}

impl LocalTables {
    /// The table file's name: dataset id, version, species, the first 16 hex digits of the
    /// content hash and of the table-set digest, e.g.
    /// `demo_1.0.0_Mk-III_0123456789abcdef_fedcba9876543210.rwtables`.
    pub fn file_name(&self) -> String {
        let s = self.stamp();
        let short = |h: &str| h.get(..16).unwrap_or(h).to_ascii_lowercase();
        format!(
            "{}_{}_{}_{}_{}.{TABLE_FILE_EXTENSION}",
            name_part(&s.id),
            name_part(&s.version),
            name_part(self.species()),
            name_part(&short(&s.content_hash)),
            short(self.digest()),
        )
    }

    /// The table file's bytes (see the module documentation for the format).
    pub fn to_file_bytes(&self) -> Vec<u8> {
        encode(&self.to_wire())
    }

    /// Saves the tables into folder `dir` (created if missing) under [`Self::file_name`],
    /// atomically; returns the file's path.
    pub fn save(&self, dir: &Path) -> Result<PathBuf, ClientError> {
        write_atomically(dir, &self.file_name(), &self.to_file_bytes())
    }

    /// Saves the tables to exactly `path`, atomically (temporary name beside it, then rename).
    pub fn save_as(&self, path: &Path) -> Result<(), ClientError> {
        let name = path
            .file_name()
            .and_then(|n| n.to_str())
            .ok_or_else(|| file_error(path, "the path has no file name"))?;
        let dir = path
            .parent()
            .filter(|p| !p.as_os_str().is_empty())
            .unwrap_or(Path::new("."));
        write_atomically(dir, name, &self.to_file_bytes()).map(|_| ())
    }

    /// Reads a table file written by [`Self::save`] with no server: format, length, checksum
    /// and table-set digest are checked; the tables evaluate to the same bits as the server's.
    pub fn load(path: &Path) -> Result<LocalTables, ClientError> {
        let bytes = std::fs::read(path).map_err(|e| file_error(path, format!("cannot read: {e}")))?;
        Self::from_file_bytes(path, &bytes)
    }

    /// As [`Self::load`], from bytes already read (`path` is only named in errors).
    pub fn from_file_bytes(path: &Path, bytes: &[u8]) -> Result<LocalTables, ClientError> {
        let response = decode(path, bytes)?;
        if response.table_set_digest.is_empty() {
            return Err(file_error(path, "the table set carries no digest"));
        }
        LocalTables::from_wire(response).map_err(|e| file_error(path, e.to_string()))
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::local::tests::invented_response;
    use crate::rates::{EvalOptions, RateBuffers};

    fn tables() -> LocalTables {
        LocalTables::from_wire(invented_response(&"ab".repeat(32))).unwrap()
    }

    fn scratch(name: &str) -> PathBuf {
        let dir = std::env::temp_dir().join(format!(
            "ratewell-table-file-{name}-{}-{:x}",
            std::process::id(),
            rand::random::<u32>()
        ));
        std::fs::create_dir_all(&dir).unwrap();
        dir
    }

    fn values(t: &LocalTables) -> RateBuffers {
        let temps: Vec<f64> = (0..200).map(|i| 1.0e3 * 10f64.powf(i as f64 * 0.015)).collect();
        let mut out = RateBuffers::default();
        t.evaluate_into(&[], &temps, EvalOptions::default(), &mut out)
            .unwrap();
        out
    }

    fn bits(v: &[f64]) -> Vec<u64> {
        v.iter().map(|x| x.to_bits()).collect()
    }

    // Round trip: the format stores IEEE-754 doubles as their bits (protobuf `double` is a
    // fixed 64-bit field, protobuf encoding guide), so evaluation must match bit for bit.
    #[test]
    fn a_saved_file_loads_with_the_same_bits() {
        let dir = scratch("round-trip");
        let t = tables();
        let path = t.save(&dir).unwrap();
        assert_eq!(path.file_name().unwrap().to_str().unwrap(), t.file_name());
        assert!(
            t.file_name().starts_with("demo_1.0.0_X_abababababababab_"),
            "{}",
            t.file_name()
        );
        let back = LocalTables::load(&path).unwrap();
        assert_eq!(back.digest(), t.digest());
        assert_eq!(back.stamp(), t.stamp());
        assert_eq!(back.cautions(), t.cautions());
        let (a, b) = (values(&t), values(&back));
        assert_eq!(bits(&a.excitation), bits(&b.excitation));
        assert_eq!(bits(&a.deexcitation), bits(&b.deexcitation));
        assert_eq!(a.flags, b.flags);
        // No temporary file is left behind.
        let names: Vec<_> = std::fs::read_dir(&dir)
            .unwrap()
            .map(|e| e.unwrap().file_name())
            .collect();
        assert_eq!(names.len(), 1, "{names:?}");
        std::fs::remove_dir_all(&dir).unwrap();
    }

    fn refused(bytes: &[u8]) -> String {
        LocalTables::from_file_bytes(Path::new("t.rwtables"), bytes)
            .unwrap_err()
            .to_string()
    }

    #[test]
    fn damaged_truncated_and_newer_files_are_refused_by_name() {
        let good = tables().to_file_bytes();
        assert!(LocalTables::from_file_bytes(Path::new("t"), &good).is_ok());
        // Every single changed byte is caught (header, body or checksum).
        for i in (0..good.len()).step_by(7).chain([good.len() - 1]) {
            let mut bad = good.clone();
            bad[i] ^= 0x01;
            let m = refused(&bad);
            assert!(m.starts_with("table file t.rwtables: "), "{m}");
            assert!(
                m.contains("checksum mismatch")
                    || m.contains("not a ratewell table file")
                    || m.contains("newer than this library")
                    || m.contains("truncated")
                    || m.contains("after the checksum")
                    || m.contains("version 0"),
                "byte {i}: {m}"
            );
        }
        let m = refused(&good[..good.len() - 5]);
        assert!(m.contains("truncated"), "{m}");
        let m = refused(&good[..10]);
        assert!(m.contains("truncated"), "{m}");
        let mut longer = good.clone();
        longer.push(0);
        assert!(refused(&longer).contains("1 bytes after the checksum"));
        assert!(refused(b"hello world, not tables").contains("not a ratewell table file"));
        let mut newer = good.clone();
        newer[8..12].copy_from_slice(&2u32.to_le_bytes());
        let m = refused(&newer);
        assert!(
            m.contains("format version 2, newer than this library reads (up to 1)"),
            "{m}"
        );
    }

    #[test]
    fn a_file_whose_tables_do_not_match_their_digest_is_refused() {
        // A consistent file (valid checksum) whose digest was not made from its tables.
        let mut response = tables().to_wire();
        response.tables[0].ln_upsilon[3] += 1e-12;
        let m = refused(&encode(&response));
        assert!(m.contains("table-set digest"), "{m}");
        let mut response = tables().to_wire();
        response.table_set_digest.clear();
        assert!(refused(&encode(&response)).contains("carries no digest"));
    }

    #[test]
    fn names_are_safe_file_names() {
        assert_eq!(name_part("Mk III"), "Mk-III");
        assert_eq!(name_part("../etc"), "..-etc");
        assert_eq!(name_part(""), "-");
        let t = tables();
        assert!(!t.file_name().contains('/'));
    }
}
