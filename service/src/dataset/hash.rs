//! Canonical content hash of a dataset: blake3 over a canonical byte form of the model.
//!
//! The canonical form is built from the parsed model, not the file text, so whitespace,
//! comments, key order, the order of blocks and the unit a value was written in (after
//! conversion) do not change it, while any change of a number does: numbers enter as the
//! exact bits of their f64 (with -0.0 folded into 0.0). Species are taken in name order,
//! levels in index order, transitions in `(upper, lower)` order; strings and lists are
//! length-prefixed so that no two different models share a byte form.

use super::model::{
    CollisionData, CollisionalTransition, Dataset, EstimateMethod, Level, RadiativeTransition, Species,
};

/// Domain tag opening the canonical form; bump it when the form changes.
const DOMAIN: &str = "ratewell dataset canonical form 1";

/// Number of hex digits in the short hash used in logs.
pub const SHORT_HASH_LEN: usize = 16;

/// blake3 hash (64 lower-case hex digits) of the canonical form of `dataset`; the
/// `content_hash` field itself is not part of the form.
pub fn content_hash(dataset: &Dataset) -> String {
    blake3::hash(&canonical_bytes(dataset)).to_hex().to_string()
}

/// The first [`SHORT_HASH_LEN`] hex digits of a hash (the whole string if shorter).
pub fn short_hash(hash: &str) -> &str {
    hash.get(..SHORT_HASH_LEN).unwrap_or(hash)
}

/// The canonical byte form that [`content_hash`] hashes.
pub fn canonical_bytes(dataset: &Dataset) -> Vec<u8> {
    let mut w = Writer(Vec::new());
    w.text(DOMAIN);
    w.text(&dataset.id);
    w.text(&dataset.version);
    w.text(&dataset.description);
    w.text(&dataset.provenance);
    let mut species: Vec<&Species> = dataset.species.iter().collect();
    species.sort_by(|a, b| a.name.cmp(&b.name));
    w.count(species.len());
    for s in species {
        write_species(&mut w, s);
    }
    w.0
}

fn write_species(w: &mut Writer, s: &Species) {
    w.text(&s.name);
    w.text(&s.element);
    w.whole(s.nuclear_charge);
    w.whole(s.ion_charge);
    w.text(&s.source);

    let mut levels: Vec<&Level> = s.levels.iter().collect();
    levels.sort_by_key(|l| l.index);
    w.count(levels.len());
    for l in levels {
        w.whole(l.index);
        w.text(&l.label);
        w.number(l.weight);
        w.number(l.energy_cm1);
        w.text(&l.source);
    }

    let mut radiative: Vec<&RadiativeTransition> = s.radiative.iter().collect();
    radiative.sort_by_key(|t| (t.upper, t.lower));
    w.count(radiative.len());
    for t in radiative {
        w.whole(t.upper);
        w.whole(t.lower);
        w.number(t.a_per_s);
        w.maybe_number(t.oscillator_strength);
        w.text(&t.source);
        w.maybe_number(t.relative_uncertainty);
    }

    let mut collisions: Vec<&CollisionalTransition> = s.collisions.iter().collect();
    collisions.sort_by_key(|t| (t.upper, t.lower));
    w.count(collisions.len());
    for t in collisions {
        w.whole(t.upper);
        w.whole(t.lower);
        w.whole(u32::from(t.kind.burgess_tully_number()));
        write_data(w, &t.data);
        w.text(&t.source);
        w.maybe_number(t.relative_uncertainty);
    }
}

fn write_data(w: &mut Writer, data: &CollisionData) {
    match data {
        CollisionData::EffectiveTable {
            temperatures_k,
            upsilon,
        } => {
            w.text("effective-table");
            w.numbers(temperatures_k);
            w.numbers(upsilon);
        }
        CollisionData::StrengthTable {
            scattered_energies_ry,
            omega,
        } => {
            w.text("strength-table");
            w.numbers(scattered_energies_ry);
            w.numbers(omega);
        }
        CollisionData::Estimate(EstimateMethod::VanRegemorter {
            oscillator_strength,
            from_radiative,
        }) => {
            w.text("van-regemorter");
            w.number(*oscillator_strength);
            w.whole(u32::from(*from_radiative));
        }
        CollisionData::Estimate(EstimateMethod::CoulombFocusing { strength }) => {
            w.text("coulomb-focusing");
            w.number(*strength);
        }
    }
}

/// Little-endian, length-prefixed writer of the canonical form.
struct Writer(Vec<u8>);

impl Writer {
    fn count(&mut self, n: usize) {
        self.0.extend_from_slice(&(n as u64).to_le_bytes());
    }
    fn text(&mut self, s: &str) {
        self.count(s.len());
        self.0.extend_from_slice(s.as_bytes());
    }
    fn whole(&mut self, n: u32) {
        self.0.extend_from_slice(&n.to_le_bytes());
    }
    fn number(&mut self, v: f64) {
        let v = if v == 0.0 { 0.0 } else { v };
        self.0.extend_from_slice(&v.to_bits().to_le_bytes());
    }
    fn maybe_number(&mut self, v: Option<f64>) {
        match v {
            Some(v) => {
                self.0.push(1);
                self.number(v);
            }
            None => self.0.push(0),
        }
    }
    fn numbers(&mut self, vs: &[f64]) {
        self.count(vs.len());
        for &v in vs {
            self.number(v);
        }
    }
}
