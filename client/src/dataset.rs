//! Which dataset a call is about, and the check of every answer's stamp against it
//! (content-hash pinning).

use crate::error::ClientError;
use ratewell_proto::pb;
use std::fmt;
use std::str::FromStr;

/// Length of a hex blake3 content hash.
const HASH_HEX_LEN: usize = 64;
/// Characters of a content hash shown in tables.
const SHORT_HASH_LEN: usize = 12;

/// A dataset to ask about: its id, optionally a version (else the newest loaded), and
/// optionally a pinned content hash that every answer must carry.
#[derive(Debug, Clone, PartialEq, Eq, Hash)]
pub struct DatasetRef {
    id: String,
    version: Option<String>,
    pinned_content_hash: Option<String>,
    pinned_tables_digest: Option<String>,
}

impl DatasetRef {
    /// The newest loaded version of dataset `id`.
    pub fn new(id: impl Into<String>) -> Result<Self, ClientError> {
        let id = id.into();
        if id.trim().is_empty() {
            return Err(ClientError::invalid("dataset", "\"\"", "must be a non-empty id"));
        }
        Ok(Self {
            id,
            version: None,
            pinned_content_hash: None,
            pinned_tables_digest: None,
        })
    }

    /// A specific version (an empty string means the newest).
    pub fn with_version(mut self, version: impl Into<String>) -> Self {
        let v = version.into();
        self.version = (!v.is_empty()).then_some(v);
        self
    }

    /// Pins the content hash (64 hex digits, any case): answers from another content are refused.
    pub fn pinned(mut self, content_hash: &str) -> Result<Self, ClientError> {
        let h = content_hash.trim().to_ascii_lowercase();
        if h.len() != HASH_HEX_LEN || !h.bytes().all(|b| b.is_ascii_hexdigit()) {
            return Err(ClientError::invalid(
                "pin-hash",
                format!("{content_hash:?}"),
                format!("must be {HASH_HEX_LEN} hexadecimal digits (a blake3 content hash)"),
            ));
        }
        self.pinned_content_hash = Some(h);
        Ok(self)
    }

    /// Pins the tables digest (64 hex digits, any case): answers whose tables were built
    /// differently, even from the same data, are refused. Checked here, on every answer and on
    /// every table set taken from a cache (servers do not see this pin).
    pub fn pin_tables_digest(mut self, digest: &str) -> Result<Self, ClientError> {
        let d = digest.trim().to_ascii_lowercase();
        if d.len() != HASH_HEX_LEN || !d.bytes().all(|b| b.is_ascii_hexdigit()) {
            return Err(ClientError::invalid(
                "pin-tables-digest",
                format!("{digest:?}"),
                format!("must be {HASH_HEX_LEN} hexadecimal digits (a blake3 tables digest)"),
            ));
        }
        self.pinned_tables_digest = Some(d);
        Ok(self)
    }

    /// The pinned tables digest (lower-case hex), if any.
    pub fn pinned_tables_digest(&self) -> Option<&str> {
        self.pinned_tables_digest.as_deref()
    }

    /// The dataset id.
    pub fn id(&self) -> &str {
        &self.id
    }
    /// The version asked for, if any.
    pub fn version(&self) -> Option<&str> {
        self.version.as_deref()
    }
    /// The pinned content hash (lower-case hex), if any.
    pub fn pinned_content_hash(&self) -> Option<&str> {
        self.pinned_content_hash.as_deref()
    }

    /// The wire selector: id, version ("" for newest) and expected hash ("" when not pinned).
    pub fn to_selector(&self) -> pb::DatasetSelector {
        pb::DatasetSelector {
            id: self.id.clone(),
            version: self.version.clone().unwrap_or_default(),
            expected_content_hash: self.pinned_content_hash.clone().unwrap_or_default(),
        }
    }

    /// Checks an answer's stamp: present, the dataset and version asked for, and the pinned
    /// hash when one is pinned. Returns the stamp when it passes.
    pub fn check_stamp(
        &self,
        operation: &'static str,
        stamp: Option<&pb::DatasetStamp>,
    ) -> Result<pb::DatasetStamp, ClientError> {
        let stamp = stamp.ok_or_else(|| ClientError::StampMismatch {
            operation,
            message: format!("answer for dataset {self} carries no dataset stamp"),
        })?;
        if stamp.id != self.id {
            return Err(ClientError::StampMismatch {
                operation,
                message: format!(
                    "asked for dataset {}, answer is from {}",
                    self.id,
                    stamp_label(stamp)
                ),
            });
        }
        if self.version.as_ref().is_some_and(|v| *v != stamp.version) {
            return Err(ClientError::StampMismatch {
                operation,
                message: format!("asked for {self}, answer is from {}", stamp_label(stamp)),
            });
        }
        let differs = |expected: &&String| !stamp.content_hash.eq_ignore_ascii_case(expected);
        if let Some(expected) = self.pinned_content_hash.as_ref().filter(differs) {
            return Err(ClientError::HashMismatch {
                expected: expected.clone(),
                got: stamp.content_hash.clone(),
                dataset: stamp_label(stamp),
            });
        }
        let digest_differs = |expected: &&String| !stamp.tables_digest.eq_ignore_ascii_case(expected);
        if let Some(expected) = self.pinned_tables_digest.as_ref().filter(digest_differs) {
            return Err(ClientError::TablesDigestMismatch {
                expected: expected.clone(),
                got: stamp.tables_digest.clone(),
                dataset: stamp_label(stamp),
            });
        }
        Ok(stamp.clone())
    }

    /// The error to report when the server refused the request with FAILED_PRECONDITION: a
    /// [`ClientError::PinRefused`] when a hash is pinned, else the plain status.
    pub(crate) fn refine_status(
        &self,
        operation: &'static str,
        endpoint: &str,
        status: &tonic::Status,
    ) -> ClientError {
        match (&self.pinned_content_hash, status.code()) {
            (Some(expected), tonic::Code::FailedPrecondition) => ClientError::PinRefused {
                expected: expected.clone(),
                dataset: self.to_string(),
                message: status.message().to_string(),
            },
            _ => ClientError::from_status(operation, endpoint, status),
        }
    }
}

/// "id@version" of a stamp.
pub fn stamp_label(stamp: &pb::DatasetStamp) -> String {
    format!("{}@{}", stamp.id, stamp.version)
}

/// The first characters of a content hash, for tables.
pub fn short_hash(hash: &str) -> &str {
    hash.get(..SHORT_HASH_LEN).unwrap_or(hash)
}

/// Checks that a later part of a chunked answer has the same stamp as the first.
pub(crate) fn check_same_stamp(
    operation: &'static str,
    first: &pb::DatasetStamp,
    later: &pb::DatasetStamp,
) -> Result<(), ClientError> {
    if first == later {
        Ok(())
    } else {
        Err(ClientError::StampMismatch {
            operation,
            message: format!(
                "the dataset changed between parts of one answer: {} {} then {} {}",
                stamp_label(first),
                first.content_hash,
                stamp_label(later),
                later.content_hash
            ),
        })
    }
}

impl fmt::Display for DatasetRef {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(&self.id)?;
        if let Some(v) = &self.version {
            write!(f, "@{v}")?;
        }
        if let Some(h) = &self.pinned_content_hash {
            write!(f, "#{}", short_hash(h))?;
        }
        Ok(())
    }
}

/// Parses "id", "id@version", "id#hash" or "id@version#hash".
impl FromStr for DatasetRef {
    type Err = ClientError;
    fn from_str(s: &str) -> Result<Self, Self::Err> {
        let (rest, hash) = match s.split_once('#') {
            Some((r, h)) => (r, Some(h)),
            None => (s, None),
        };
        let (id, version) = match rest.split_once('@') {
            Some((i, v)) => (i, Some(v)),
            None => (rest, None),
        };
        if id.is_empty() || version.is_some_and(str::is_empty) {
            return Err(ClientError::invalid(
                "dataset",
                format!("{s:?}"),
                "must look like id, id@version, id#hash or id@version#hash",
            ));
        }
        let mut r = DatasetRef::new(id)?;
        if let Some(v) = version {
            r = r.with_version(v);
        }
        if let Some(h) = hash {
            r = r.pinned(h)?;
        }
        Ok(r)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    // Content-hash pinning as the contract states it (the contract: a client can pin
    // a hash and refuses a server that differs); hashes here are invented.
    const H1: &str = "1111111111111111111111111111111111111111111111111111111111111111";
    const H2: &str = "2222222222222222222222222222222222222222222222222222222222222222";

    fn stamp(id: &str, v: &str, h: &str) -> pb::DatasetStamp {
        pb::DatasetStamp {
            id: id.into(),
            version: v.into(),
            content_hash: h.into(),
            ..Default::default()
        }
    }

    #[test]
    fn selector_carries_the_pin() {
        let r = DatasetRef::new("demo")
            .unwrap()
            .with_version("1.0.0")
            .pinned(H1)
            .unwrap();
        let s = r.to_selector();
        assert_eq!((s.id.as_str(), s.version.as_str()), ("demo", "1.0.0"));
        assert_eq!(s.expected_content_hash, H1);
        let unpinned = DatasetRef::new("demo").unwrap().to_selector();
        assert_eq!(unpinned.expected_content_hash, "");
        assert_eq!(unpinned.version, "");
    }

    #[test]
    fn a_different_hash_is_refused_with_both_hashes() {
        let r = DatasetRef::new("demo").unwrap().pinned(H1).unwrap();
        let err = r
            .check_stamp("FetchTables", Some(&stamp("demo", "1.1.0", H2)))
            .unwrap_err();
        match err {
            ClientError::HashMismatch {
                expected,
                got,
                dataset,
            } => {
                assert_eq!((expected.as_str(), got.as_str()), (H1, H2));
                assert_eq!(dataset, "demo@1.1.0");
            }
            other => panic!("expected HashMismatch, got {other:?}"),
        }
        // Case does not matter in hex.
        let ok = r.check_stamp("FetchTables", Some(&stamp("demo", "1.0.0", &H1.to_uppercase())));
        assert!(ok.is_ok());
    }

    #[test]
    fn wrong_dataset_version_or_missing_stamp_is_refused() {
        let r = DatasetRef::new("demo").unwrap().with_version("1.0.0");
        assert!(matches!(
            r.check_stamp("X", Some(&stamp("other", "1.0.0", H1))),
            Err(ClientError::StampMismatch { .. })
        ));
        assert!(matches!(
            r.check_stamp("X", Some(&stamp("demo", "1.1.0", H1))),
            Err(ClientError::StampMismatch { .. })
        ));
        assert!(matches!(
            r.check_stamp("X", None),
            Err(ClientError::StampMismatch { .. })
        ));
        // Unpinned and newest: any hash and version of the right id passes.
        let newest = DatasetRef::new("demo").unwrap();
        assert!(newest.check_stamp("X", Some(&stamp("demo", "9", H2))).is_ok());
    }

    #[test]
    fn references_parse_and_bad_ones_are_named() {
        let r: DatasetRef = "demo@1.1.0".parse().unwrap();
        assert_eq!((r.id(), r.version()), ("demo", Some("1.1.0")));
        let r: DatasetRef = format!("demo#{H2}").parse().unwrap();
        assert_eq!(r.pinned_content_hash(), Some(H2));
        assert_eq!(r.version(), None);
        assert!("@1.0".parse::<DatasetRef>().is_err());
        assert!("demo@".parse::<DatasetRef>().is_err());
        let e = "demo#abc".parse::<DatasetRef>().unwrap_err().to_string();
        assert!(
            e.starts_with("pin-hash = \"abc\": must be 64 hexadecimal digits"),
            "{e}"
        );
    }

    #[test]
    fn a_changed_stamp_between_chunks_is_refused() {
        let a = stamp("demo", "1", H1);
        assert!(check_same_stamp("X", &a, &a.clone()).is_ok());
        assert!(check_same_stamp("X", &a, &stamp("demo", "1", H2)).is_err());
    }
}
