//! Table files: a fetched table set saved to disk and read back with no server, giving the same
//! bits. The format is ratewell's own, little-endian. Version 2 (written since 0.x; version 1
//! files still load):
//!
//! | bytes                 | content                                                        |
//! |-----------------------|----------------------------------------------------------------|
//! | 0..8                  | magic `RWTABLES`                                               |
//! | 8..12                 | format version, u32 (this library writes 2 and reads 1 and 2)  |
//! | 12..20                | description length M, u64                                      |
//! | 20..28                | table count T, u64                                             |
//! | 28..28+M              | description: the protobuf encoding of `ratewell.v1.FetchTablesResponse` without its tables (stamp, species, grid, cautions, table-set digest) |
//! | 28+M..60+M            | blake3 checksum of bytes 0..28+M                               |
//! | 60+M..                | T table records, each as the table-set digest hashes it (`ratewell_proto::records`: keys, weights, energy, source range, approximate mark, error bound, knots, slopes) |
//!
//! Reading checks, in order: the magic, the version (a newer one is refused with a message
//! saying so), the lengths (truncated or trailing bytes), the checksum of the header and the
//! description (any changed byte there), and then the table-set digest hashed over the records
//! exactly as they lie in the file (any changed byte in a table), before any table is decoded.
//! Numbers are stored as their 64 IEEE-754 bits, so knots and slopes come back exactly, and the
//! tables are hashed once, not decoded first: a 300-level species (75 MB) loads in a few tens
//! of milliseconds.
//!
//! Version 1 (read only): magic, version 1, body length N (u64), the protobuf encoding of the
//! whole `FetchTablesResponse`, a blake3 checksum of everything before it.
//!
//! Writing goes to a temporary name in the same folder, then a rename, so a reader never sees a
//! half-written file and two writers racing leave one whole file.

use crate::error::ClientError;
use crate::local::LocalTables;
use prost::Message;
use ratewell_proto::digest::RecordsDigest;
use ratewell_proto::pb;
use ratewell_proto::records::{append_record, append_tables, record_bytes};
use ratewell_proto::wire::grid_from_wire;
use std::io::{Read, Write};
use std::path::{Path, PathBuf};

/// First eight bytes of every table file.
pub const TABLE_FILE_MAGIC: &[u8; 8] = b"RWTABLES";
/// The format version this library writes, and the newest it reads.
pub const TABLE_FILE_VERSION: u32 = 2;
/// Ending of table file names.
pub const TABLE_FILE_EXTENSION: &str = "rwtables";

/// Header of version 1: magic, version, body length.
const V1_HEADER_BYTES: usize = 20;
/// Header of version 2: magic, version, description length, table count.
const HEADER_BYTES: usize = 28;
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

/// The bytes of a version-2 table file holding `tables`.
pub(crate) fn encode(tables: &LocalTables) -> Vec<u8> {
    let mut description = tables.to_wire();
    description.tables.clear();
    let description_len = description.encoded_len();
    let records_len = tables.tables().len() * record_bytes(tables.grid().knots());
    let mut bytes = Vec::with_capacity(HEADER_BYTES + description_len + CHECKSUM_BYTES + records_len);
    bytes.extend_from_slice(TABLE_FILE_MAGIC);
    bytes.extend_from_slice(&TABLE_FILE_VERSION.to_le_bytes());
    bytes.extend_from_slice(&(description_len as u64).to_le_bytes());
    bytes.extend_from_slice(&(tables.tables().len() as u64).to_le_bytes());
    description
        .encode(&mut bytes)
        .expect("a Vec grows to hold any message");
    let checksum = blake3::hash(&bytes);
    bytes.extend_from_slice(checksum.as_bytes());
    for table in tables.tables() {
        append_record(table, &mut bytes);
    }
    bytes
}

fn le_u64(bytes: &[u8], at: usize) -> u64 {
    u64::from_le_bytes(bytes[at..at + 8].try_into().expect("8 bytes"))
}

/// Reads exactly `buf.len()` bytes, or says the file is truncated (`what` names what was due).
fn read_part(path: &Path, reader: &mut dyn Read, buf: &mut [u8], what: &str) -> Result<(), ClientError> {
    reader.read_exact(buf).map_err(|e| {
        if e.kind() == std::io::ErrorKind::UnexpectedEof {
            file_error(path, format!("truncated: the file ends inside {what}"))
        } else {
            file_error(path, format!("cannot read: {e}"))
        }
    })
}

/// Reads until `buf` is full or the input ends; returns how many bytes were read.
fn fill(reader: &mut dyn Read, buf: &mut [u8]) -> std::io::Result<usize> {
    let mut got = 0;
    while got < buf.len() {
        match reader.read(&mut buf[got..]) {
            Ok(0) => break,
            Ok(n) => got += n,
            Err(e) if e.kind() == std::io::ErrorKind::Interrupted => {}
            Err(e) => return Err(e),
        }
    }
    Ok(got)
}

/// Refuses a file with bytes after its announced end.
fn expect_end(path: &Path, reader: &mut dyn Read) -> Result<(), ClientError> {
    // Counted, not kept: a damaged file may carry any amount after its end.
    let rest = std::io::copy(reader, &mut std::io::sink())
        .map_err(|e| file_error(path, format!("cannot read: {e}")))?;
    if rest == 0 {
        Ok(())
    } else {
        Err(file_error(
            path,
            format!("{rest} bytes after the end the header announces: the file is damaged"),
        ))
    }
}

const CHECKSUM_MISMATCH: &str = "checksum mismatch: the file was changed or damaged after it was written";

/// Descriptions and version-1 bodies larger than this are refused before any allocation.
const MAX_DESCRIPTION_BYTES: u64 = 1 << 30;
/// Records are read, hashed and decoded this many bytes at a time (about).
const RECORD_CHUNK_BYTES: usize = 1 << 20;

/// The table set held in the table file read from `reader` (`path` is named in errors).
pub(crate) fn decode(path: &Path, reader: &mut dyn Read) -> Result<LocalTables, ClientError> {
    let mut head = [0u8; HEADER_BYTES];
    let got = fill(reader, &mut head[..12]).map_err(|e| file_error(path, format!("cannot read: {e}")))?;
    if got < 8 || &head[..8] != TABLE_FILE_MAGIC {
        return Err(file_error(
            path,
            "not a ratewell table file (it does not start with RWTABLES)",
        ));
    }
    if got < 12 {
        return Err(file_error(
            path,
            format!("truncated: {got} bytes, shorter than the header"),
        ));
    }
    let version = u32::from_le_bytes(head[8..12].try_into().expect("4 bytes"));
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
    let tables = if version == 1 {
        read_part(path, reader, &mut head[12..V1_HEADER_BYTES], "the header")?;
        let response = decode_v1(path, &head[..V1_HEADER_BYTES], reader)?;
        if response.table_set_digest.is_empty() {
            return Err(file_error(path, "the table set carries no digest"));
        }
        LocalTables::from_wire(response)
    } else {
        read_part(path, reader, &mut head[12..HEADER_BYTES], "the header")?;
        decode_v2(path, &head, reader)
    };
    tables.map_err(|e| match e {
        ClientError::TableFile { .. } => e,
        other => file_error(path, other.to_string()),
    })
}

/// The header's `what` length, refused when implausibly large.
fn announced(path: &Path, head: &[u8], at: usize, what: &str) -> Result<usize, ClientError> {
    let n = le_u64(head, at);
    if n > MAX_DESCRIPTION_BYTES {
        return Err(file_error(
            path,
            format!(
                "the header announces a {n}-byte {what}, more than the {MAX_DESCRIPTION_BYTES} allowed: the file is damaged"
            ),
        ));
    }
    Ok(n as usize)
}

/// Header bytes and `M` description bytes, then the checksum of both, checked.
fn checked_description(
    path: &Path,
    head: &[u8],
    reader: &mut dyn Read,
    m: usize,
    what: &str,
) -> Result<Vec<u8>, ClientError> {
    let mut covered = head.to_vec();
    covered.resize(head.len() + m, 0);
    read_part(path, reader, &mut covered[head.len()..], what)?;
    let mut checksum = [0u8; CHECKSUM_BYTES];
    read_part(path, reader, &mut checksum, "the checksum")?;
    if blake3::hash(&covered).as_bytes() != &checksum {
        return Err(file_error(path, CHECKSUM_MISMATCH));
    }
    covered.drain(..head.len());
    Ok(covered)
}

fn decode_v2(
    path: &Path,
    head: &[u8; HEADER_BYTES],
    reader: &mut dyn Read,
) -> Result<LocalTables, ClientError> {
    let m = announced(path, head, 12, "description")?;
    let description = checked_description(path, head, reader, m, "the description")?;
    let count = le_u64(head, 20);
    let description = pb::FetchTablesResponse::decode(description.as_slice())
        .map_err(|e| file_error(path, format!("the description does not decode: {e}")))?;
    let no = |what: &str| file_error(path, format!("the description carries no {what}"));
    let stamp = description.stamp.ok_or_else(|| no("dataset stamp"))?;
    let grid = grid_from_wire(description.grid.as_ref().ok_or_else(|| no("grid"))?)?;
    if description.table_set_digest.is_empty() || !description.tables.is_empty() {
        return Err(no("table-set digest (or it holds tables, which belong after it)"));
    }
    let record = record_bytes(grid.knots());
    let count = usize::try_from(count)
        .ok()
        .filter(|&c| c.checked_mul(record).is_some())
        .ok_or_else(|| {
            file_error(
                path,
                format!("the header announces {count} tables: too many, the file is damaged"),
            )
        })?;
    // Records are read, hashed and decoded a chunk at a time: no copy of the whole file is
    // held, and the digest is checked before the tables are handed out.
    let mut digest = RecordsDigest::new(&description.species, &grid, count);
    let per_chunk = (RECORD_CHUNK_BYTES / record).max(1);
    let mut chunk = vec![0u8; per_chunk.min(count.max(1)) * record];
    let mut tables = Vec::with_capacity(count.min(1 << 24));
    let mut first_problem = None;
    let mut left = count;
    while left > 0 {
        let n = left.min(per_chunk);
        let bytes = &mut chunk[..n * record];
        let got = fill(reader, bytes).map_err(|e| file_error(path, format!("cannot read: {e}")))?;
        if got < bytes.len() {
            return Err(file_error(
                path,
                format!(
                    "truncated: the file ends inside table {} of the {count} ({record} bytes each) \
                     the header announces",
                    count - left + got / record + 1
                ),
            ));
        }
        digest.update(bytes);
        if first_problem.is_none()
            && let Err(e) = append_tables(bytes, grid, &mut tables)
        {
            first_problem = Some(e);
        }
        left -= n;
    }
    expect_end(path, reader)?;
    let digest = digest.finish();
    if !description.table_set_digest.eq_ignore_ascii_case(&digest) {
        return Err(file_error(
            path,
            format!(
                "table-set digest mismatch: the tables were changed or damaged after the file was \
                 written (the file names {}, its tables hash to {digest})",
                description.table_set_digest
            ),
        ));
    }
    if let Some(e) = first_problem {
        return Err(file_error(path, e.to_string()));
    }
    LocalTables::assemble(
        stamp,
        description.species,
        grid,
        tables,
        description.cautions,
        digest,
    )
}

/// The whole answer held in a version-1 file, after its 20-byte header `head`.
fn decode_v1(
    path: &Path,
    head: &[u8],
    reader: &mut dyn Read,
) -> Result<pb::FetchTablesResponse, ClientError> {
    let n = announced(path, head, 12, "body")?;
    let body = checked_description(path, head, reader, n, "the body")?;
    expect_end(path, reader)?;
    pb::FetchTablesResponse::decode(body.as_slice())
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
        encode(self)
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
        let mut file =
            std::fs::File::open(path).map_err(|e| file_error(path, format!("cannot read: {e}")))?;
        decode(path, &mut file)
    }

    /// As [`Self::load`], from bytes already read (`path` is only named in errors).
    pub fn from_file_bytes(path: &Path, bytes: &[u8]) -> Result<LocalTables, ClientError> {
        decode(path, &mut &bytes[..])
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
        // Every single changed byte is caught (header, description, checksum or a table).
        for i in (0..good.len()).step_by(7).chain([good.len() - 1]) {
            let mut bad = good.clone();
            bad[i] ^= 0x01;
            let m = refused(&bad);
            assert!(m.starts_with("table file t.rwtables: "), "{m}");
            assert!(
                m.contains("checksum mismatch")
                    || m.contains("table-set digest mismatch")
                    || m.contains("not a ratewell table file")
                    || m.contains("newer than this library")
                    || m.contains("truncated")
                    || m.contains("version 0"),
                "byte {i}: {m}"
            );
        }
        let m = refused(&good[..good.len() - 5]);
        assert!(m.contains("truncated"), "{m}");
        let m = refused(&good[..10]);
        assert!(m.contains("truncated"), "{m}");
        let m = refused(&good[..40]);
        assert!(m.contains("truncated"), "{m}");
        let mut longer = good.clone();
        longer.push(0);
        assert!(refused(&longer).contains("1 bytes after the end the header announces"));
        assert!(refused(b"hello world, not tables").contains("not a ratewell table file"));
        let mut newer = good.clone();
        newer[8..12].copy_from_slice(&3u32.to_le_bytes());
        let m = refused(&newer);
        assert!(
            m.contains("format version 3, newer than this library reads (up to 2)"),
            "{m}"
        );
    }

    /// A version-2 file with the given description and records, its checksum made to match.
    fn file_with(description: &pb::FetchTablesResponse, count: u64, records: &[u8]) -> Vec<u8> {
        let mut bytes = TABLE_FILE_MAGIC.to_vec();
        bytes.extend_from_slice(&2u32.to_le_bytes());
        bytes.extend_from_slice(&(description.encoded_len() as u64).to_le_bytes());
        bytes.extend_from_slice(&count.to_le_bytes());
        description.encode(&mut bytes).unwrap();
        let checksum = blake3::hash(&bytes);
        bytes.extend_from_slice(checksum.as_bytes());
        bytes.extend_from_slice(records);
        bytes
    }

    #[test]
    fn a_file_whose_tables_do_not_match_their_digest_is_refused() {
        let t = tables();
        let mut description = t.to_wire();
        description.tables.clear();
        let mut records = Vec::new();
        for table in t.tables() {
            append_record(table, &mut records);
        }
        let count = t.tables().len() as u64;
        assert!(
            LocalTables::from_file_bytes(Path::new("t"), &file_with(&description, count, &records)).is_ok()
        );
        // A consistent header (valid checksum) and one table bit changed.
        let mut changed = records.clone();
        changed[100] ^= 0x40;
        let m = refused(&file_with(&description, count, &changed));
        assert!(m.contains("table-set digest mismatch"), "{m}");
        // One table fewer than announced, or one more.
        let one = record_bytes(t.grid().knots());
        let m = refused(&file_with(&description, count, &records[..records.len() - one]));
        assert!(m.contains("truncated") && m.contains("table 3 of the 3"), "{m}");
        let m = refused(&file_with(&description, count - 1, &records));
        assert!(m.contains("after the end the header announces"), "{m}");
        let mut no_digest = description.clone();
        no_digest.table_set_digest.clear();
        assert!(refused(&file_with(&no_digest, count, &records)).contains("carries no table-set digest"));
    }

    /// A version-1 file (the format before 2), as earlier libraries wrote it.
    fn version_1_file(response: &pb::FetchTablesResponse) -> Vec<u8> {
        let mut bytes = TABLE_FILE_MAGIC.to_vec();
        bytes.extend_from_slice(&1u32.to_le_bytes());
        bytes.extend_from_slice(&(response.encoded_len() as u64).to_le_bytes());
        response.encode(&mut bytes).unwrap();
        let checksum = blake3::hash(&bytes);
        bytes.extend_from_slice(checksum.as_bytes());
        bytes
    }

    #[test]
    fn version_1_files_still_load_with_the_same_bits() {
        let t = tables();
        let old = version_1_file(&t.to_wire());
        let back = LocalTables::from_file_bytes(Path::new("old"), &old).unwrap();
        assert_eq!(back.digest(), t.digest());
        let (a, b) = (values(&t), values(&back));
        assert_eq!(bits(&a.deexcitation), bits(&b.deexcitation));
        let mut bad = old.clone();
        let n = bad.len();
        bad[n / 2] ^= 1;
        assert!(refused(&bad).contains("checksum mismatch"));
        let mut response = t.to_wire();
        response.tables[0].ln_upsilon[3] += 1e-12;
        assert!(refused(&version_1_file(&response)).contains("table-set digest"));
        response.table_set_digest.clear();
        assert!(refused(&version_1_file(&response)).contains("carries no digest"));
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
