//! One source range per transition: the table header (and so every value's BEYOND_SOURCE
//! flag) and the species description report the same range, and collision strengths that
//! start at threshold are covered down to the lowest grid temperature instead of collapsing to
//! one temperature.

mod common;

use ratewell_proto::pb::{self, catalogue_server::Catalogue};
use ratewell_proto::rule::{OutsidePolicy, flags};
use ratewell_service::api::AppState;
use ratewell_service::api::catalogue::CatalogueHandler;
use ratewell_service::dataset::{self, CollisionData};
use ratewell_service::engine::{Engine, EngineConfig, Selector};
use ratewell_service::physics::constants::KELVIN_PER_RYDBERG;
use ratewell_service::tables::source_range::LOWEST_GRID_T_K;

fn engine() -> Engine {
    let engine = Engine::new(EngineConfig::default());
    engine
        .install(common::synthetic_dataset())
        .expect("synthetic installs");
    engine.load_demo().expect("demo installs");
    engine
}

#[test]
fn threshold_tables_are_not_flagged_inside_their_range() {
    let engine = engine();
    let loaded = engine
        .select(&Selector {
            id: "synthetic".into(),
            ..Default::default()
        })
        .unwrap();
    let species = loaded.dataset.species("Sy II").unwrap();
    let tables = engine.species_tables(&loaded, "Sy II", None).unwrap();
    let mut checked = 0;
    for c in &species.collisions {
        let CollisionData::StrengthTable {
            scattered_energies_ry,
            ..
        } = &c.data
        else {
            continue;
        };
        if scattered_energies_ry[0] != 0.0 {
            continue;
        }
        checked += 1;
        let h = tables.get(c.upper, c.lower).unwrap().header().clone();
        // No weight below the data: no lower limit (the lowest any grid can start at). The
        // upper end leaves e^-5 of the Maxwellian weight above the last energy E_N: kT = E_N/5.
        assert_eq!(h.source_t_min_k, LOWEST_GRID_T_K, "{}-{}", c.upper, c.lower);
        let last = scattered_energies_ry[scattered_energies_ry.len() - 1];
        assert!((h.source_t_max_k / (last * KELVIN_PER_RYDBERG / 5.0) - 1.0).abs() < 1e-15);
        assert!(
            h.source_t_max_k > 100.0 * h.source_t_min_k,
            "range collapsed: {h:?}"
        );
        let table = tables.get(c.upper, c.lower).unwrap();
        for t in [10.0, 100.0, 1e3, 0.999 * h.source_t_max_k] {
            let v = table.evaluate(t, OutsidePolicy::Refuse).unwrap();
            assert_eq!(
                v.flags & flags::BEYOND_SOURCE,
                0,
                "{}-{} at {t} K",
                c.upper,
                c.lower
            );
        }
        let beyond = table
            .evaluate(1.01 * h.source_t_max_k, OutsidePolicy::Refuse)
            .unwrap();
        assert_eq!(beyond.flags & flags::BEYOND_SOURCE, flags::BEYOND_SOURCE);
    }
    // constant, linear (each of 4 types), two points, and incident energies from threshold
    assert_eq!(checked, 10);
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn the_description_reports_the_ranges_the_tables_carry() {
    let engine = engine();
    let handler = CatalogueHandler(AppState::new(engine.clone(), 8));
    for (id, name) in [("synthetic", "Sy II"), ("demo", "Mk III"), ("demo", "Mk II")] {
        let answer = handler
            .describe_species(tonic::Request::new(pb::DescribeSpeciesRequest {
                dataset: Some(pb::DatasetSelector {
                    id: id.into(),
                    ..Default::default()
                }),
                species: name.into(),
                energy_unit: 0,
            }))
            .await
            .expect("describe")
            .into_inner();
        let loaded = engine
            .select(&Selector {
                id: id.into(),
                ..Default::default()
            })
            .unwrap();
        let tables = engine.species_tables(&loaded, name, None).unwrap();
        let mut compared = 0;
        for info in answer.transitions.iter().filter(|t| t.has_collision_data) {
            let key = info.key.unwrap();
            let h = tables.get(key.upper, key.lower).unwrap().header();
            if h.approximate {
                assert_eq!((info.source_t_min_k, info.source_t_max_k), (0.0, 0.0));
            } else {
                assert_eq!(
                    (info.source_t_min_k, info.source_t_max_k),
                    (h.source_t_min_k, h.source_t_max_k),
                    "{name} {}-{}",
                    key.upper,
                    key.lower
                );
                assert!(
                    info.source_t_max_k > info.source_t_min_k,
                    "{name} {}-{}",
                    key.upper,
                    key.lower
                );
            }
            compared += 1;
        }
        assert_eq!(compared, tables.tables.len());
    }
}

#[test]
fn demo_strength_tables_report_their_range() {
    // Mk III 5-1 is tabulated on scattered energies from 0 to 100 eV: covered from the lowest
    // grid temperature to kT = 100 eV / 5 (1 eV = 11604.518 K, CODATA 2018).
    let demo = dataset::demo_dataset().unwrap();
    let mk3 = demo.species("Mk III").unwrap();
    let c = mk3.collisional_transition(5, 1).unwrap();
    let (lo, hi) = ratewell_service::tables::source_range_k(&c.data).unwrap();
    assert_eq!(lo, LOWEST_GRID_T_K);
    assert!((hi - 100.0 * 11_604.518 / 5.0).abs() < 1e-3 * hi, "{hi}");
}
