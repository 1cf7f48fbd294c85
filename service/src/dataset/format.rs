//! The file format: which keys exist where. Reads a manifest or a species file into raw,
//! located values; meaning and ranges are checked afterwards by `validate`.
//!
//! See the module documentation of [`super`] for the format with an example.

use toml::de::DeTable;

use super::reader::{Loc, Sink, TableReader, Val};

/// The only manifest `format` this code reads.
pub const FORMAT_VERSION: i64 = 1;

/// Manifest `dataset.toml` as written.
#[derive(Debug)]
pub(crate) struct RawManifest {
    pub(crate) format: Option<Val<i64>>,
    pub(crate) id: Option<Val<String>>,
    pub(crate) version: Option<Val<String>>,
    pub(crate) description: Option<Val<String>>,
    pub(crate) provenance: Option<Val<String>>,
    /// `None`: every other `*.toml` file of the folder is a species file.
    pub(crate) species_files: Option<Val<Vec<Val<String>>>>,
}

/// One species file as written.
#[derive(Debug)]
pub(crate) struct RawSpecies {
    pub(crate) header: Loc,
    pub(crate) name: Option<Val<String>>,
    pub(crate) element: Option<Val<String>>,
    pub(crate) nuclear_charge: Option<Val<i64>>,
    pub(crate) ion_charge: Option<Val<i64>>,
    pub(crate) source: Option<Val<String>>,
    pub(crate) units: RawUnits,
    pub(crate) sources: Vec<(Val<String>, Val<String>)>,
    pub(crate) levels: Vec<RawLevel>,
    pub(crate) radiative: Vec<RawRadiative>,
    pub(crate) collisions: Vec<RawCollision>,
}

/// File-wide default units from `[units]`.
#[derive(Debug, Default)]
pub(crate) struct RawUnits {
    pub(crate) energy: Option<Val<String>>,
    pub(crate) temperature: Option<Val<String>>,
    pub(crate) collision_energy: Option<Val<String>>,
}

/// One `[[level]]` block.
#[derive(Debug)]
pub(crate) struct RawLevel {
    pub(crate) loc: Loc,
    pub(crate) index: Option<Val<i64>>,
    pub(crate) label: Option<Val<String>>,
    pub(crate) weight: Option<Val<f64>>,
    pub(crate) energy: Option<Val<f64>>,
    pub(crate) energy_unit: Option<Val<String>>,
    pub(crate) source: Option<Val<String>>,
}

/// One `[[radiative]]` block.
#[derive(Debug)]
pub(crate) struct RawRadiative {
    pub(crate) loc: Loc,
    pub(crate) upper: Option<Val<i64>>,
    pub(crate) lower: Option<Val<i64>>,
    pub(crate) a_per_s: Option<Val<f64>>,
    pub(crate) oscillator_strength: Option<Val<f64>>,
    pub(crate) source: Option<Val<String>>,
    pub(crate) relative_uncertainty: Option<Val<f64>>,
}

/// One `[[collision]]` block; which data keys are present decides its kind.
#[derive(Debug)]
pub(crate) struct RawCollision {
    pub(crate) loc: Loc,
    pub(crate) upper: Option<Val<i64>>,
    pub(crate) lower: Option<Val<i64>>,
    pub(crate) kind: Option<Val<String>>,
    pub(crate) source: Option<Val<String>>,
    pub(crate) relative_uncertainty: Option<Val<f64>>,
    /// Which of the three data keys are present (even when their values are bad).
    pub(crate) has_upsilon: bool,
    pub(crate) has_omega: bool,
    pub(crate) has_estimate: bool,
    pub(crate) temperatures: Option<Val<Vec<Val<f64>>>>,
    pub(crate) temperature_unit: Option<Val<String>>,
    pub(crate) upsilon: Option<Val<Vec<Val<f64>>>>,
    pub(crate) energies: Option<Val<Vec<Val<f64>>>>,
    pub(crate) energy_unit: Option<Val<String>>,
    pub(crate) energy_kind: Option<Val<String>>,
    pub(crate) omega: Option<Val<Vec<Val<f64>>>>,
    pub(crate) estimate: Option<Val<String>>,
    pub(crate) oscillator_strength: Option<Val<f64>>,
    pub(crate) strength: Option<Val<f64>>,
}

/// Parse TOML text, reporting a syntax error with its line.
fn parse<'i>(sink: &mut Sink<'_>, text: &'i str) -> Option<DeTable<'i>> {
    match DeTable::parse(text) {
        Ok(doc) => Some(doc.into_inner()),
        Err(err) => {
            let line = err.span().map(|span| sink.line_of(&span));
            sink.report_line(line, "(syntax)", format!("not valid TOML: {}", err.message()));
            None
        }
    }
}

/// Read a manifest; `None` only on a syntax error.
pub(crate) fn read_manifest(sink: &mut Sink<'_>, text: &str) -> Option<RawManifest> {
    let doc = parse(sink, text)?;
    let mut root = TableReader::new(&doc, String::new(), 1);
    let manifest = RawManifest {
        format: root.whole(sink, "format", true),
        id: root.text(sink, "id", true),
        version: root.text(sink, "version", true),
        description: root.text(sink, "description", true),
        provenance: root.text(sink, "provenance", true),
        species_files: root.texts(sink, "species_files", false),
    };
    root.finish(sink);
    Some(manifest)
}

/// Read a species file; `None` only on a syntax error.
pub(crate) fn read_species(sink: &mut Sink<'_>, text: &str) -> Option<RawSpecies> {
    let doc = parse(sink, text)?;
    let mut root = TableReader::new(&doc, String::new(), 1);

    let (header, name, element, nuclear_charge, ion_charge, source) = match root.table(sink, "species", true)
    {
        Some(mut t) => {
            let fields = (
                t.loc(),
                t.text(sink, "name", true),
                t.text(sink, "element", true),
                t.whole(sink, "nuclear_charge", true),
                t.whole(sink, "ion_charge", true),
                t.text(sink, "source", true),
            );
            t.finish(sink);
            fields
        }
        None => (
            Loc {
                line: 1,
                field: "species".into(),
            },
            None,
            None,
            None,
            None,
            None,
        ),
    };

    let units = match root.table(sink, "units", false) {
        Some(mut t) => {
            let units = RawUnits {
                energy: t.text(sink, "energy", false),
                temperature: t.text(sink, "temperature", false),
                collision_energy: t.text(sink, "collision_energy", false),
            };
            t.finish(sink);
            units
        }
        None => RawUnits::default(),
    };

    let sources = root
        .table(sink, "sources", false)
        .map(|t| t.string_entries(sink))
        .unwrap_or_default();

    let levels = root
        .tables(sink, "level")
        .into_iter()
        .map(|t| read_level(sink, t))
        .collect();
    let radiative = root
        .tables(sink, "radiative")
        .into_iter()
        .map(|t| read_radiative(sink, t))
        .collect();
    let collisions = root
        .tables(sink, "collision")
        .into_iter()
        .map(|t| read_collision(sink, t))
        .collect();
    root.finish(sink);

    Some(RawSpecies {
        header,
        name,
        element,
        nuclear_charge,
        ion_charge,
        source,
        units,
        sources,
        levels,
        radiative,
        collisions,
    })
}

fn read_level(sink: &mut Sink<'_>, mut t: TableReader<'_, '_>) -> RawLevel {
    let level = RawLevel {
        loc: t.loc(),
        index: t.whole(sink, "index", true),
        label: t.text(sink, "label", true),
        weight: t.number(sink, "weight", true),
        energy: t.number(sink, "energy", true),
        energy_unit: t.text(sink, "energy_unit", false),
        source: t.text(sink, "source", true),
    };
    t.finish(sink);
    level
}

fn read_radiative(sink: &mut Sink<'_>, mut t: TableReader<'_, '_>) -> RawRadiative {
    let line = RawRadiative {
        loc: t.loc(),
        upper: t.whole(sink, "upper", true),
        lower: t.whole(sink, "lower", true),
        a_per_s: t.number(sink, "a_per_s", true),
        oscillator_strength: t.number(sink, "oscillator_strength", false),
        source: t.text(sink, "source", true),
        relative_uncertainty: t.number(sink, "relative_uncertainty", false),
    };
    t.finish(sink);
    line
}

fn read_collision(sink: &mut Sink<'_>, mut t: TableReader<'_, '_>) -> RawCollision {
    let collision = RawCollision {
        loc: t.loc(),
        upper: t.whole(sink, "upper", true),
        lower: t.whole(sink, "lower", true),
        kind: t.text(sink, "type", true),
        source: t.text(sink, "source", true),
        relative_uncertainty: t.number(sink, "relative_uncertainty", false),
        has_upsilon: t.has("upsilon"),
        has_omega: t.has("omega"),
        has_estimate: t.has("estimate"),
        temperatures: t.numbers(sink, "temperatures", false),
        temperature_unit: t.text(sink, "temperature_unit", false),
        upsilon: t.numbers(sink, "upsilon", false),
        energies: t.numbers(sink, "energies", false),
        energy_unit: t.text(sink, "energy_unit", false),
        energy_kind: t.text(sink, "energy_kind", false),
        omega: t.numbers(sink, "omega", false),
        estimate: t.text(sink, "estimate", false),
        oscillator_strength: t.number(sink, "oscillator_strength", false),
        strength: t.number(sink, "strength", false),
    };
    t.finish(sink);
    collision
}
