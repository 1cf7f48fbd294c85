//! The canonical content hash: unchanged by layout (whitespace, comments, key order, block
//! order, equivalent number spellings), changed by any single number or text.

use std::collections::BTreeSet;

use ratewell_service::dataset::{Dataset, demo_dataset, load_dataset_from_texts, short_hash};

const MANIFEST: &str = include_str!("../data/demo/dataset.toml");
const SMALL: &str = include_str!("../data/demo/mk-iii.toml");
const LARGE: &str = include_str!("../data/demo/mk-ii.toml");

fn load_small(species: &str) -> Dataset {
    let manifest = MANIFEST.replace("species_files = [\"mk-ii.toml\", \"mk-iii.toml\"]", "");
    load_dataset_from_texts(&[("dataset.toml", &manifest), ("mk-iii.toml", species)])
        .unwrap_or_else(|e| panic!("variant must load: {e}\n{species}"))
}

fn hash_small(species: &str) -> String {
    load_small(species).content_hash
}

/// Remove comments (the fixture has no '#' inside strings) and trailing blanks.
fn strip_comments(text: &str) -> String {
    text.lines()
        .map(|l| l.split('#').next().unwrap_or("").trim_end())
        .filter(|l| !l.is_empty())
        .collect::<Vec<_>>()
        .join("\n")
        + "\n"
}

/// Split a comment-free file into its tables: each starts at a `[` header line.
fn blocks(text: &str) -> Vec<Vec<String>> {
    let mut out: Vec<Vec<String>> = Vec::new();
    for line in text.lines() {
        if line.starts_with('[') || out.is_empty() {
            out.push(Vec::new());
        }
        if let Some(last) = out.last_mut() {
            last.push(line.to_string());
        }
    }
    out
}

#[test]
fn hash_is_hex_and_short_form_is_its_prefix() {
    // blake3 digests are 32 bytes: 64 hex digits (blake3 specification)
    let d = demo_dataset().expect("demo loads");
    assert_eq!(d.content_hash.len(), 64);
    assert!(
        d.content_hash
            .chars()
            .all(|c| c.is_ascii_hexdigit() && !c.is_ascii_uppercase())
    );
    assert_eq!(d.short_hash(), &d.content_hash[..16]);
    assert_eq!(short_hash(&d.content_hash), d.short_hash());
}

#[test]
fn whitespace_and_comments_do_not_change_the_hash() {
    let base = hash_small(SMALL);
    let spaced: String = SMALL
        .lines()
        .map(|l| {
            if l.contains(" = ") && !l.starts_with('#') {
                format!("   {}   ", l.replacen(" = ", "   =\t", 1))
            } else {
                l.to_string()
            }
        })
        .collect::<Vec<_>>()
        .join("\n\n");
    assert_eq!(hash_small(&spaced), base);
    let commented: String = SMALL
        .lines()
        .map(|l| {
            if l.starts_with('[') || l.is_empty() || l.starts_with('#') {
                format!("# note\n{l}")
            } else {
                format!("{l}  # why")
            }
        })
        .collect::<Vec<_>>()
        .join("\n");
    assert_eq!(hash_small(&commented), base);
    assert_eq!(hash_small(&strip_comments(SMALL)), base);
}

#[test]
fn key_order_and_block_order_do_not_change_the_hash() {
    let base = hash_small(SMALL);
    let mut tables = blocks(&strip_comments(SMALL));
    // reverse the keys inside every table, then the order of the tables themselves
    for table in &mut tables {
        table[1..].reverse();
    }
    tables.reverse();
    let reordered: String = tables
        .iter()
        .map(|t| t.join("\n"))
        .collect::<Vec<_>>()
        .join("\n\n")
        + "\n";
    assert_ne!(reordered, strip_comments(SMALL));
    assert_eq!(hash_small(&reordered), base);
}

#[test]
fn equivalent_spellings_do_not_change_the_hash() {
    let base = hash_small(SMALL);
    // TOML 1.0: 1.9e-3 and 0.0019 are the same float; 1_520.4 is 1520.4; integers widen to floats
    let respelled = SMALL
        .replacen("a_per_s = 1.9e-3", "a_per_s = 0.0019", 1)
        .replacen("energy = 1520.4", "energy = 1_520.4", 1)
        .replacen("weight = 5\nenergy = 3310.9", "weight = 5.0\nenergy = 3310.9", 1)
        .replacen(
            "temperatures = [2000.0, 5000.0, 10000.0, 20000.0, 50000.0]",
            "temperatures = [2e3, 5_000, 1e4, 20000, 5.0e4]",
            1,
        );
    assert_ne!(respelled, SMALL);
    assert_eq!(hash_small(&respelled), base);
}

#[test]
fn an_inline_array_of_tables_equals_level_blocks() {
    let base = hash_small(SMALL);
    // TOML 1.0: `level = [{...}, ...]` at the root and `[[level]]` blocks build the same array
    let plain = strip_comments(SMALL);
    let mut rest = Vec::new();
    let mut inline = Vec::new();
    for table in blocks(&plain) {
        if table[0] == "[[level]]" {
            inline.push(format!("{{ {} }}", table[1..].join(", ")));
        } else {
            rest.push(table.join("\n"));
        }
    }
    assert_eq!(inline.len(), 5);
    let text = format!(
        "level = [\n  {},\n]\n\n{}\n",
        inline.join(",\n  "),
        rest.join("\n\n")
    );
    assert!(!text.contains("[[level]]"));
    assert_eq!(hash_small(&text), base);
}

#[test]
fn species_file_order_does_not_change_the_hash() {
    let a = load_dataset_from_texts(&[
        ("dataset.toml", MANIFEST),
        ("mk-ii.toml", LARGE),
        ("mk-iii.toml", SMALL),
    ]);
    let listed_other_way = MANIFEST.replace(
        "[\"mk-ii.toml\", \"mk-iii.toml\"]",
        "[\"mk-iii.toml\", \"mk-ii.toml\"]",
    );
    let b = load_dataset_from_texts(&[
        ("mk-iii.toml", SMALL),
        ("dataset.toml", &listed_other_way),
        ("mk-ii.toml", LARGE),
    ]);
    assert_eq!(a.expect("loads").content_hash, b.expect("loads").content_hash);
}

/// Keys whose values are indices or charges: perturbing them changes structure, not data.
const STRUCTURAL: [&str; 6] = [
    "index",
    "upper",
    "lower",
    "nuclear_charge",
    "ion_charge",
    "format",
];

/// Byte ranges of every number on the value side of `key = value` lines outside comments
/// and strings, skipping structural keys.
fn number_spans(text: &str) -> Vec<(usize, usize)> {
    let mut spans = Vec::new();
    let mut offset = 0;
    for line in text.split_inclusive('\n') {
        let code = line.split('#').next().unwrap_or("");
        if let Some(eq) = code.find('=') {
            let key = code[..eq].trim();
            if !STRUCTURAL.contains(&key) && !code.trim_start().starts_with('[') {
                let bytes = code.as_bytes();
                let mut i = eq + 1;
                let mut in_string = false;
                while i < bytes.len() {
                    let c = bytes[i];
                    if c == b'"' {
                        in_string = !in_string;
                        i += 1;
                        continue;
                    }
                    let starts = !in_string
                        && (c.is_ascii_digit()
                            || (c == b'-' && bytes.get(i + 1).is_some_and(u8::is_ascii_digit)))
                        && !bytes[i - 1].is_ascii_alphanumeric();
                    if starts {
                        let start = i;
                        while i < bytes.len()
                            && (bytes[i].is_ascii_alphanumeric() || b"+-._".contains(&bytes[i]))
                        {
                            i += 1;
                        }
                        spans.push((offset + start, offset + i));
                        continue;
                    }
                    i += 1;
                }
            }
        }
        offset += line.len();
    }
    spans
}

#[test]
fn every_single_number_changes_the_hash() {
    let base = hash_small(SMALL);
    let spans = number_spans(SMALL);
    // the file holds 90 data numbers (level energies and weights, A and f values,
    // uncertainties, table entries, one strength); make sure the scanner found them
    assert!(spans.len() >= 90, "found only {} numbers", spans.len());
    let mut hashes = BTreeSet::new();
    for &(start, end) in &spans {
        let token = &SMALL[start..end];
        let value: f64 = token
            .replace('_', "")
            .parse()
            .unwrap_or_else(|_| panic!("not a number: {token}"));
        // relative 1e-9 (or 1e-9 absolute for zero): far above f64 resolution, far below data precision
        let nudged = if value == 0.0 { 1e-9 } else { value * (1.0 + 1e-9) };
        assert_ne!(nudged.to_bits(), value.to_bits());
        let text = format!("{}{:e}{}", &SMALL[..start], nudged, &SMALL[end..]);
        let h = hash_small(&text);
        assert_ne!(
            h, base,
            "changing {token} at byte {start} did not change the hash"
        );
        hashes.insert(h);
    }
    // and every perturbation gives its own hash
    assert_eq!(hashes.len(), spans.len());
}

#[test]
fn every_number_of_the_large_species_changes_the_hash() {
    let manifest = MANIFEST;
    let load = |large: &str| {
        load_dataset_from_texts(&[
            ("dataset.toml", manifest),
            ("mk-ii.toml", large),
            ("mk-iii.toml", SMALL),
        ])
        .map(|d| d.content_hash)
    };
    let base = load(LARGE).expect("demo loads");
    let spans = number_spans(LARGE);
    assert!(spans.len() > 4000, "found only {} numbers", spans.len());
    // every 97th number (a deterministic sample across all block kinds) keeps the run short
    for &(start, end) in spans.iter().step_by(97) {
        let token = &LARGE[start..end];
        let value: f64 = token.parse().unwrap_or_else(|_| panic!("not a number: {token}"));
        let nudged = if value == 0.0 { 1e-9 } else { value * (1.0 + 1e-9) };
        let text = format!("{}{:e}{}", &LARGE[..start], nudged, &LARGE[end..]);
        let h = load(&text).unwrap_or_else(|e| panic!("nudging {token} broke the file: {e}"));
        assert_ne!(
            h, base,
            "changing {token} at byte {start} did not change the hash"
        );
    }
}

#[test]
fn texts_and_metadata_change_the_hash() {
    let base = hash_small(SMALL);
    assert_ne!(
        hash_small(&SMALL.replacen("label = \"4p2 1D2\"", "label = \"4p2 1D\"", 1)),
        base
    );
    assert_ne!(
        hash_small(&SMALL.replacen("type = \"allowed\"", "type = \"weak-allowed\"", 1)),
        base
    );
    assert_ne!(
        hash_small(&SMALL.replacen(
            "invented = \"INVENTED numbers",
            "invented = \"INVENTED  numbers",
            1
        )),
        base
    );
    let other_version = MANIFEST
        .replace("species_files = [\"mk-ii.toml\", \"mk-iii.toml\"]", "")
        .replace("1.0.0", "1.0.1");
    let d =
        load_dataset_from_texts(&[("dataset.toml", &other_version), ("mk-iii.toml", SMALL)]).expect("loads");
    assert_ne!(d.content_hash, base);
}

#[test]
fn same_value_in_another_unit_spelling_keeps_the_hash_only_when_bits_agree() {
    // a level given as 1 Ry and as R_inf/100 = 109737.31568160 cm-1 (CODATA 2018) is the same
    // energy up to rounding; the hash follows the exact f64 bits after conversion
    let base = load_small(SMALL);
    let in_ry = SMALL.replacen(
        "energy = 16830.2\n",
        &format!(
            "energy = {:e}\nenergy_unit = \"Ry\"\n",
            16830.2 / 109_737.315_681_60
        ),
        1,
    );
    let converted = load_small(&in_ry);
    let e_ry = converted.species[0]
        .level(4)
        .map(|l| l.energy_cm1)
        .unwrap_or(f64::NAN);
    assert!((e_ry - 16830.2).abs() < 1e-9, "{e_ry}");
    assert_eq!(
        e_ry.to_bits() == 16830.2f64.to_bits(),
        converted.content_hash == base.content_hash
    );
}
