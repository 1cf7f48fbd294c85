//! Bad input never panics: truncated and garbled versions of a good species file and manifest
//! are fed to the loader. Every run must return (no panic, checked with catch_unwind), and a
//! changed file may only load if its content hash differs from the good one (or the change
//! touched nothing but comments and whitespace).

use std::panic::{AssertUnwindSafe, catch_unwind};

use ratewell_service::dataset::{DatasetError, load_dataset_from_texts};

const MANIFEST: &str = include_str!("../data/demo/dataset.toml");
const SMALL: &str = include_str!("../data/demo/mk-iii.toml");

/// The demo manifest without its species list, so that a dataset of Mk III alone loads.
fn manifest() -> String {
    MANIFEST.replace("species_files = [\"mk-ii.toml\", \"mk-iii.toml\"]", "")
}

/// Load a dataset of `manifest` and `small` (Mk III), catching any panic.
fn try_load(manifest: &str, small: &str) -> Result<String, DatasetError> {
    let result = catch_unwind(AssertUnwindSafe(|| {
        load_dataset_from_texts(&[("dataset.toml", manifest), ("mk-iii.toml", small)])
    }));
    match result {
        Ok(r) => r.map(|d| d.content_hash),
        Err(_) => panic!("the loader panicked on:\n{small}"),
    }
}

fn only_layout(removed: &str) -> bool {
    removed.lines().all(|l| {
        let t = l.trim();
        t.is_empty() || t.starts_with('#')
    })
}

/// Tiny deterministic generator (Numerical Recipes LCG) so failures reproduce.
struct Lcg(u32);
impl Lcg {
    fn next(&mut self) -> u32 {
        self.0 = self.0.wrapping_mul(1_664_525).wrapping_add(1_013_904_223);
        self.0 >> 8
    }
}

#[test]
fn every_truncation_is_handled() {
    let good = try_load(&manifest(), SMALL).expect("the good file loads");
    let mut errors = 0;
    let mut cuts = 0;
    for (cut, _) in SMALL.char_indices().step_by(3) {
        cuts += 1;
        match try_load(&manifest(), &SMALL[..cut]) {
            Err(_) => errors += 1,
            Ok(hash) => {
                // a cut between complete blocks can leave a valid, smaller file: it must not pose
                // as the original
                if !only_layout(&SMALL[cut..]) {
                    assert_ne!(hash, good, "truncation at byte {cut} loaded as the full file");
                }
            }
        }
    }
    eprintln!("truncations: {errors} of {cuts} rejected");
    // most cuts land inside a block and leave a required key missing or a value broken
    assert!(
        errors * 10 > cuts * 9,
        "only {errors} of {cuts} truncations were rejected"
    );
}

#[test]
fn garbled_bytes_are_handled() {
    let good = try_load(&manifest(), SMALL).expect("the good file loads");
    // no whitespace: a space turned into a line break inside an array is the same data
    let garbage = [
        b'x', b'"', b'[', b']', b'=', b'9', b'.', b'-', b'{', b'\'', b'#', b'@', b'\\',
    ];
    let bytes = SMALL.as_bytes();
    // positions on data lines only (a flip inside a comment legitimately changes nothing)
    let mut data_positions = Vec::new();
    let mut offset = 0;
    for line in SMALL.split_inclusive('\n') {
        if !line.contains('#') && !line.trim().is_empty() {
            data_positions.extend(offset..offset + line.trim_end().len());
        }
        offset += line.len();
    }
    let mut rng = Lcg(7);
    let mut errors = 0;
    for _ in 0..1500 {
        let at = data_positions[rng.next() as usize % data_positions.len()];
        let with = garbage[rng.next() as usize % garbage.len()];
        if bytes[at] == with {
            continue;
        }
        let mut garbled = bytes.to_vec();
        garbled[at] = with;
        let Ok(text) = String::from_utf8(garbled) else {
            continue;
        };
        match try_load(&manifest(), &text) {
            Err(_) => errors += 1,
            Ok(hash) => assert_ne!(
                hash, good,
                "byte {at} set to {:?} loaded as the original",
                with as char
            ),
        }
    }
    eprintln!("garbled bytes: {errors} of 1500 rejected");
    assert!(errors > 1000, "only {errors} garbled files were rejected");
}

#[test]
fn garbage_lines_and_odd_inputs_are_errors() {
    // a line that is no TOML at all is always a syntax error, wherever it goes
    for (i, _) in SMALL.lines().enumerate().step_by(5) {
        let mut lines: Vec<&str> = SMALL.lines().collect();
        lines[i] = "=== ??? ===";
        let text = lines.join("\n");
        assert!(
            try_load(&manifest(), &text).is_err(),
            "garbage on line {} was accepted",
            i + 1
        );
    }
    for odd in [
        "",
        "\u{0}",
        "[species",
        "[[level]]\nindex = 99999999999999999999",
        "level = 5",
        "[species]\nname = 1",
    ] {
        assert!(try_load(&manifest(), odd).is_err(), "{odd:?} was accepted");
    }
    // a truncated or empty manifest is an error too
    let m = manifest();
    let last_key = m.find("provenance").unwrap_or(m.len());
    for cut in (0..last_key).step_by(7) {
        if m.is_char_boundary(cut) {
            assert!(
                try_load(&m[..cut], SMALL).is_err(),
                "manifest cut at {cut} was accepted"
            );
        }
    }
}
