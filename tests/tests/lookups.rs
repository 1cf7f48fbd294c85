//! LookupRates end to end: the server's answer equals direct evaluation of the same tables
//! with the library (engine and rule, no gRPC), both directions obey detailed balance and the
//! published rate formula, and units (eV in, m^3/s out) convert as the SI defines them.

use approx::assert_relative_eq;
use ratewell_e2e::codata::{OSTERBROCK_FERLAND_Q_CONSTANT, kelvin_per_ev, kelvin_per_inverse_cm};
use ratewell_e2e::dataset_text::{SpeciesText, upsilon_table};
use ratewell_e2e::requests::{DEMO, MK_II, MK_III, demo, key, log_spaced, lookup};
use ratewell_e2e::{TestServer, test_config};
use ratewell_proto::pb;
use ratewell_proto::rule::{Direction, OutsidePolicy};
use ratewell_service::engine::lookup::LookupQuery;
use ratewell_service::engine::units::{RateUnit, TemperatureUnit};
use ratewell_service::engine::{Engine, Selector};
use ratewell_service::server::build_engine;

/// An engine built the way the server builds its own, from the same configuration.
async fn direct_engine() -> Engine {
    tokio::task::spawn_blocking(|| build_engine(&test_config()).expect("demo engine"))
        .await
        .expect("engine build task")
}

fn newest_demo() -> Selector {
    Selector {
        id: DEMO.to_string(),
        version: None,
        expected_hash: None,
    }
}

/// Temperatures across the default grid (10 K .. 1e9 K): off-knot values, the grid ends, and
/// the knots themselves.
fn temperatures_across_the_grid() -> Vec<f64> {
    let mut t = log_spaced(10.0, 1e9, 181);
    t.extend((0..161).map(|i| 10f64.powf(1.0 + 0.05 * i as f64)));
    t
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn server_lookup_equals_direct_library_evaluation_bit_for_bit() {
    let engine = direct_engine().await;
    let server = TestServer::start().await;
    let temps = temperatures_across_the_grid();
    for species in [MK_III, MK_II] {
        let answer = server
            .rates()
            .lookup_rates(lookup(species, temps.clone()))
            .await
            .expect("lookup")
            .into_inner();
        let loaded = engine.select(&newest_demo()).expect("demo loaded");
        let stamp = answer.stamp.clone().expect("every answer carries a stamp");
        assert_eq!((stamp.id.as_str(), stamp.version.as_str()), (DEMO, "1.0.0"));
        assert_eq!(stamp.content_hash, loaded.stamp.content_hash);
        assert_eq!(stamp.content_hash.len(), 64, "hex blake3 hash");

        let tables = engine
            .species_tables(&loaded, species, None)
            .expect("species tables");
        assert_eq!(answer.transitions.len(), tables.tables.len());
        assert_eq!(answer.temperature_count as usize, temps.len());
        let n = temps.len();
        for (t, k) in answer.transitions.iter().enumerate() {
            let table = tables
                .get(k.upper, k.lower)
                .expect("a table per answered transition");
            for (j, &tk) in temps.iter().enumerate() {
                let v = table
                    .evaluate(tk, OutsidePolicy::Refuse)
                    .expect("inside the grid");
                let i = t * n + j;
                assert_eq!(
                    answer.deexcitation[i].to_bits(),
                    v.deexcitation_cm3_s.to_bits(),
                    "{species} {}-{} q_ul at {tk} K",
                    k.upper,
                    k.lower
                );
                assert_eq!(
                    answer.excitation[i].to_bits(),
                    v.excitation_cm3_s.to_bits(),
                    "{species} {}-{} q_lu at {tk} K",
                    k.upper,
                    k.lower
                );
                assert_eq!(answer.flags[i], v.flags);
            }
        }

        // The engine's own batched lookup (what the handler delegates to) gives the same arrays.
        let direct = engine
            .lookup(&LookupQuery {
                selector: newest_demo(),
                species: species.to_string(),
                transitions: Vec::new(),
                temperatures: temps.clone(),
                temperature_unit: TemperatureUnit::Kelvin,
                direction: Direction::Both,
                rate_unit: RateUnit::CubicCentimetrePerSecond,
                outside: OutsidePolicy::Refuse,
                grid: None,
            })
            .expect("direct lookup");
        let bits = |v: &[f64]| v.iter().map(|x| x.to_bits()).collect::<Vec<_>>();
        assert_eq!(bits(&direct.excitation), bits(&answer.excitation));
        assert_eq!(bits(&direct.deexcitation), bits(&answer.deexcitation));
        assert_eq!(direct.flags, answer.flags);
        assert_eq!(direct.cautions, answer.cautions);
    }
    server.shutdown().await.expect("clean stop");
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn deexcitation_matches_the_published_formula_at_source_temperatures() {
    let server = TestServer::start().await;
    let mut req = lookup(MK_III, vec![1.0e4]);
    req.transitions = vec![key(2, 1), key(3, 1), key(3, 2)];
    let answer = server
        .rates()
        .lookup_rates(req)
        .await
        .expect("lookup")
        .into_inner();
    // Upsilon at 10^4 K and g_u as written in service/data/demo/mk-iii.toml (INVENTED numbers;
    // 10^4 K is one of the file's own temperatures, so no interpolation of the source is
    // involved). q_ul = 8.629e-6 Upsilon / (g_u sqrt T): Osterbrock & Ferland (2006), eq. 3.20.
    // The printed constant has four digits, hence the 1e-4 tolerance.
    let text = SpeciesText::read("service/data/demo", "mk-iii.toml");
    for (i, k) in answer.transitions.iter().enumerate() {
        let (temps, upsilon) =
            upsilon_table(text.collision(k.upper, k.lower)).expect("an effective table in K");
        let at = temps
            .iter()
            .position(|&t| t == 1.0e4)
            .expect("10^4 K in the file");
        let expected =
            OSTERBROCK_FERLAND_Q_CONSTANT * upsilon[at] / (text.weight(k.upper) * 1.0e4_f64.sqrt());
        assert_relative_eq!(answer.deexcitation[i], expected, max_relative = 1e-4);
    }
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn excitation_and_deexcitation_obey_detailed_balance() {
    let server = TestServer::start().await;
    let described = server
        .catalogue()
        .describe_species(pb::DescribeSpeciesRequest {
            dataset: Some(demo()),
            species: MK_III.to_string(),
            energy_unit: pb::EnergyUnit::InverseCentimetre as i32,
        })
        .await
        .expect("describe")
        .into_inner();
    let level = |i: u32| {
        described
            .levels
            .iter()
            .find(|l| l.index == i)
            .expect("level listed")
    };
    let temps = log_spaced(2.0e3, 1.0e7, 23);
    let answer = server
        .rates()
        .lookup_rates(lookup(MK_III, temps.clone()))
        .await
        .expect("lookup")
        .into_inner();
    let tables = server
        .rates()
        .fetch_tables(pb::FetchTablesRequest {
            dataset: Some(demo()),
            species: MK_III.to_string(),
            grid: None,
        })
        .await
        .expect("tables")
        .into_inner();
    assert_eq!(answer.transitions.len(), 10, "every pair of the 5 levels");
    let c2 = kelvin_per_inverse_cm();
    for (t, k) in answer.transitions.iter().enumerate() {
        let (upper, lower) = (level(k.upper), level(k.lower));
        let delta_e_k = (upper.energy - lower.energy) * c2;
        // The table's excitation energy is the level energy difference (second radiation
        // constant c2 = h c / k, CODATA 2018).
        let table = tables
            .tables
            .iter()
            .find(|x| x.key == Some(*k))
            .expect("a table per transition");
        assert_relative_eq!(table.excitation_energy_k, delta_e_k, max_relative = 1e-12);
        assert_eq!(table.g_upper, upper.statistical_weight);
        assert_eq!(table.g_lower, lower.statistical_weight);
        for (j, &tk) in temps.iter().enumerate() {
            let i = t * temps.len() + j;
            // Detailed balance: q_lu / q_ul = (g_u / g_l) exp(-dE / kT), Osterbrock & Ferland
            // (2006), eq. 3.21. Both sides are computed in double precision from the same
            // inputs, so only rounding separates them.
            let expected = upper.statistical_weight / lower.statistical_weight * (-delta_e_k / tk).exp();
            assert_relative_eq!(
                answer.excitation[i] / answer.deexcitation[i],
                expected,
                max_relative = 1e-10
            );
            assert!(answer.excitation[i] > 0.0 && answer.deexcitation[i] > 0.0);
        }
    }
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn directions_select_which_arrays_are_filled() {
    let server = TestServer::start().await;
    let temps = log_spaced(1e3, 1e6, 11);
    let both = server
        .rates()
        .lookup_rates(lookup(MK_III, temps.clone()))
        .await
        .expect("both")
        .into_inner();
    assert_eq!(both.excitation.len(), 10 * temps.len());
    assert_eq!(both.deexcitation.len(), 10 * temps.len());

    let mut req = lookup(MK_III, temps.clone());
    req.direction = pb::Direction::Excitation as i32;
    let up = server.rates().lookup_rates(req).await.expect("up").into_inner();
    assert_eq!(up.excitation, both.excitation);
    assert!(up.deexcitation.is_empty(), "a direction not asked for is empty");
    assert_eq!(up.flags, both.flags);

    let mut req = lookup(MK_III, temps.clone());
    req.direction = pb::Direction::Deexcitation as i32;
    let down = server.rates().lookup_rates(req).await.expect("down").into_inner();
    assert_eq!(down.deexcitation, both.deexcitation);
    assert!(down.excitation.is_empty());

    // Chosen transitions come back in the order asked, as rows of the full answer.
    let mut req = lookup(MK_III, temps.clone());
    req.transitions = vec![key(5, 4), key(2, 1)];
    let some = server.rates().lookup_rates(req).await.expect("some").into_inner();
    assert_eq!(some.transitions, vec![key(5, 4), key(2, 1)]);
    let n = temps.len();
    for (row, k) in some.transitions.iter().enumerate() {
        let full_row = both
            .transitions
            .iter()
            .position(|x| x == k)
            .expect("listed in the full answer");
        assert_eq!(
            some.deexcitation[row * n..(row + 1) * n],
            both.deexcitation[full_row * n..(full_row + 1) * n]
        );
        assert_eq!(
            some.excitation[row * n..(row + 1) * n],
            both.excitation[full_row * n..(full_row + 1) * n]
        );
    }
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn temperatures_in_ev_and_rates_in_cubic_metres_convert_exactly() {
    let server = TestServer::start().await;
    let temps_k = log_spaced(2e3, 5e5, 17);
    let reference = server
        .rates()
        .lookup_rates(lookup(MK_II, temps_k.clone()))
        .await
        .expect("K, cm^3/s")
        .into_inner();
    assert_eq!(reference.rate_unit, pb::RateUnit::CubicCentimetrePerSecond as i32);

    // kT in eV = T / (e / k), CODATA 2018 exact constants.
    let temps_ev: Vec<f64> = temps_k.iter().map(|t| t / kelvin_per_ev()).collect();
    let mut req = lookup(MK_II, temps_ev);
    req.temperature_unit = pb::TemperatureUnit::ElectronVolt as i32;
    req.rate_unit = pb::RateUnit::CubicMetrePerSecond as i32;
    let si = server
        .rates()
        .lookup_rates(req)
        .await
        .expect("eV, m^3/s")
        .into_inner();
    assert_eq!(si.rate_unit, pb::RateUnit::CubicMetrePerSecond as i32);
    assert_eq!(si.transitions, reference.transitions);
    assert_eq!(si.flags, reference.flags);
    for (a, b) in si.deexcitation.iter().zip(&reference.deexcitation) {
        // 1 cm^3 = 1e-6 m^3 (SI); the eV -> K round trip moves T by at most an ulp or two.
        assert_relative_eq!(*a, b * 1e-6, max_relative = 1e-12);
    }
    for (a, b) in si.excitation.iter().zip(&reference.excitation) {
        // exp(-dE/kT) magnifies a relative change of T by dE/kT (at most ~60 here).
        assert_relative_eq!(*a, b * 1e-6, max_relative = 1e-11);
    }
}
