//! The repository's dataset files read as plain TOML, independently of the server's loader,
//! so tests can take their expectations (values, counts, what differs between two versions)
//! from the text itself.

use crate::data::repo_path;
use std::collections::BTreeMap;
use toml::Value;

/// One species file, parsed as TOML.
#[derive(Debug, Clone)]
pub struct SpeciesText {
    /// The species name (`[species] name`).
    pub name: String,
    doc: Value,
}

/// What a collisional transition's rate depends on, as written: its collision block, the
/// radiative block of the same pair (oscillator strength, A), and both levels' weight, energy
/// and energy unit.
#[derive(Debug, PartialEq)]
pub struct TransitionInputs<'a> {
    /// The `[[collision]]` block.
    pub collision: &'a Value,
    /// The `[[radiative]]` block of the same pair, if any.
    pub radiative: Option<&'a Value>,
    /// Upper level: weight, energy, energy unit.
    pub upper: LevelInputs<'a>,
    /// Lower level: weight, energy, energy unit.
    pub lower: LevelInputs<'a>,
}

/// A level's weight, energy and energy unit as written (label and citation do not enter rates).
pub type LevelInputs<'a> = (&'a Value, Option<&'a Value>, Option<&'a Value>);

impl SpeciesText {
    /// Reads `file` of dataset folder `folder` (relative to the repository root).
    pub fn read(folder: &str, file: &str) -> Self {
        let path = repo_path(folder).join(file);
        let text = std::fs::read_to_string(&path).unwrap_or_else(|e| panic!("read {}: {e}", path.display()));
        let doc: Value = toml::from_str(&text).expect("valid TOML");
        let name = doc["species"]["name"].as_str().expect("species.name").to_string();
        Self { name, doc }
    }

    /// The blocks of one kind (`level`, `radiative`, `collision`).
    pub fn blocks(&self, kind: &str) -> &[Value] {
        self.doc
            .get(kind)
            .and_then(Value::as_array)
            .map_or(&[], Vec::as_slice)
    }

    /// (upper, lower) of a radiative or collision block.
    pub fn pair(block: &Value) -> (u32, u32) {
        let n = |k: &str| block[k].as_integer().expect("level index") as u32;
        (n("upper"), n("lower"))
    }

    /// The collision block of a pair.
    pub fn collision(&self, upper: u32, lower: u32) -> &Value {
        self.blocks("collision")
            .iter()
            .find(|c| Self::pair(c) == (upper, lower))
            .unwrap_or_else(|| panic!("{}: no collision {upper}-{lower}", self.name))
    }

    /// The statistical weight of a level.
    pub fn weight(&self, index: u32) -> f64 {
        let (w, _, _) = self.level(index);
        w.as_float()
            .or_else(|| w.as_integer().map(|i| i as f64))
            .expect("a numeric weight")
    }

    /// A level's weight, energy and energy unit.
    pub fn level(&self, index: u32) -> LevelInputs<'_> {
        let l = self
            .blocks("level")
            .iter()
            .find(|l| l["index"].as_integer() == Some(i64::from(index)))
            .unwrap_or_else(|| panic!("{}: no level {index}", self.name));
        (&l["weight"], l.get("energy"), l.get("energy_unit"))
    }

    /// Inputs of every collisional transition, by (upper, lower).
    pub fn inputs(&self) -> BTreeMap<(u32, u32), TransitionInputs<'_>> {
        self.blocks("collision")
            .iter()
            .map(|c| {
                let (u, l) = Self::pair(c);
                let radiative = self.blocks("radiative").iter().find(|r| Self::pair(r) == (u, l));
                let inputs = TransitionInputs {
                    collision: c,
                    radiative,
                    upper: self.level(u),
                    lower: self.level(l),
                };
                ((u, l), inputs)
            })
            .collect()
    }

    /// "NAME level N" for each level whose weight, energy or unit differs in `other`.
    pub fn edited_levels(&self, other: &SpeciesText) -> Vec<String> {
        self.blocks("level")
            .iter()
            .filter_map(|l| {
                let i = l["index"].as_integer().expect("index") as u32;
                (self.level(i) != other.level(i)).then(|| format!("{} level {i}", self.name))
            })
            .collect()
    }
}

/// Numbers of an effective-collision-strength table given in K: (temperatures, upsilon).
pub fn upsilon_table(collision: &Value) -> Option<(Vec<f64>, Vec<f64>)> {
    if collision
        .get("temperature_unit")
        .is_some_and(|u| u.as_str() != Some("K"))
    {
        return None;
    }
    let numbers = |key: &str| -> Option<Vec<f64>> {
        collision
            .get(key)?
            .as_array()?
            .iter()
            .map(|v| v.as_float().or_else(|| v.as_integer().map(|i| i as f64)))
            .collect()
    };
    Some((numbers("temperatures")?, numbers("upsilon")?))
}

/// The species files of a dataset folder, in the manifest's order.
pub fn species_files(folder: &str) -> Vec<String> {
    let path = repo_path(folder).join("dataset.toml");
    let text = std::fs::read_to_string(&path).expect("read the manifest");
    let doc: Value = toml::from_str(&text).expect("valid TOML");
    doc["species_files"]
        .as_array()
        .expect("species_files")
        .iter()
        .map(|v| v.as_str().expect("a file name").to_string())
        .collect()
}

/// Number of collisional transitions (rate tables) of every species of a dataset folder.
pub fn table_count(folder: &str) -> usize {
    species_files(folder)
        .iter()
        .map(|f| SpeciesText::read(folder, f).blocks("collision").len())
        .sum()
}
