//! The one path from file texts to a checked [`Dataset`], shared by on-disk and embedded data.

use std::collections::BTreeMap;

use super::MANIFEST_FILE;
use super::error::{DatasetError, Problem};
use super::format::{read_manifest, read_species};
use super::hash::content_hash;
use super::model::{Dataset, Species};
use super::reader::Sink;
use super::validate::{build_species, check_manifest};

/// Load a dataset from `(file name, file text)` pairs: one must be the manifest
/// `dataset.toml`; the species files are those it lists, or else every other `*.toml` pair.
/// Problems are reported under the given file names.
pub fn load_dataset_from_texts(files: &[(&str, &str)]) -> Result<Dataset, DatasetError> {
    assemble("", "the given files", files)
}

/// As [`load_dataset_from_texts`], with `prefix` put before every file name in problems and
/// `location` naming the whole set when the manifest is missing.
pub(crate) fn assemble(
    prefix: &str,
    location: &str,
    files: &[(&str, &str)],
) -> Result<Dataset, DatasetError> {
    let display = |name: &str| format!("{prefix}{name}");
    let mut by_name: BTreeMap<&str, &str> = BTreeMap::new();
    let mut problems: Vec<Problem> = Vec::new();
    for (name, text) in files {
        if by_name.insert(name, text).is_some() {
            problems.push(Problem {
                file: display(name),
                line: None,
                field: "(file)".into(),
                message: "the same file name was given twice".into(),
            });
        }
    }
    let Some(manifest_text) = by_name.get(MANIFEST_FILE).copied() else {
        return Err(DatasetError::MissingManifest {
            location: location.to_string(),
        });
    };

    let manifest_name = display(MANIFEST_FILE);
    let mut sink = Sink::new(&manifest_name, manifest_text);
    let raw = read_manifest(&mut sink, manifest_text);
    let listed = raw
        .as_ref()
        .and_then(|r| r.species_files.as_ref())
        .map(|f| f.value.clone());
    let manifest = raw.and_then(|r| check_manifest(&mut sink, r));

    let species_files: Vec<&str> = match &listed {
        Some(names) => names
            .iter()
            .filter_map(|n| match by_name.get_key_value(n.value.as_str()) {
                Some((&name, _)) => Some(name),
                None => {
                    sink.report(&n.loc, format!("got {:?}, no such file in the dataset", n.value));
                    None
                }
            })
            .collect(),
        None => by_name
            .keys()
            .copied()
            .filter(|n| n.ends_with(".toml") && *n != MANIFEST_FILE)
            .collect(),
    };
    if species_files.is_empty() && listed.is_none() {
        sink.report_line(
            None,
            "species_files",
            "the dataset has no species files (no other *.toml file)",
        );
    }
    problems.extend(sink.into_problems());

    let mut species: Vec<Species> = Vec::new();
    let mut names: BTreeMap<String, (String, usize)> = BTreeMap::new();
    for name in species_files {
        let file = display(name);
        let text = by_name[name];
        let mut sink = Sink::new(&file, text);
        if let Some(raw) = read_species(&mut sink, text) {
            if let Some(n) = &raw.name {
                match names.get(&n.value) {
                    Some((first_file, first_line)) => sink.report(
                        &n.loc,
                        format!(
                            "got {:?} again, species already defined in {first_file}:{first_line}",
                            n.value
                        ),
                    ),
                    None => {
                        names.insert(n.value.clone(), (file.clone(), n.loc.line));
                    }
                }
            }
            match build_species(&mut sink, raw) {
                Some(s) => species.push(s),
                // never expected: a species is only withheld together with a reported problem
                None if !sink.has_problems() => {
                    sink.report_line(None, "(file)", "species could not be built (internal error)")
                }
                None => {}
            }
        }
        problems.extend(sink.into_problems());
    }

    match manifest {
        Some(m) if problems.is_empty() => {
            species.sort_by(|a, b| a.name.cmp(&b.name));
            let mut dataset = Dataset {
                id: m.id,
                version: m.version,
                description: m.description,
                provenance: m.provenance,
                species,
                content_hash: String::new(),
            };
            dataset.content_hash = content_hash(&dataset);
            Ok(dataset)
        }
        _ => {
            // Stable order: by file, then by line (file-level problems first).
            problems.sort_by(|a, b| (&a.file, a.line).cmp(&(&b.file, b.line)));
            Err(DatasetError::Invalid { problems })
        }
    }
}
