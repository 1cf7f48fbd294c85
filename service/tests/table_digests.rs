//! Determinism of the table precompute: the table-set digest (blake3 of every served number's
//! bits, `ratewell_proto::digest`) of each species of the demo dataset and of the real-ion
//! test data, on the default grid, must equal the digests in
//! `tests/reference/table_digests.txt`, which a release build wrote. The test runs in the test
//! profile here and under `--release` in CI, so a difference between build profiles (constant
//! folding, inlining) or thread counts shows up as a failure. Regenerate the file, only when a
//! change of the tables is intended, with
//!
//! ```text
//! cargo test --release -p ratewell-service --test table_digests -- --ignored
//! ```

use ratewell_service::dataset::{self, Dataset};
use ratewell_service::engine::EngineConfig;
use ratewell_service::tables::build_species_tables;
use std::path::Path;

const REFERENCE: &str = "tests/reference/table_digests.txt";

fn datasets() -> Vec<Dataset> {
    let manifest = Path::new(env!("CARGO_MANIFEST_DIR"));
    vec![
        dataset::demo_dataset().expect("demo loads"),
        dataset::load_folder(&manifest.join("tests/data/real-ions")).expect("real ions load"),
    ]
}

/// "id@version species digest" for every species, in dataset order.
fn digest_lines() -> Vec<String> {
    let grid = EngineConfig::default()
        .default_grid
        .to_grid()
        .expect("default grid");
    let mut lines = Vec::new();
    for d in datasets() {
        for species in &d.species {
            let tables = build_species_tables(species, grid).expect("tables build");
            lines.push(format!(
                "{}@{} {} {}",
                d.id, d.version, species.name, tables.digest
            ));
        }
    }
    lines
}

fn reference_lines() -> Vec<String> {
    let path = Path::new(env!("CARGO_MANIFEST_DIR")).join(REFERENCE);
    std::fs::read_to_string(&path)
        .unwrap_or_else(|e| panic!("{}: {e}", path.display()))
        .lines()
        .filter(|l| !l.starts_with('#') && !l.trim().is_empty())
        .map(str::to_owned)
        .collect()
}

#[test]
fn digests_equal_those_of_the_release_build() {
    let profile = if cfg!(debug_assertions) { "test" } else { "release" };
    assert_eq!(
        digest_lines(),
        reference_lines(),
        "table digests built by the {profile} profile differ from {REFERENCE} (release build)"
    );
}

#[test]
fn digests_do_not_depend_on_the_thread_count() {
    // Tables are built in parallel and collected in transition order; one thread and two must
    // give the same bits.
    let grid = EngineConfig::default()
        .default_grid
        .to_grid()
        .expect("default grid");
    let demo = dataset::demo_dataset().expect("demo loads");
    let species = demo
        .species
        .iter()
        .max_by_key(|s| s.collisions.len())
        .expect("a species");
    let with_threads = |n: usize| {
        rayon::ThreadPoolBuilder::new()
            .num_threads(n)
            .build()
            .expect("pool")
            .install(|| build_species_tables(species, grid).expect("tables build").digest)
    };
    assert_eq!(with_threads(1), with_threads(2));
}

/// Writes the reference file; run on purpose with a release build (see the module docs).
#[test]
#[ignore = "writes tests/reference/table_digests.txt; run with --release when tables change on purpose"]
fn write_reference_digests() {
    if cfg!(debug_assertions) {
        panic!("write the reference from a release build (--release)");
    }
    let mut text = String::from(
        "# Table-set digests on the default grid (10 K to 1e9 K, 20 points per decade), written by\n\
         # a release build: cargo test --release -p ratewell-service --test table_digests -- --ignored\n\
         # dataset@version species digest\n",
    );
    for line in digest_lines() {
        text.push_str(&line);
        text.push('\n');
    }
    let path = Path::new(env!("CARGO_MANIFEST_DIR")).join(REFERENCE);
    std::fs::write(&path, text).unwrap_or_else(|e| panic!("{}: {e}", path.display()));
}
