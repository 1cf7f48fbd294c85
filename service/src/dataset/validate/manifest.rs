//! Checks of the manifest `dataset.toml`: format version, id, version, texts, species files.

use std::collections::BTreeMap;

use crate::dataset::MANIFEST_FILE;
use crate::dataset::format::{FORMAT_VERSION, RawManifest};
use crate::dataset::reader::{Sink, Val};

/// The checked manifest.
#[derive(Debug)]
pub(crate) struct Manifest {
    pub(crate) id: String,
    pub(crate) version: String,
    pub(crate) description: String,
    pub(crate) provenance: String,
}

/// Check a manifest; `None` when it has problems (they are in `sink`).
pub(crate) fn check_manifest(sink: &mut Sink<'_>, raw: RawManifest) -> Option<Manifest> {
    if let Some(format) = &raw.format
        && format.value != FORMAT_VERSION
    {
        sink.report(
            &format.loc,
            format!(
                "got {}, this reader knows format {FORMAT_VERSION} only",
                format.value
            ),
        );
    }
    if let Some(id) = &raw.id
        && !is_valid_id(&id.value)
    {
        sink.report(
            &id.loc,
            format!(
                "got {:?}, must be 1 to 64 characters of a-z, 0-9, '-', '_', '.', starting with a letter or digit",
                id.value
            ),
        );
    }
    if let Some(version) = &raw.version
        && parse_version(&version.value).is_none()
    {
        sink.report(
            &version.loc,
            format!(
                "got {:?}, must be MAJOR.MINOR.PATCH of whole numbers without leading zeros, e.g. \"1.0.0\"",
                version.value
            ),
        );
    }
    let description = non_empty(sink, raw.description);
    let provenance = non_empty(sink, raw.provenance);
    if let Some(files) = &raw.species_files {
        check_species_file_names(sink, files);
    }
    if sink.has_problems() {
        return None;
    }
    Some(Manifest {
        id: raw.id?.value,
        version: raw.version?.value,
        description: description?,
        provenance: provenance?,
    })
}

fn check_species_file_names(sink: &mut Sink<'_>, files: &Val<Vec<Val<String>>>) {
    if files.value.is_empty() {
        sink.report(
            &files.loc,
            "got an empty list, must name at least one species file (or leave the key out)",
        );
    }
    let mut seen: BTreeMap<&str, usize> = BTreeMap::new();
    for name in &files.value {
        let n = name.value.as_str();
        let bare = !n.is_empty() && !n.contains(['/', '\\']) && !n.starts_with('.');
        if !bare || !n.ends_with(".toml") || n == MANIFEST_FILE {
            sink.report(
                &name.loc,
                format!(
                    "got {n:?}, must be a file name in the dataset folder ending in .toml, not a path and not {}",
                    MANIFEST_FILE
                ),
            );
        } else if let Some(first) = seen.insert(n, name.loc.line) {
            sink.report(
                &name.loc,
                format!("got {n:?} again, already listed on line {first}"),
            );
        }
    }
}

/// True for a valid dataset id: 1-64 of `a-z 0-9 - _ .`, starting with a letter or digit.
pub fn is_valid_id(id: &str) -> bool {
    let mut chars = id.chars();
    let first_ok = chars
        .next()
        .is_some_and(|c| c.is_ascii_lowercase() || c.is_ascii_digit());
    first_ok
        && id.len() <= 64
        && id
            .chars()
            .all(|c| c.is_ascii_lowercase() || c.is_ascii_digit() || matches!(c, '-' | '_' | '.'))
}

/// Parse a `MAJOR.MINOR.PATCH` version (no leading zeros) into its three numbers.
pub fn parse_version(version: &str) -> Option<(u64, u64, u64)> {
    let parts: Vec<&str> = version.split('.').collect();
    let [a, b, c] = parts.as_slice() else {
        return None;
    };
    let num = |s: &str| -> Option<u64> {
        let ok = !s.is_empty() && s.chars().all(|c| c.is_ascii_digit()) && (s == "0" || !s.starts_with('0'));
        if ok { s.parse().ok() } else { None }
    };
    Some((num(a)?, num(b)?, num(c)?))
}

fn non_empty(sink: &mut Sink<'_>, value: Option<Val<String>>) -> Option<String> {
    let value = value?;
    if value.value.trim().is_empty() {
        sink.report(&value.loc, "got an empty string, must say something");
        return None;
    }
    Some(value.value)
}

#[cfg(test)]
mod tests {
    use super::parse_version;

    #[test]
    fn versions_are_three_plain_numbers() {
        // common practice, no source: MAJOR.MINOR.PATCH without leading zeros
        assert_eq!(parse_version("1.10.0"), Some((1, 10, 0)));
        assert_eq!(parse_version("0.0.0"), Some((0, 0, 0)));
        for bad in [
            "1.0",
            "1.0.0.0",
            "01.0.0",
            "1.-1.0",
            "1.0.0-rc1",
            " 1.0.0",
            "1..0",
        ] {
            assert_eq!(parse_version(bad), None, "{bad}");
        }
    }
}
