//! The served interpolation-error bound of every table covers the error found by dense
//! sampling (50 points per grid interval) against direct evaluation of the source data, for
//! every data form and transition type: on the demo dataset, the real-ion test data and a
//! synthetic species whose Maxwellian averages have closed forms.

mod common;

use ratewell_proto::rule::{OutsidePolicy, RateTable};
use ratewell_service::dataset::{self, CollisionData, Dataset, Species};
use ratewell_service::engine::EngineConfig;
use ratewell_service::tables::build::grid_temperature_k;
use ratewell_service::tables::sources::transition_source;
use ratewell_service::tables::{UpsilonSource, build_species_tables};
use rayon::prelude::*;
use std::path::Path;

/// Sampling points per grid interval, at (k + 1/2) / 50.
const DENSE_POINTS: usize = 50;

/// Largest relative difference between the table as served and the source, over 50 points of
/// every grid interval.
fn dense_error(table: &RateTable, source: &dyn UpsilonSource) -> f64 {
    let grid = *table.grid();
    let mut worst: f64 = 0.0;
    for i in 0..grid.knots() - 1 {
        for k in 0..DENSE_POINTS {
            let t_k = grid_temperature_k(&grid, i as f64 + (k as f64 + 0.5) / DENSE_POINTS as f64);
            let served = table
                .evaluate(t_k, OutsidePolicy::Refuse)
                .expect("inside the grid")
                .upsilon;
            let direct = source.upsilon(t_k).expect("source evaluates");
            worst = worst.max(((served - direct) / direct).abs());
        }
    }
    worst
}

fn form(data: &CollisionData) -> &'static str {
    match data {
        CollisionData::EffectiveTable { .. } => "upsilon table",
        CollisionData::StrengthTable { .. } => "omega table",
        CollisionData::Estimate(_) => "estimate",
    }
}

/// Checks every table of `species`; returns (form, type, dense error, bound) per table.
fn check_species(species: &Species) -> Vec<(String, f64, f64)> {
    let grid = EngineConfig::default()
        .default_grid
        .to_grid()
        .expect("default grid");
    let tables = build_species_tables(species, grid).expect("tables build");
    let range = (grid.t_min_k(), grid.t_max_k());
    species
        .collisions
        .par_iter()
        .zip(tables.tables.par_iter())
        .map(|(transition, table)| {
            let source = transition_source(species, transition, range).expect("source");
            let dense = dense_error(table, source.source.as_ref());
            let bound = table.max_interpolation_error();
            let what = format!(
                "{} {}-{} {} {}",
                species.name,
                transition.upper,
                transition.lower,
                form(&transition.data),
                transition.kind.as_str()
            );
            assert!(
                bound >= dense,
                "{what}: served bound {bound:.3e} below the dense-sampling error {dense:.3e}"
            );
            // ... and means something: within 10 % of it (plus the rounding allowance).
            assert!(
                bound <= 1.1 * dense + 1e-13,
                "{what}: served bound {bound:.3e} far above the dense-sampling error {dense:.3e}"
            );
            (what, dense, bound)
        })
        .collect()
}

fn report(name: &str, rows: &[(String, f64, f64)]) {
    let worst_ratio = rows
        .iter()
        .filter(|r| r.1 > 1e-12)
        .map(|r| r.2 / r.1)
        .fold(0.0, f64::max);
    let largest = rows.iter().map(|r| r.2).fold(0.0, f64::max);
    eprintln!(
        "{name}: {} tables, largest bound {largest:.2e}, bound / dense error at most {worst_ratio:.2}",
        rows.len()
    );
}

#[test]
fn bounds_cover_dense_sampling_on_the_demo_data() {
    let demo = dataset::demo_dataset().expect("demo loads");
    for species in &demo.species {
        let rows = check_species(species);
        report(&species.name, &rows);
    }
}

#[test]
fn bounds_cover_dense_sampling_on_the_real_ions() {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/data/real-ions");
    let real: Dataset = dataset::load_folder(&dir).expect("real ions load");
    for species in &real.species {
        let rows = check_species(species);
        report(&species.name, &rows);
    }
}

#[test]
fn bounds_cover_dense_sampling_for_every_form_and_type() {
    let synthetic = common::synthetic_dataset();
    let species = &synthetic.species[0];
    let rows = check_species(species);
    report(&species.name, &rows);
    // Every form with every type is present (common::blocks).
    for kind in common::TYPES {
        for f in ["upsilon table", "omega table", "estimate"] {
            assert!(
                rows.iter().any(|r| r.0.ends_with(&format!("{f} {kind}"))),
                "no {f} of type {kind}"
            );
        }
    }
    for r in &rows {
        eprintln!("  {}: dense {:.3e}, bound {:.3e}", r.0, r.1, r.2);
    }
}

#[test]
fn closed_form_averages_are_reproduced_by_source_and_table() {
    // Constant Omega averages to the same constant; Omega = a + b E_f up to E_N and constant
    // beyond averages to a + b kT (1 - e^(-E_N/kT)) (common::linear_omega_average, derived
    // there). Both are forbidden-type tables from threshold in the synthetic species.
    let synthetic = common::synthetic_dataset();
    let species = &synthetic.species[0];
    let grid = EngineConfig::default()
        .default_grid
        .to_grid()
        .expect("default grid");
    let tables = build_species_tables(species, grid).expect("tables build");
    let range = (grid.t_min_k(), grid.t_max_k());
    type ClosedForm = fn(f64) -> f64;
    let cases: [(common::Shape, ClosedForm); 2] = [
        (common::Shape::ConstantOmegaFromThreshold, |_| {
            common::CONSTANT_OMEGA
        }),
        (
            common::Shape::LinearOmegaFromThreshold,
            common::linear_omega_average,
        ),
    ];
    for (shape, exact) in cases {
        let (upper, lower) = common::pair_of(shape, "forbidden").expect("the block");
        let transition = species
            .collisional_transition(upper, lower)
            .expect("the transition");
        let source = transition_source(species, transition, range).expect("source");
        let table = tables.get(upper, lower).expect("table");
        let bound = table.max_interpolation_error();
        for i in 0..grid.knots() - 1 {
            for k in 0..DENSE_POINTS {
                let t_k = grid_temperature_k(&grid, i as f64 + (k as f64 + 0.5) / DENSE_POINTS as f64);
                let want = exact(t_k);
                let direct = source.source.upsilon(t_k).expect("direct");
                // The average of a piecewise-linear Omega is exact: a few roundings per segment.
                assert!(
                    ((direct - want) / want).abs() < 1e-13,
                    "{shape:?} at {t_k} K: {direct} vs {want}"
                );
                let served = table
                    .evaluate(t_k, OutsidePolicy::Refuse)
                    .expect("inside")
                    .upsilon;
                assert!(
                    ((served - want) / want).abs() <= bound + 1e-13,
                    "{shape:?} at {t_k} K"
                );
            }
        }
    }
}
