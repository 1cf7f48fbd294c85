//! SolvePopulations end to end: the server's answer equals `Engine::solve` called directly,
//! fractions sum to 1, points follow the pairs and grid layouts, and the answer agrees with
//! textbook relations computed here from the catalogue and from rate lookups (Boltzmann limit,
//! line emissivity, critical density).

use approx::assert_relative_eq;
use ratewell_e2e::codata::{kelvin_per_inverse_cm, photon_energy_j};
use ratewell_e2e::requests::{DEMO, MK_II, MK_III, demo, log_spaced, lookup, solve};
use ratewell_e2e::{TestServer, test_config};
use ratewell_proto::pb;
use ratewell_service::engine::solve::SolveQuery;
use ratewell_service::engine::{Engine, Selector};
use ratewell_service::server::build_engine;

async fn direct_engine() -> Engine {
    tokio::task::spawn_blocking(|| build_engine(&test_config()).expect("demo engine"))
        .await
        .expect("engine build task")
}

async fn describe(server: &TestServer, species: &str) -> pb::DescribeSpeciesResponse {
    server
        .catalogue()
        .describe_species(pb::DescribeSpeciesRequest {
            dataset: Some(demo()),
            species: species.to_string(),
            energy_unit: pb::EnergyUnit::InverseCentimetre as i32,
        })
        .await
        .expect("describe")
        .into_inner()
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn server_solve_equals_engine_solve_bit_for_bit() {
    let engine = direct_engine().await;
    let server = TestServer::start().await;
    let temps = vec![3e3, 1e4, 4e4];
    let dens = vec![1e1, 1e4, 1e7, 1e10];
    for species in [MK_III, MK_II] {
        let answer = server
            .populations()
            .solve_populations(solve(species, temps.clone(), dens.clone(), true))
            .await
            .expect("solve")
            .into_inner();
        let direct = engine
            .solve(&SolveQuery::grid(
                Selector::newest(DEMO),
                species,
                temps.clone(),
                dens.clone(),
            ))
            .expect("direct solve");
        let stamp = answer.stamp.clone().expect("stamp");
        assert_eq!(stamp.content_hash, direct.stamp.content_hash);
        assert_eq!(answer.level_count as usize, direct.level_count);
        assert_eq!(answer.points.len(), direct.points.len());
        assert_eq!(answer.cautions, direct.cautions);
        let bits = |v: &[f64]| v.iter().map(|x| x.to_bits()).collect::<Vec<_>>();
        for (p, (w, d)) in answer.points.iter().zip(&direct.points).enumerate() {
            assert_eq!(bits(&w.fractions), bits(&d.fractions), "{species} point {p}");
            assert_eq!(w.radiated_power.to_bits(), d.radiated_power.to_bits());
            assert_eq!(w.residual.to_bits(), d.residual.to_bits());
            assert_eq!(w.flags, d.flags);
            assert_eq!(w.lines.len(), d.lines.len());
            for (a, b) in w.lines.iter().zip(&d.lines) {
                let k = a.key.expect("line key");
                assert_eq!((k.upper, k.lower), (b.upper, b.lower));
                assert_eq!(a.emissivity.to_bits(), b.emissivity.to_bits());
            }
            let n = direct.level_count;
            assert_eq!(
                bits(&answer.critical_densities_per_cm3[p * n..(p + 1) * n]),
                bits(&d.critical_densities_per_cm3)
            );
        }
    }
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn fractions_sum_to_one_in_grid_and_pairs_layouts() {
    let server = TestServer::start().await;
    let temps = vec![5e3, 1e4, 2e4];
    let dens = vec![1e2, 1e4, 1e6, 1e8];
    let grid = server
        .populations()
        .solve_populations(solve(MK_II, temps.clone(), dens.clone(), true))
        .await
        .expect("grid")
        .into_inner();
    assert_eq!(grid.level_count, 34);
    assert_eq!(grid.points.len(), temps.len() * dens.len());
    assert_eq!(
        grid.critical_densities_per_cm3.len(),
        grid.points.len() * 34,
        "point-major, one per level"
    );
    for (p, point) in grid.points.iter().enumerate() {
        // Temperature-major: point it * n_d + id is (temps[it], dens[id]).
        assert_eq!(point.temperature_k, temps[p / dens.len()]);
        assert_eq!(point.density_per_cm3, dens[p % dens.len()]);
        assert_eq!(point.fractions.len(), 34);
        let sum: f64 = point.fractions.iter().sum();
        // Fractions of one ion: sum_j n_j = 1 (the normalisation of the balance equations);
        // 34 terms of rounding allow a few 1e-15.
        assert!((sum - 1.0).abs() < 1e-13, "point {p}: sum {sum}");
        assert!(point.fractions.iter().all(|&f| f >= 0.0));
        assert!(point.residual < 1e-10, "point {p}: residual {}", point.residual);
        // The ground level has no radiative decay, so its critical density is reported as 0.
        assert_eq!(grid.critical_densities_per_cm3[p * 34], 0.0);
    }

    let pairs = server
        .populations()
        .solve_populations(solve(MK_III, temps.clone(), dens[..3].to_vec(), false))
        .await
        .expect("pairs")
        .into_inner();
    assert_eq!(pairs.points.len(), 3);
    for (i, point) in pairs.points.iter().enumerate() {
        assert_eq!((point.temperature_k, point.density_per_cm3), (temps[i], dens[i]));
        let sum: f64 = point.fractions.iter().sum();
        assert!((sum - 1.0).abs() < 1e-14, "pair {i}: sum {sum}");
    }
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn high_density_populations_approach_the_boltzmann_ratios() {
    let server = TestServer::start().await;
    let described = describe(&server, MK_III).await;
    let t_k = 1.0e4;
    // 1e20 cm^-3 given as 1e26 m^-3 (1 m^-3 = 1e-6 cm^-3), to exercise the density unit too.
    let mut req = solve(MK_III, vec![t_k], vec![1e26], false);
    req.density_unit = pb::DensityUnit::PerCubicMetre as i32;
    let answer = server
        .populations()
        .solve_populations(req)
        .await
        .expect("solve")
        .into_inner();
    let point = &answer.points[0];
    assert_eq!(point.density_per_cm3, 1e20);
    let g1 = described.levels[0].statistical_weight;
    let c2 = kelvin_per_inverse_cm();
    for (j, level) in described.levels.iter().enumerate().skip(1) {
        // When collisions dominate every decay, n_j / n_1 = (g_j / g_1) exp(-E_j / kT)
        // (Osterbrock & Ferland 2006, section 3.5, the high-density limit; section number from memory).
        let boltzmann = level.statistical_weight / g1 * (-level.energy * c2 / t_k).exp();
        let ratio = point.fractions[j] / point.fractions[0];
        // Levels 2-4 decay at <= 1.7 s^-1 against ~1e12 s^-1 of collisions; level 5 decays at
        // 2.4e9 s^-1, so its departure from the limit is ~A / (n_e q) ~ 1e-3.
        let tolerance = if j < 4 { 1e-8 } else { 1e-2 };
        assert_relative_eq!(ratio, boltzmann, max_relative = tolerance);
    }
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn emissivities_and_critical_densities_follow_from_populations_and_rates() {
    let server = TestServer::start().await;
    let described = describe(&server, MK_III).await;
    let t_k = 1.0e4;
    let answer = server
        .populations()
        .solve_populations(solve(MK_III, vec![t_k], vec![1e4], false))
        .await
        .expect("solve")
        .into_inner();
    let point = &answer.points[0];
    let radiative: Vec<&pb::TransitionInfo> =
        described.transitions.iter().filter(|t| t.a_per_s > 0.0).collect();
    assert_eq!(
        point.lines.len(),
        radiative.len(),
        "min_line_fraction 0: every line"
    );
    let mut total_w = 0.0;
    for line in &point.lines {
        let k = line.key.expect("line key");
        let info = radiative
            .iter()
            .find(|t| t.key == Some(k))
            .expect("a catalogued radiative transition");
        // Emissivity per ion of line u -> l: n_u A_ul h nu (Osterbrock & Ferland
        // 2006, chapter 3, from memory), with h nu = h c / lambda (CODATA 2018).
        let expected = point.fractions[k.upper as usize - 1]
            * info.a_per_s
            * photon_energy_j(info.wavelength_vacuum_angstrom);
        assert_relative_eq!(line.emissivity, expected, max_relative = 1e-12);
        assert_eq!(line.wavelength_vacuum_angstrom, info.wavelength_vacuum_angstrom);
        total_w += line.emissivity;
    }
    assert_relative_eq!(point.radiated_power, total_w, max_relative = 1e-12);

    // The same in erg/s: 1 erg = 1e-7 J (CGS definition).
    let mut req = solve(MK_III, vec![t_k], vec![1e4], false);
    req.power_unit = pb::PowerUnit::ErgPerSecond as i32;
    let cgs = server
        .populations()
        .solve_populations(req)
        .await
        .expect("solve in erg/s")
        .into_inner();
    assert_eq!(cgs.power_unit, pb::PowerUnit::ErgPerSecond as i32);
    assert_relative_eq!(
        cgs.points[0].radiated_power,
        point.radiated_power * 1e7,
        max_relative = 1e-14
    );

    // Critical density n_c(j) = sum_(k<j) A_jk / sum_(k<j) q_jk, downward rates only
    // (common practice, no source), from a rate lookup.
    assert!(
        answer
            .critical_density_definition
            .contains("sum_(j<i) A_ij / sum_(j<i) q_ij")
    );
    let rates = server
        .rates()
        .lookup_rates(lookup(MK_III, vec![t_k]))
        .await
        .expect("rates")
        .into_inner();
    let n = answer.level_count as usize;
    for j in 2..=n as u32 {
        let a_out: f64 = radiative
            .iter()
            .filter(|t| t.key.expect("key").upper == j)
            .map(|t| t.a_per_s)
            .sum();
        let q_out: f64 = rates
            .transitions
            .iter()
            .enumerate()
            .filter(|(_, k)| k.upper == j)
            .map(|(i, _)| rates.deexcitation[i])
            .sum();
        assert_relative_eq!(
            answer.critical_densities_per_cm3[j as usize - 1],
            a_out / q_out,
            max_relative = 1e-12
        );
    }
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn temperatures_in_ev_give_the_same_populations() {
    let server = TestServer::start().await;
    let kelvin = server
        .populations()
        .solve_populations(solve(MK_III, log_spaced(5e3, 5e4, 4), vec![1e3; 4], false))
        .await
        .expect("K")
        .into_inner();
    let ev: Vec<f64> = log_spaced(5e3, 5e4, 4)
        .iter()
        .map(|t| t / ratewell_e2e::codata::kelvin_per_ev())
        .collect();
    let mut req = solve(MK_III, ev, vec![1e3; 4], false);
    req.temperature_unit = pb::TemperatureUnit::ElectronVolt as i32;
    let electron_volt = server
        .populations()
        .solve_populations(req)
        .await
        .expect("eV")
        .into_inner();
    for (a, b) in kelvin.points.iter().zip(&electron_volt.points) {
        assert_relative_eq!(a.temperature_k, b.temperature_k, max_relative = 1e-15);
        for (x, y) in a.fractions.iter().zip(&b.fractions) {
            // T moves by an ulp in the eV round trip; exp(-dE/kT) magnifies that by dE/kT.
            assert_relative_eq!(*x, *y, max_relative = 1e-11);
        }
    }
}
